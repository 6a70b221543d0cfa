#pragma once
// HDF5 helpers private to the io library: RAII for identifiers, a guard that
// silences the automatic error printing while we report errors ourselves.
#include <hdf5.h>

#include <string>
#include <vector>

namespace icmscope::io::detail {

// Turns off HDF5's automatic error-stack printing for its lifetime.
class H5Quiet {
 public:
  H5Quiet() {
    H5Eget_auto2(H5E_DEFAULT, &func_, &data_);
    H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  }
  H5Quiet(const H5Quiet&) = delete;
  H5Quiet& operator=(const H5Quiet&) = delete;
  ~H5Quiet() { H5Eset_auto2(H5E_DEFAULT, func_, data_); }

 private:
  H5E_auto2_t func_ = nullptr;
  void* data_ = nullptr;
};

// Owns an HDF5 identifier and closes it with the matching H5*close.
class H5Id {
 public:
  H5Id() = default;
  explicit H5Id(hid_t id) : id_(id) {}
  H5Id(const H5Id&) = delete;
  H5Id& operator=(const H5Id&) = delete;
  H5Id(H5Id&& o) noexcept : id_(o.id_) { o.id_ = -1; }
  H5Id& operator=(H5Id&& o) noexcept {
    if (this != &o) {
      reset();
      id_ = o.id_;
      o.id_ = -1;
    }
    return *this;
  }
  ~H5Id() { reset(); }
  hid_t get() const { return id_; }
  bool ok() const { return id_ >= 0; }
  // Gives up ownership without closing.
  hid_t release() {
    const hid_t id = id_;
    id_ = -1;
    return id;
  }
  void reset() {
    if (id_ >= 0) {
      switch (H5Iget_type(id_)) {
        case H5I_FILE: H5Fclose(id_); break;
        case H5I_GROUP: H5Gclose(id_); break;
        case H5I_DATASET: H5Dclose(id_); break;
        case H5I_DATASPACE: H5Sclose(id_); break;
        case H5I_DATATYPE: H5Tclose(id_); break;
        case H5I_ATTR: H5Aclose(id_); break;
        case H5I_GENPROP_LST: H5Pclose(id_); break;
        default: break;
      }
    }
    id_ = -1;
  }

 private:
  hid_t id_ = -1;
};

// Splits "a/b/c" (leading '/' optional) into its non-empty components.
inline std::vector<std::string> h5_split_path(const std::string& path) {
  std::vector<std::string> parts;
  std::string cur;
  for (char c : path) {
    if (c == '/') {
      if (!cur.empty()) parts.push_back(cur);
      cur.clear();
    } else {
      cur += c;
    }
  }
  if (!cur.empty()) parts.push_back(cur);
  return parts;
}

// First missing component of `path` below `loc` ("" when all exist), checked
// one component at a time since H5Lexists fails on a missing intermediate.
inline std::string h5_first_missing(hid_t loc, const std::string& path) {
  std::string prefix;
  for (const auto& part : h5_split_path(path)) {
    prefix += "/" + part;
    if (H5Lexists(loc, prefix.c_str(), H5P_DEFAULT) <= 0) return prefix.substr(1);
  }
  return "";
}

}  // namespace icmscope::io::detail
