#pragma once
// Entry functions of the fuzz targets, shared by the libFuzzer drivers
// (fuzz/fuzz_<reader>.cpp) and the regression test that replays every kept
// crash input in the normal suite (tests/io/test_fuzz_regressions.cpp).
//
// Contract: on any input each entry returns normally (the input was read) or
// throws a core::Error subclass (a typed, one-line error). Anything else --
// another exception, a crash, a sanitizer report, a hang, a huge allocation --
// is a bug in the reader.
//
// The readers take file paths, so the bytes go to a file in a private scratch
// folder (/dev/shm when present) whose name carries the format's extension.
#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <vector>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <string>
#include <unistd.h>

#include <hdf5.h>

#include "icmscope/cells/field_map.hpp"
#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/map_settings.hpp"
#include "icmscope/config/measure_settings.hpp"
#include "icmscope/config/observe_settings.hpp"
#include "icmscope/config/survey_settings.hpp"
#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/io/ogip.hpp"

namespace icmscope::fuzz {

// A scratch folder private to this process, removed at exit.
inline const std::filesystem::path& scratch() {
  struct Dir {
    std::filesystem::path p;
    Dir() {
      std::error_code ec;
      std::filesystem::path base = std::filesystem::exists("/dev/shm", ec) ? std::filesystem::path("/dev/shm")
                                                                          : std::filesystem::temp_directory_path();
      p = base / ("icmscope_fuzz_" + std::to_string(::getpid()));
      std::filesystem::create_directories(p);
    }
    ~Dir() {
      std::error_code ec;
      std::filesystem::remove_all(p, ec);
    }
  };
  static Dir d;
  return d.p;
}

inline std::string put(const std::string& name, const std::uint8_t* data, std::size_t size) {
  const auto path = scratch() / name;
  std::ofstream f(path, std::ios::binary | std::ios::trunc);
  f.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  return path.string();
}

// Runs fn(); a core::Error is an accepted outcome (the input was rejected).
template <typename F>
void typed(F&& fn) {
  try {
    fn();
  } catch (const core::Error&) {
  }
}

// ---- YAML settings loaders --------------------------------------------------
// Byte 0 picks the loader (mod 6): project RUN, observe RUN, measure RUN,
// synth model, survey SAMPLE, instrument. The rest is the YAML text, written
// to run.yaml; if it holds a line "#%%", the text after that line goes to
// instrument.yaml in the same folder (so an observe or survey RUN can name
// "instrument.yaml" and the instrument loader runs behind it).
inline void yaml_config(const std::uint8_t* data, std::size_t size) {
  if (size < 1) return;
  const int which = data[0] % 6;
  std::string text(reinterpret_cast<const char*>(data + 1), size - 1);
  std::string inst;
  const auto sep = text.find("\n#%%\n");
  if (sep != std::string::npos) {
    inst = text.substr(sep + 5);
    text.resize(sep + 1);
  }
  put("instrument.yaml", reinterpret_cast<const std::uint8_t*>(inst.data()), inst.size());
  const std::string path = put("run.yaml", reinterpret_cast<const std::uint8_t*>(text.data()), text.size());
  typed([&] {
    switch (which) {
      case 0: (void)config::load_map_run(path); break;
      case 1: (void)config::load_observe_run(path); break;
      case 2: (void)config::load_measure_run(path); break;
      case 3: (void)config::load_cluster_model(path); break;
      case 4: (void)config::load_survey(path); break;
      default: (void)config::load_instrument(path); break;
    }
  });
}

// ---- FITS image + header + WCS ----------------------------------------------
// The first 2-D image HDU, and HDU 1 by index; when the header has a WCS,
// pixel <-> sky round trips at the corners and the centre, the linear part and
// the anchor.
inline void fits_image(const std::uint8_t* data, std::size_t size) {
  const std::string path = put("image.fits", data, size);
  for (int hdu : {-1, 1}) {
    typed([&] {
      const io::FitsImage im = io::read_fits_image(path, hdu);
      volatile double sink = 0.0;
      for (std::size_t i = 0; i < im.image.size(); i += 97) sink = sink + im.image.data()[i];
      (void)im.keyword("EXPOSURE");
      (void)im.has_keyword("BUNIT");
      if (!im.wcs.valid()) return;
      const double nx = im.image.nx(), ny = im.image.ny();
      const double xs[5] = {1.0, nx, 1.0, nx, 0.5 * (nx + 1.0)};
      const double ys[5] = {1.0, 1.0, ny, ny, 0.5 * (ny + 1.0)};
      for (int k = 0; k < 5; ++k) {
        const io::SkyPosition s = im.wcs.pixel_to_sky(xs[k], ys[k]);
        if (std::isfinite(s.ra_deg) && std::isfinite(s.dec_deg)) (void)im.wcs.sky_to_pixel(s.ra_deg, s.dec_deg);
      }
      (void)im.wcs.cd_matrix();
      (void)im.wcs.pixel_scale_arcsec();
      (void)im.wcs.pixel_scale_x_arcsec();
      (void)im.wcs.pixel_scale_y_arcsec();
      (void)im.wcs.rotation_deg();
      (void)im.wcs.east_left();
      (void)im.wcs.ctype(0);
      (void)im.wcs.radesys();
      (void)im.wcs.anchor();
      io::Wcs copy = im.wcs;  // deep copy
      (void)copy.crval();
    });
  }
}

// ---- OGIP ARF / RMF -----------------------------------------------------------
// The same bytes through both readers (a file holds either or both).
inline void ogip_response(const std::uint8_t* data, std::size_t size) {
  const std::string path = put("response.fits", data, size);
  typed([&] { (void)io::read_arf(path); });
  typed([&] { (void)io::read_rmf(path); });
  typed([&] { (void)io::read_rmf(path, 2); });
}

// ---- gas cells: CSV ------------------------------------------------------------
// Two field maps over the same file: internal units with optional velocity /
// flags and BadCellPolicy::Error; foreign units (split positions, internal
// energy with electron abundance, comoving a/h scaling, cubic-spline h,
// mass fraction metallicity) with BadCellPolicy::Drop and small chunks.
inline cells::FieldMap csv_internal_map() {
  cells::FieldMap m;
  m.position.components = {"x", "y", "z"};
  m.velocity.components = {"vx", "vy", "vz"};
  m.velocity.optional = true;
  m.mass.source = "mass";
  m.density.source = "density";
  m.temperature.source = "kT";
  m.metallicity.source = "Z";
  m.metallicity_convention = cells::MetallicityConvention::Solar;
  m.smoothing_length.source = "h";
  m.flags.source = "flags";
  m.flags.optional = true;
  return m;
}

inline cells::FieldMap csv_foreign_map() {
  cells::FieldMap m;
  m.kind = cells::CellKind::Mesh;
  m.position.components = {"x", "y", "z"};
  m.position.factor = 1000.0;
  m.position.a_exp = 1.0;
  m.position.h_exp = -1.0;
  m.mass.source = "mass";
  m.mass.factor = 1e10;
  m.mass.h_exp = -1.0;
  m.volume.source = "volume";
  m.volume.optional = false;
  m.internal_energy.source = "u";
  m.electron_abundance.source = "ne";
  m.electron_abundance.optional = true;
  m.metallicity.source = "Z";
  m.solar_metal_mass_fraction = cells::kSolarZAndersGrevesse1989;
  m.star_formation_rate.source = "sfr";
  m.star_formation_rate.optional = true;
  m.cold.source = "cold";
  m.cold.optional = true;
  m.scale_factor = 0.5;
  m.hubble_h = 0.7;
  m.chunk_rows = 3;
  return m;
}

inline void cells_csv(const std::uint8_t* data, std::size_t size) {
  const std::string path = put("cells.csv", data, size);
  typed([&] { (void)io::read_cells(path, csv_internal_map(), cells::BadCellPolicy::Error); });
  typed([&] { (void)io::read_cells(path, csv_foreign_map(), cells::BadCellPolicy::Drop); });
}

// ---- gas cells: HDF5 + field map ----------------------------------------------
// Raw bytes of a corrupted HDF5 file mostly exercise the HDF5 library's own
// metadata parsing, not ours; so this target is structured: the bytes describe
// a file (layout, row count, per dataset its presence, type, shape and values,
// the kind / a / h attributes) that the HDF5 library writes (always a valid
// container), and the reader maps it through the matching field map. See
// hdf5_describe_* below for the byte format.
//
// Field maps: the project's own layout (kind attribute, (N,3) positions), and
// a snapshot-style map (attributes for a and h, cubic-spline h, internal
// energy) with BadCellPolicy::Drop and small chunks.
inline cells::FieldMap hdf5_snapshot_map() {
  cells::FieldMap m;
  m.position.source = "PartType0/Coordinates";
  m.position.a_exp = 1.0;
  m.position.h_exp = -1.0;
  m.velocity.source = "PartType0/Velocities";
  m.velocity.a_exp = 0.5;
  m.velocity.optional = true;
  m.mass.source = "PartType0/Masses";
  m.mass.factor = 1e10;
  m.mass.h_exp = -1.0;
  m.density.source = "PartType0/Density";
  m.density.factor = 1e10;
  m.density.a_exp = -3.0;
  m.density.h_exp = 2.0;
  m.internal_energy.source = "PartType0/InternalEnergy";
  m.electron_abundance.source = "PartType0/ElectronAbundance";
  m.electron_abundance.optional = true;
  m.metallicity_fallback_solar = 0.3;
  m.smoothing_length.source = "PartType0/SmoothingLength";
  m.smoothing_convention = cells::SmoothingConvention::CubicSplineH;
  m.star_formation_rate.source = "PartType0/StarFormationRate";
  m.star_formation_rate.optional = true;
  m.scale_factor_attribute = "Header/Time";
  m.hubble_h_attribute = "Header/HubbleParam";
  m.chunk_rows = 5;
  return m;
}

// Consumes the fuzz bytes; zeros once they run out.
class ByteStream {
 public:
  ByteStream(const std::uint8_t* d, std::size_t n) : d_(d), n_(n) {}
  std::uint8_t u8() { return i_ < n_ ? d_[i_++] : 0; }
  double f64() {
    std::uint64_t b = 0;
    for (int k = 0; k < 8; ++k) b = (b << 8) | u8();
    double v;
    std::memcpy(&v, &b, sizeof v);
    return v;
  }
  // A value: mostly from a table of interesting numbers, or 8 raw bytes.
  double value() {
    static const double table[] = {0.0, 1.0, -1.0, 0.3, 3.0, 20.0, 1e5, 1e8, 1e-30, 1e30, 1e300, -1e300,
                                   std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::infinity(),
                                   -std::numeric_limits<double>::infinity(), 255.0, 256.0, 4e9, 0.5, 1e-3};
    const std::uint8_t c = u8();
    if (c < 200) return table[c % (sizeof table / sizeof table[0])];
    return f64();
  }
  std::string text(std::size_t max) {
    const std::size_t n = u8() % (max + 1);
    std::string s;
    for (std::size_t k = 0; k < n; ++k) s.push_back(static_cast<char>(u8()));
    return s;
  }

