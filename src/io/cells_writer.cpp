#include "icmscope/io/cells_writer.hpp"

#include <algorithm>
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "io/detail/hdf5_util.hpp"
#include "io/detail/temp_output.hpp"

namespace icmscope::io {

namespace {

using core::OutputError;
using detail::H5Id;

constexpr const char* kUnits =
    "position kpc (physical); velocity km/s; mass Msun; density Msun/kpc^3; kT keV; "
    "metallicity solar; support kpc (kernel support radius)";

// Rows written per hyperslab when interleaving (N,3) datasets.
constexpr std::size_t kWriteChunk = std::size_t{1} << 16;

class Writer {
 public:
  explicit Writer(const std::string& final_path, const std::string& temp) : path_(final_path) {
    file_ = H5Id(H5Fcreate(temp.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT));
    if (!file_.ok()) fail("cannot create the file");
  }

  [[noreturn]] void fail(const std::string& what) const { throw OutputError(path_ + ": " + what); }

  hid_t file() const { return file_.get(); }

  void string_attr(hid_t obj, const std::string& name, const std::string& value) {
    H5Id type(H5Tcopy(H5T_C_S1));
    H5Tset_size(type.get(), std::max<std::size_t>(1, value.size()));
    H5Tset_strpad(type.get(), H5T_STR_NULLTERM);
    H5Tset_cset(type.get(), H5T_CSET_UTF8);
    H5Id space(H5Screate(H5S_SCALAR));
    H5Id attr(H5Acreate2(obj, name.c_str(), type.get(), space.get(), H5P_DEFAULT, H5P_DEFAULT));
    if (!attr.ok()) fail("cannot create attribute '" + name + "'");
    std::string buf = value;
    buf.resize(std::max<std::size_t>(1, value.size()), '\0');
    if (H5Awrite(attr.get(), type.get(), buf.data()) < 0) fail("cannot write attribute '" + name + "'");
  }

  template <typename T>
  void scalar_attr(hid_t obj, const std::string& name, hid_t mem_type, hid_t file_type, T value) {
    H5Id space(H5Screate(H5S_SCALAR));
    H5Id attr(H5Acreate2(obj, name.c_str(), file_type, space.get(), H5P_DEFAULT, H5P_DEFAULT));
    if (!attr.ok() || H5Awrite(attr.get(), mem_type, &value) < 0) fail("cannot write attribute '" + name + "'");
  }

