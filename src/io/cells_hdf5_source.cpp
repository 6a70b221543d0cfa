// HDF5 column source for read_cells: datasets by path, read in hyperslab
// chunks with conversion to double by H5Dread.
#include <algorithm>
#include <filesystem>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/cells_source.hpp"
#include "io/detail/hdf5_util.hpp"

namespace icmscope::io::detail {

namespace {

using core::InputError;

class Hdf5Source final : public ColumnSource {
 public:
  explicit Hdf5Source(const std::string& path) : path_(path) {
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) throw InputError(path + ": no such file");
    H5Quiet quiet;
    if (H5Fis_hdf5(path.c_str()) <= 0) throw InputError(path + ": not an HDF5 file");
    file_ = H5Id(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT));
    if (!file_.ok()) throw InputError(path + ": cannot open the HDF5 file");
  }

  std::vector<bool> open(const std::vector<ColumnRequest>& req) override {
    H5Quiet quiet;
    std::vector<bool> present(req.size(), false);
    cols_.clear();
    cols_.resize(req.size());
    std::string first_name;
    for (std::size_t k = 0; k < req.size(); ++k) {
      const ColumnRequest& r = req[k];
      const std::string where = path_ + ": dataset '" + r.name + "' (" + r.field + ")";
      const std::string missing = h5_first_missing(file_.get(), r.name);
      if (!missing.empty()) {
        if (r.optional) continue;
        if (h5_split_path(missing) == h5_split_path(r.name)) throw InputError(where + " not found");
        throw InputError(where + " not found: no '" + missing + "' in the file");
      }
      Col& c = cols_[k];
      c.width = r.width;
      c.name = r.name;
      c.dset = H5Id(H5Dopen2(file_.get(), r.name.c_str(), H5P_DEFAULT));
      if (!c.dset.ok()) throw InputError(where + " is not a dataset");
      H5Id type(H5Dget_type(c.dset.get()));
      const H5T_class_t cls = H5Tget_class(type.get());
      if (cls != H5T_INTEGER && cls != H5T_FLOAT)
        throw InputError(where + " is not numeric (expected an integer or floating-point dataset)");
      c.space = H5Id(H5Dget_space(c.dset.get()));
      const int rank = H5Sget_simple_extent_ndims(c.space.get());
      hsize_t dims[H5S_MAX_RANK] = {0};
      if (rank < 1 || rank > 2) {
        throw InputError(where + " has rank " + std::to_string(rank) + ", expected " +
                         (r.width == 1 ? "(N) or (N,1)" : "(N,3)"));
      }
      H5Sget_simple_extent_dims(c.space.get(), dims, nullptr);
      const hsize_t ncomp = rank == 2 ? dims[1] : 1;
      if (ncomp != static_cast<hsize_t>(r.width)) {
        const std::string shape = rank == 2 ? "(" + std::to_string(dims[0]) + "," + std::to_string(dims[1]) + ")"
                                            : "(" + std::to_string(dims[0]) + ")";
        throw InputError(where + " has shape " + shape + ", expected " +
                         (r.width == 1 ? "(N) or (N,1)" : "(N,3)"));
      }
      c.rank = rank;
      c.rows = dims[0];
      if (first_name.empty()) {
        first_name = r.name;
        rows_ = dims[0];
      } else if (dims[0] != rows_) {
        throw InputError(path_ + ": datasets have different lengths: '" + first_name + "' has " +
                         std::to_string(rows_) + " rows, '" + r.name + "' has " + std::to_string(dims[0]));
      }
      present[k] = true;
    }
    next_row_ = 0;
    return present;
  }

  std::size_t rows_hint() const override { return static_cast<std::size_t>(rows_); }