 private:
  const std::uint8_t* d_;
  std::size_t n_, i_ = 0;
};

// Writes the HDF5 file described by the bytes; returns the field map to read it with.
//   byte 0: bit 0 = layout (0 own, 1 snapshot); bits 1-4 = rows (0..15)
//   per dataset of the layout: a control byte c
//     c % 8 == 0: absent; == 7: a group of that name instead of a dataset
//     (c >> 3) % 4: type float32 | float64 | int32 | uint8
//     (c >> 5) % 4: shape as expected | one row more | (rows, 2) | rank 3 (rows, 3, 1)
//     then one value() per element
//   attributes: a control byte (0 absent, 1 number, 2 string, 3 array of 2, 4 on a dataset
//   named like the group) then the value(s) / text.
inline cells::FieldMap hdf5_build(ByteStream& in, const std::string& path) {
  H5Eset_auto2(H5E_DEFAULT, nullptr, nullptr);
  const std::uint8_t head = in.u8();
  const bool snapshot = head & 1;
  const hsize_t rows = (head >> 1) % 16;
  const hid_t f = H5Fcreate(path.c_str(), H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
  if (f < 0) return io::own_layout_field_map();
  const char* group = snapshot ? "PartType0" : "cells";
  H5Gclose(H5Gcreate2(f, group, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
  struct Ds {
    const char* name;
    int width;
  };
  static const Ds own[] = {{"position", 3}, {"velocity", 3}, {"mass_msun", 1}, {"density_msun_kpc3", 1},
                           {"kT_keV", 1}, {"metallicity_solar", 1}, {"support_kpc", 1}, {"flags", 1}};
  static const Ds snap[] = {{"Coordinates", 3}, {"Velocities", 3}, {"Masses", 1}, {"Density", 1},
                            {"InternalEnergy", 1}, {"ElectronAbundance", 1}, {"SmoothingLength", 1},
                            {"StarFormationRate", 1}};
  const hid_t types[4] = {H5T_IEEE_F32LE, H5T_IEEE_F64LE, H5T_STD_I32LE, H5T_STD_U8LE};
  for (const Ds& ds : snapshot ? snap : own) {
    const std::uint8_t c = in.u8();
    const std::string name = std::string(group) + "/" + ds.name;
    if (c % 8 == 0) continue;
    if (c % 8 == 7) {
      H5Gclose(H5Gcreate2(f, name.c_str(), H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
      continue;
    }
    hsize_t dims[3] = {rows, static_cast<hsize_t>(ds.width), 1};
    int rank = ds.width == 3 ? 2 : 1;
    switch ((c >> 5) % 4) {
      case 1: dims[0] = rows + 1; break;
      case 2: rank = 2; dims[1] = 2; break;
      case 3: rank = 3; dims[1] = 3; break;
      default: break;
    }
    const hid_t sp = H5Screate_simple(rank, dims, nullptr);
    const hid_t d = H5Dcreate2(f, name.c_str(), types[(c >> 3) % 4], sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    const hssize_t npts = H5Sget_simple_extent_npoints(sp);
    std::vector<double> v(static_cast<std::size_t>(npts > 0 ? npts : 0));
    for (double& x : v) x = in.value();
    if (d >= 0 && !v.empty()) H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v.data());
    if (d >= 0) H5Dclose(d);
    H5Sclose(sp);
  }
  // Attributes: own layout "cells/kind"; snapshot "Header/Time", "Header/HubbleParam".
  auto attribute = [&](const char* obj, const char* name) {
    const std::uint8_t c = in.u8() % 5;
    if (c == 0) return;
    hid_t o;
    if (c == 4) {  // the object is a dataset, not a group
      const hsize_t one = 1;
      const hid_t sp = H5Screate_simple(1, &one, nullptr);
      o = H5Dcreate2(f, obj, H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
      H5Sclose(sp);
    } else {
      o = H5Oopen(f, obj, H5P_DEFAULT);
      if (o < 0) o = H5Gcreate2(f, obj, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    }
    if (o < 0) return;
    if (c == 2) {
      const std::string s = in.text(12);
      const hid_t t = H5Tcopy(H5T_C_S1);
      H5Tset_size(t, std::max<std::size_t>(1, s.size()));
      const hid_t sp = H5Screate(H5S_SCALAR);
      const hid_t a = H5Acreate2(o, name, t, sp, H5P_DEFAULT, H5P_DEFAULT);
      std::string buf = s;
      buf.resize(std::max<std::size_t>(1, s.size()), '\0');
      if (a >= 0) H5Awrite(a, t, buf.data()), H5Aclose(a);
      H5Sclose(sp);
      H5Tclose(t);
    } else {
      const hsize_t n = c == 3 ? 2 : 1;
      const hid_t sp = c == 3 ? H5Screate_simple(1, &n, nullptr) : H5Screate(H5S_SCALAR);
      const double v[2] = {in.value(), in.value()};
      const hid_t a = H5Acreate2(o, name, H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT);
      if (a >= 0) H5Awrite(a, H5T_NATIVE_DOUBLE, v), H5Aclose(a);
      H5Sclose(sp);
    }
    H5Oclose(o);
  };
  if (snapshot) {
    attribute("Header", "Time");
    attribute("Header", "HubbleParam");
  } else {
    attribute("cells", "kind");
  }
  H5Fclose(f);
  return snapshot ? hdf5_snapshot_map() : io::own_layout_field_map();
}

inline void cells_hdf5(const std::uint8_t* data, std::size_t size) {
  const std::string path = (scratch() / "cells.h5").string();
  ByteStream in(data, size);
  const cells::FieldMap map = hdf5_build(in, path);
  const auto policy = size > 0 && (data[0] & 0x80) ? cells::BadCellPolicy::Drop : cells::BadCellPolicy::Error;
  typed([&] { (void)io::read_cells(path, map, policy); });
}

}  // namespace icmscope::fuzz