  // (N) dataset from one array.
  template <typename T>
  void column(hid_t group, const std::string& name, const std::vector<T>& v, hid_t mem_type, hid_t file_type,
              const std::string& units) {
    hsize_t dims[1] = {v.size()};
    H5Id space(H5Screate_simple(1, dims, nullptr));
    H5Id d(H5Dcreate2(group, name.c_str(), file_type, space.get(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    if (!d.ok()) fail("cannot create dataset 'cells/" + name + "'");
    if (!v.empty() && H5Dwrite(d.get(), mem_type, H5S_ALL, H5S_ALL, H5P_DEFAULT, v.data()) < 0)
      fail("cannot write dataset 'cells/" + name + "'");
    string_attr(d.get(), "units", units);
  }

  // (N,3) dataset interleaved from three arrays, in row chunks.
  void vector3(hid_t group, const std::string& name, const std::vector<float>& a, const std::vector<float>& b,
               const std::vector<float>& c, const std::string& units) {
    const std::size_t n = a.size();
    hsize_t dims[2] = {n, 3};
    H5Id space(H5Screate_simple(2, dims, nullptr));
    H5Id d(H5Dcreate2(group, name.c_str(), H5T_IEEE_F32LE, space.get(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    if (!d.ok()) fail("cannot create dataset 'cells/" + name + "'");
    std::vector<float> buf;
    for (std::size_t r0 = 0; r0 < n; r0 += kWriteChunk) {
      const std::size_t m = std::min(kWriteChunk, n - r0);
      buf.resize(3 * m);
      for (std::size_t i = 0; i < m; ++i) {
        buf[3 * i] = a[r0 + i];
        buf[3 * i + 1] = b[r0 + i];
        buf[3 * i + 2] = c[r0 + i];
      }
      hsize_t start[2] = {r0, 0}, count[2] = {m, 3};
      H5Sselect_hyperslab(space.get(), H5S_SELECT_SET, start, nullptr, count, nullptr);
      H5Id mem(H5Screate_simple(2, count, nullptr));
      if (H5Dwrite(d.get(), H5T_NATIVE_FLOAT, mem.get(), space.get(), H5P_DEFAULT, buf.data()) < 0)
        fail("cannot write dataset 'cells/" + name + "'");
    }
    string_attr(d.get(), "units", units);
  }

  void close() {
    if (H5Fclose(file_.release()) < 0) fail("cannot close the file (disk full?)");
  }

 private:
  std::string path_;
  H5Id file_;
};

void check_sizes(const cells::GasCells& c) {
  const std::size_t n = c.size();
  for (const auto* v : {&c.y, &c.z, &c.mass, &c.density, &c.kT, &c.metallicity, &c.support})
    if (v->size() != n)
      throw core::DomainError("write_cells_hdf5: GasCells arrays have unequal lengths (" + std::to_string(n) +
                              " positions, " + std::to_string(v->size()) + " in another array)");
  if (c.has_velocity() && (c.vx.size() != n || c.vy.size() != n || c.vz.size() != n))
    throw core::DomainError("write_cells_hdf5: velocity arrays do not match the positions");
  if (c.has_flags() && c.flags.size() != n)
    throw core::DomainError("write_cells_hdf5: flags do not match the positions");
}

}  // namespace

void write_cells_hdf5(const std::string& path, const cells::GasCells& c, const Hdf5Attributes& attributes) {
  check_sizes(c);
  detail::TempOutput tmp(path);
  {
    detail::H5Quiet quiet;
    Writer w(path, tmp.temp_path());
    const hid_t root = w.file();
    w.string_attr(root, "units", kUnits);
    w.scalar_attr<std::int32_t>(root, "layout_version", H5T_NATIVE_INT32, H5T_STD_I32LE, 1);
    bool own_program = false, own_version = false;
    for (const auto& [k, v] : attributes) {
      if (k.empty() || k == "units" || k == "layout_version")
        throw core::DomainError("write_cells_hdf5: attribute name '" + k + "' is empty or reserved");
      own_program |= k == "program";
      own_version |= k == "version";
      w.string_attr(root, k, v);
    }
    if (!own_program) w.string_attr(root, "program", core::kProgram);
    if (!own_version) w.string_attr(root, "version", core::kVersion);
    H5Id g(H5Gcreate2(root, "cells", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    if (!g.ok()) w.fail("cannot create group 'cells'");
    w.string_attr(g.get(), "kind", c.kind == cells::CellKind::Mesh ? "mesh" : "particles");
    w.scalar_attr<std::uint64_t>(g.get(), "count", H5T_NATIVE_UINT64, H5T_STD_U64LE, c.size());
    w.vector3(g.get(), "position", c.x, c.y, c.z, "kpc");
    if (c.has_velocity()) w.vector3(g.get(), "velocity", c.vx, c.vy, c.vz, "km/s");
    w.column(g.get(), "mass_msun", c.mass, H5T_NATIVE_FLOAT, H5T_IEEE_F32LE, "Msun");
    w.column(g.get(), "density_msun_kpc3", c.density, H5T_NATIVE_FLOAT, H5T_IEEE_F32LE, "Msun/kpc^3");
    w.column(g.get(), "kT_keV", c.kT, H5T_NATIVE_FLOAT, H5T_IEEE_F32LE, "keV");
    w.column(g.get(), "metallicity_solar", c.metallicity, H5T_NATIVE_FLOAT, H5T_IEEE_F32LE, "solar");
    w.column(g.get(), "support_kpc", c.support, H5T_NATIVE_FLOAT, H5T_IEEE_F32LE, "kpc");
    if (c.has_flags()) w.column(g.get(), "flags", c.flags, H5T_NATIVE_UINT8, H5T_STD_U8LE, "kFlag bits");
    g.reset();
    w.close();
  }
  tmp.commit();
}

}  // namespace icmscope::io