  std::size_t next(std::size_t max_rows, std::vector<std::vector<double>>& out) override {
    if (next_row_ >= rows_) return 0;
    const hsize_t n = std::min<hsize_t>(max_rows, rows_ - next_row_);
    H5Quiet quiet;
    out.resize(cols_.size());
    for (std::size_t k = 0; k < cols_.size(); ++k) {
      Col& c = cols_[k];
      if (!c.dset.ok()) {
        out[k].clear();
        continue;
      }
      out[k].resize(static_cast<std::size_t>(n) * static_cast<std::size_t>(c.width));
      hsize_t start[2] = {next_row_, 0};
      hsize_t count[2] = {n, static_cast<hsize_t>(c.width)};
      if (H5Sselect_hyperslab(c.space.get(), H5S_SELECT_SET, start, nullptr, count, nullptr) < 0)
        throw InputError(path_ + ": dataset '" + c.name + "': cannot select rows");
      hsize_t mdims[1] = {n * static_cast<hsize_t>(c.width)};
      H5Id mem(H5Screate_simple(1, mdims, nullptr));
      if (H5Dread(c.dset.get(), H5T_NATIVE_DOUBLE, mem.get(), c.space.get(), H5P_DEFAULT, out[k].data()) < 0)
        throw InputError(path_ + ": dataset '" + c.name + "': read failed at rows " +
                         std::to_string(next_row_) + "-" + std::to_string(next_row_ + n - 1));
    }
    next_row_ += n;
    return static_cast<std::size_t>(n);
  }

  bool read_number(const std::string& spec, double* value) override {
    H5Quiet quiet;
    H5Id attr = open_attribute(spec);
    if (!attr.ok()) return false;
    H5Id type(H5Aget_type(attr.get()));
    const H5T_class_t cls = H5Tget_class(type.get());
    H5Id space(H5Aget_space(attr.get()));
    const hssize_t npts = H5Sget_simple_extent_npoints(space.get());
    if ((cls != H5T_INTEGER && cls != H5T_FLOAT) || npts < 1)
      throw InputError(path_ + ": attribute '" + spec + "' is not a number");
    std::vector<double> buf(static_cast<std::size_t>(npts));
    if (H5Aread(attr.get(), H5T_NATIVE_DOUBLE, buf.data()) < 0)
      throw InputError(path_ + ": attribute '" + spec + "': read failed");
    *value = buf[0];
    return true;
  }

  bool read_text(const std::string& spec, std::string* value) override {
    H5Quiet quiet;
    H5Id attr = open_attribute(spec);
    if (!attr.ok()) return false;
    H5Id type(H5Aget_type(attr.get()));
    if (H5Tget_class(type.get()) != H5T_STRING)
      throw InputError(path_ + ": attribute '" + spec + "' is not a string");
    if (H5Tis_variable_str(type.get()) > 0) {
      H5Id mt(H5Tcopy(H5T_C_S1));
      H5Tset_size(mt.get(), H5T_VARIABLE);
      H5Tset_cset(mt.get(), H5Tget_cset(type.get()));
      char* s = nullptr;
      if (H5Aread(attr.get(), mt.get(), &s) < 0)
        throw InputError(path_ + ": attribute '" + spec + "': read failed");
      *value = s ? s : "";
      H5free_memory(s);
    } else {
      const std::size_t sz = H5Tget_size(type.get());
      std::string buf(sz, '\0');
      if (H5Aread(attr.get(), type.get(), buf.data()) < 0)
        throw InputError(path_ + ": attribute '" + spec + "': read failed");
      const auto end = buf.find('\0');
      if (end != std::string::npos) buf.resize(end);
      *value = buf;
    }
    return true;
  }

 private:
  struct Col {
    std::string name;
    H5Id dset, space;
    int width = 1;
    int rank = 1;
    hsize_t rows = 0;
  };

  // "Header/Time": attribute "Time" of object "Header"; "Time": of the root.
  H5Id open_attribute(const std::string& spec) {
    const auto slash = spec.find_last_of('/');
    std::string obj = slash == std::string::npos ? "/" : spec.substr(0, slash);
    const std::string name = slash == std::string::npos ? spec : spec.substr(slash + 1);
    if (obj.empty()) obj = "/";
    if (obj != "/" && !h5_first_missing(file_.get(), obj).empty()) return H5Id();
    if (H5Aexists_by_name(file_.get(), obj.c_str(), name.c_str(), H5P_DEFAULT) <= 0) return H5Id();
    return H5Id(H5Aopen_by_name(file_.get(), obj.c_str(), name.c_str(), H5P_DEFAULT, H5P_DEFAULT));
  }

  std::string path_;
  H5Id file_;
  std::vector<Col> cols_;
  hsize_t rows_ = 0;
  hsize_t next_row_ = 0;
};

}  // namespace

std::unique_ptr<ColumnSource> open_hdf5_cells(const std::string& path) {
  return std::make_unique<Hdf5Source>(path);
}

}  // namespace icmscope::io::detail
