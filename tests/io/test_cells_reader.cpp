// read_cells against files written independently (h5py, astropy, plain
// text), the unit conversions checked against astropy.units/constants, and
// every bad-input path.
#include <catch2/catch.hpp>

#include <cmath>
#include <map>
#include <fstream>
#include <limits>
#include <sstream>
#include <vector>

#include "icmscope/cells/validate.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/cells_writer.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;
using Catch::Matchers::Contains;
namespace fs = std::filesystem;

namespace {

// Parses "name v0 v1 ..." lines into columns.
std::map<std::string, std::vector<double>> parse_columns(const std::string& text) {
  std::map<std::string, std::vector<double>> cols;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string key;
    if (!(ls >> key)) continue;
    std::vector<double> v;
    std::string tok;
    while (ls >> tok) v.push_back(std::strtod(tok.c_str(), nullptr));
    cols[key] = v;
  }
  return cols;
}

void check_rel(const std::vector<float>& got, const std::vector<double>& want, double rel, const char* what) {
  INFO(what);
  REQUIRE(got.size() == want.size());
  double worst = 0.0;
  for (std::size_t i = 0; i < got.size(); ++i)
    worst = std::max(worst, std::fabs(static_cast<double>(got[i]) - want[i]) / std::fabs(want[i]));
  INFO("worst relative difference " << worst);
  CHECK(worst < rel);
}

// A Gadget-style snapshot in comoving, h-scaled units written with h5py.
const char* kGadgetScript = R"PY(
import sys, h5py, numpy as np
from astropy import units as u, constants as const
path, out, variant = sys.argv[1], sys.argv[2], sys.argv[3]
rng = np.random.default_rng(2024)
n = 1000
a, h = 0.5, 0.7
pos = rng.uniform(0, 5000, (n, 3))            # ckpc/h
vel = rng.normal(0, 300, (n, 3))              # km/s sqrt(a)
mass = rng.uniform(0.5, 2.0, n) * 1e-3        # 1e10 Msun/h
rho = 10 ** rng.uniform(-8, -3, n)            # 1e10 (Msun/h) / (ckpc/h)^3
uen = 10 ** rng.uniform(3, 6.5, n)            # (km/s)^2
xe = rng.uniform(1.0, 1.2, n)                 # n_e / n_H
zmet = rng.uniform(0.0, 0.03, n)              # metal mass fraction
hsml = rng.uniform(5, 80, n)                  # ckpc/h, support radius
sfr = np.where(rng.uniform(size=n) < 0.1, 0.5, 0.0)
with h5py.File(path, 'w') as f:
    hd = f.create_group('Header')
    hd.attrs['Time'] = a
    hd.attrs['HubbleParam'] = h
    g = f.create_group('PartType0')
    if variant == 'badshape':
        g['Coordinates'] = np.zeros((n, 4))
    else:
        g['Coordinates'] = pos.astype(np.float32) if variant != 'f64' else pos
    g['Velocities'] = vel.astype(np.float32)
    g['Masses'] = (mass if variant != 'short' else mass[:-1]).astype(np.float32)
    g['Density'] = rho.astype(np.float32)
    g['InternalEnergy'] = uen.astype(np.float32)
    g['ElectronAbundance'] = xe.astype(np.float32)
    g['GFM_Metallicity'] = zmet.astype(np.float32)
    g['SmoothingLength'] = hsml.astype(np.float32)
    g['StarFormationRate'] = sfr.astype(np.float32)
# expected values in internal units, from the float32 values actually stored
f32 = lambda v: v.astype(np.float32).astype(np.float64)
X = 0.76
mu = 4.0 / (1 + 3 * X + 4 * X * f32(xe))
kT = ((5/3 - 1) * mu * const.m_p * f32(uen) * (u.km / u.s) ** 2).to(u.keV).value  # physics.md sec. 10
pos_kpc = (f32(pos) * u.kpc * a / h).to(u.kpc).value
rho_int = (f32(rho) * 1e10 * u.Msun / h / (u.kpc * a / h) ** 3).to(u.Msun / u.kpc ** 3).value
with open(out, 'w') as o:
    def row(name, v): o.write(name + ' ' + ' '.join(repr(float(x)) for x in v) + '\n')
    row('x', pos_kpc[:, 0]); row('y', pos_kpc[:, 1]); row('z', pos_kpc[:, 2])
    row('vx', f32(vel[:, 0]) * np.sqrt(a))
    row('mass', f32(mass) * 1e10 / h)
    row('density', rho_int)
    row('kT', kT)
    row('kT_ion', ((5/3 - 1) * 4 / (3 + 5 * X) * const.m_p * f32(uen) * (u.km / u.s) ** 2).to(u.keV).value)
    row('Z', f32(zmet) / 0.0134)
    row('support', f32(hsml) * a / h)
    row('sf', (sfr > 0).astype(float))
)PY";

cells::FieldMap gadget_map() {
  cells::FieldMap m;
  m.kind = cells::CellKind::Particles;
  m.position = {"PartType0/Coordinates", {}, 1.0, 1.0, -1.0, false};
  m.velocity = {"PartType0/Velocities", {}, 1.0, 0.5, 0.0, false};
  m.mass = {"PartType0/Masses", 1e10, 0.0, -1.0, false};
  m.density = {"PartType0/Density", 1e10, -3.0, 2.0, false};
  m.internal_energy = {"PartType0/InternalEnergy", 1.0, 0.0, 0.0, false};
  m.electron_abundance = {"PartType0/ElectronAbundance", 1.0, 0.0, 0.0, false};
  m.metallicity = {"PartType0/GFM_Metallicity", 1.0, 0.0, 0.0, false};
  m.metallicity_convention = cells::MetallicityConvention::MassFraction;
  m.solar_metal_mass_fraction = cells::kSolarZAsplund2009;
  m.smoothing_length = {"PartType0/SmoothingLength", 1.0, 1.0, -1.0, false};
  m.smoothing_convention = cells::SmoothingConvention::Support;
  m.star_formation_rate = {"PartType0/StarFormationRate", 1.0, 0.0, 0.0, false};
  m.scale_factor_attribute = "Header/Time";
  m.hubble_h_attribute = "Header/HubbleParam";
  m.chunk_rows = 97;  // many chunks, last one partial
  return m;
}

std::string make_gadget(const fs::path& dir, const std::string& variant, std::string* expected = nullptr) {
  const auto path = (dir / ("snap_" + variant + ".hdf5")).string();
  const auto exp = (dir / ("expected_" + variant + ".txt")).string();
  const auto r = testing::run_python(dir, "make_" + variant, kGadgetScript, path + " " + exp + " " + variant);
  INFO(r.out);
  REQUIRE(r.status == 0);
  if (expected) {
    std::ifstream f(exp);
    std::stringstream ss;
    ss << f.rdbuf();
    *expected = ss.str();
  }
  return path;
}

}  // namespace

TEST_CASE("mean molecular weight and T(u), physics.md section 10", "[io][cells_reader]") {
  // physics.md sec. 10 [C]: T = 47.6 K (mu/0.59) u[(km/s)^2] for gamma = 5/3.
  const double kT = io::kT_keV_from_internal_energy(1.0, 0.59);
  CHECK(kT * core::constants::keV_K == Approx(47.6).epsilon(2e-3));
  // physics.md sec. 3 table [C]: X = 0.76 fully ionised H + He: mu = 4/(3+5X) = 0.588, n_e/n_H = 1.159.
  CHECK(io::mean_molecular_weight_ionised(0.76) == Approx(0.588).epsilon(1e-3));
  const double xe_full = 1.0 + (1.0 - 0.76) / (2.0 * 0.76);  // H + He fully ionised
  CHECK(xe_full == Approx(1.159).epsilon(1e-3));
  CHECK(io::mean_molecular_weight(0.76, xe_full) == Approx(io::mean_molecular_weight_ionised(0.76)).epsilon(1e-12));
}

TEST_CASE("h5py-written comoving h-scaled snapshot with internal energy", "[io][cells_reader][python]") {
  const auto dir = testing::scratch_dir("cells_reader_gadget");
  std::string expected;
  const auto path = make_gadget(dir, "ok", &expected);
  const auto want = parse_columns(expected);
  io::CellsReadInfo info;
  const auto c = io::read_cells(path, gadget_map(), cells::BadCellPolicy::Error, &info);
  CHECK(info.rows_read == 1000);
  CHECK(info.scale_factor == 0.5);
  CHECK(info.hubble_h == Approx(0.7).epsilon(1e-15));
  // Expected values from astropy.units / astropy.constants (CODATA 2018) on the stored float32 inputs.
  check_rel(c.x, want.at("x"), 2e-7, "x [kpc] = x_raw a / h");
  check_rel(c.y, want.at("y"), 2e-7, "y");
  check_rel(c.z, want.at("z"), 2e-7, "z");
  check_rel(c.vx, want.at("vx"), 2e-7, "vx = v_raw sqrt(a)");
  check_rel(c.mass, want.at("mass"), 2e-7, "mass = 1e10 m_raw / h");
  check_rel(c.density, want.at("density"), 2e-7, "density = 1e10 rho_raw h^2 / a^3");
  check_rel(c.kT, want.at("kT"), 2e-7, "kT = (gamma-1) mu m_p u, mu = 4/(1+3X+4X x_e)");
  check_rel(c.metallicity, want.at("Z"), 2e-7, "Z / Zsun (Asplund 2009)");
  check_rel(c.support, want.at("support"), 2e-7, "support = H a / h");
  const auto& sf = want.at("sf");
  REQUIRE(c.flags.size() == sf.size());
  std::size_t n_sf = 0;
  for (std::size_t i = 0; i < sf.size(); ++i) {
    CHECK(((c.flags[i] & cells::kFlagStarForming) != 0) == (sf[i] > 0.5));
    n_sf += sf[i] > 0.5;
  }
  CHECK(n_sf > 50);  // the flag is exercised

  SECTION("chunk size does not change the result") {
    auto m = gadget_map();
    m.chunk_rows = 1 << 20;
    const auto c2 = io::read_cells(path, m);
    CHECK(c2.x == c.x);
    CHECK(c2.kT == c.kT);
    CHECK(c2.density == c.density);
  }
  SECTION("explicit a and h equal the attributes") {
    auto m = gadget_map();
    m.scale_factor = 0.5;
    m.hubble_h = 0.7;
    m.scale_factor_attribute.clear();
    m.hubble_h_attribute.clear();
    const auto c2 = io::read_cells(path, m);
    CHECK(c2.support == c.support);
  }
  SECTION("without an electron abundance the gas is fully ionised") {
    auto m = gadget_map();
    m.electron_abundance = {};
    const auto c2 = io::read_cells(path, m);
    // mu = 4/(3+5X) (physics.md sec. 3 table), T computed by astropy.
    check_rel(c2.kT, want.at("kT_ion"), 2e-7, "kT with fully ionised mu");
  }
}

TEST_CASE("astropy-written FITS binary table of cells", "[io][cells_reader][python]") {
  const auto dir = testing::scratch_dir("cells_reader_fits");
  const auto path = (dir / "cells.fits").string();
  const auto exp = (dir / "expected.txt").string();
  const std::string code = R"PY(
import sys, numpy as np
from astropy.io import fits
from astropy import units as u
path, out = sys.argv[1], sys.argv[2]
rng = np.random.default_rng(7)
n = 777
pos = rng.uniform(-500, 500, (n, 3))
mass = rng.uniform(1e7, 1e8, n)
rho = 10 ** rng.uniform(3, 7, n)
TK = 10 ** rng.uniform(6, 8, n)
Z = rng.uniform(0, 1, n)
h = rng.uniform(1, 30, n)
cols = [fits.Column(name='pos', format='3D', array=pos, unit='kpc'),
        fits.Column(name='Mass', format='D', array=mass, unit='solMass'),
        fits.Column(name='rho', format='E', array=rho.astype(np.float32)),
        fits.Column(name='temp_k', format='D', array=TK, unit='K'),
        fits.Column(name='Z_SOLAR', format='D', array=Z),
        fits.Column(name='hsml', format='D', array=h, unit='kpc'),
        fits.Column(name='cold', format='J', array=(TK < 3e6).astype(np.int32))]
hdu = fits.BinTableHDU.from_columns(cols, name='GAS')
fits.HDUList([fits.PrimaryHDU(), fits.ImageHDU(np.zeros((2, 2)), name='JUNK'), hdu]).writeto(path, overwrite=True)
kT = (TK * u.K).to(u.keV, equivalencies=u.temperature_energy()).value
with open(out, 'w') as o:
    def row(name, v): o.write(name + ' ' + ' '.join(repr(float(x)) for x in v) + '\n')
    row('x', pos[:, 0]); row('z', pos[:, 2]); row('mass', mass)
    row('density', rho.astype(np.float32).astype(float)); row('kT', kT); row('Z', Z); row('support', 2 * h)
    row('cold', (TK < 3e6).astype(float))
)PY";
  const auto r = testing::run_python(dir, "make_fits", code, path + " " + exp);
  INFO(r.out);
  REQUIRE(r.status == 0);
  std::ifstream ef(exp);
  std::stringstream ss;
  ss << ef.rdbuf();
  const auto want = parse_columns(ss.str());

  cells::FieldMap m;
  m.position.source = "POS";  // case-insensitive match of 'pos', a 3D vector column
  m.mass.source = "mass";
  m.density.source = "RHO";
  m.temperature = {"TEMP_K", 1.0 / core::constants::keV_K, 0.0, 0.0, false};
  m.metallicity.source = "z_solar";
  m.metallicity_convention = cells::MetallicityConvention::Solar;
  m.smoothing_length.source = "HSML";
  m.smoothing_convention = cells::SmoothingConvention::CubicSplineH;  // H = 2h
  m.cold.source = "cold";
  m.chunk_rows = 100;
  io::CellsReadInfo info;
  const auto c = io::read_cells(path, m, cells::BadCellPolicy::Error, &info);  // first table: skips the image
  CHECK(info.rows_read == 777);
  CHECK(info.format == io::CellsFormat::Fits);
  check_rel(c.x, want.at("x"), 1e-7, "x");
  check_rel(c.z, want.at("z"), 1e-7, "z");
  check_rel(c.mass, want.at("mass"), 1e-7, "mass");
  check_rel(c.density, want.at("density"), 1e-7, "density");
  // astropy temperature_energy equivalency: k_B T in keV (CODATA 2018 k_B).
  check_rel(c.kT, want.at("kT"), 2e-7, "kT from K");
  check_rel(c.metallicity, want.at("Z"), 1e-7, "Z");
  check_rel(c.support, want.at("support"), 1e-7, "support = 2 h (cubic spline)");
  for (std::size_t i = 0; i < c.size(); ++i)
    CHECK(((c.flags[i] & cells::kFlagCold) != 0) == (want.at("cold")[i] > 0.5));

  SECTION("named extension; missing column and extension errors") {
    m.fits_extension = "gas";
    CHECK(io::read_cells(path, m).size() == 777);
    m.fits_extension = "JUNK";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("HDU JUNK: not a table"));
    m.fits_extension = "NOPE";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("NOPE") && Contains("no such extension"));
    m.fits_extension.clear();
    m.mass.source = "massx";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("column 'massx' (mass) not found"));
    m.mass.source = "Z_SOLAR";
    m.position.source = "mass";  // scalar where a 3-vector is expected
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("1 elements per row, expected 3"));
  }
}

TEST_CASE("CSV round trip and mesh cells from volumes", "[io][cells_reader]") {
  const auto dir = testing::scratch_dir("cells_reader_csv");
  const auto path = (dir / "mesh.csv").string();
  const int n = 250;
  std::vector<double> x(n), y(n), z(n), m(n), V(n), T(n), Z(n);
  {
    std::ofstream f(path);
    f << "# mesh cells for a test\n\n";
    f << "\"x\", y ,z,mass,volume,kT,metals\n";
    for (int i = 0; i < n; ++i) {
      x[i] = -100.0 + i;
      y[i] = 0.5 * i;
      z[i] = 1e-3 * i * i;
      m[i] = 1e6 * (1.0 + 0.01 * i);
      V[i] = 8.0 + 0.1 * i;
      T[i] = 1.0 + 0.02 * i;
      Z[i] = 0.3;
      if (i == 100) f << "# a comment in the middle\n";
      f << x[i] << ", " << y[i] << "," << z[i] << "," << m[i] << "," << V[i] << "," << T[i] << "," << Z[i] << "\r\n";
    }
  }
  cells::FieldMap map;
  map.kind = cells::CellKind::Mesh;
  map.position.components = {"x", "y", "z"};
  map.mass.source = "mass";
  map.volume.source = "volume";
  map.temperature.source = "kT";
  map.metallicity.source = "metals";
  map.metallicity_convention = cells::MetallicityConvention::Solar;
  map.mesh_support_factor = 2.5;
  map.chunk_rows = 64;
  io::CellsReadInfo info;
  const auto c = io::read_cells(path, map, cells::BadCellPolicy::Error, &info);
  REQUIRE(c.size() == static_cast<std::size_t>(n));
  CHECK(info.format == io::CellsFormat::Csv);
  CHECK(c.kind == cells::CellKind::Mesh);
  for (int i = 0; i < n; ++i) {
    CHECK(c.x[i] == static_cast<float>(x[i]));
    CHECK(c.z[i] == static_cast<float>(z[i]));
    CHECK(c.mass[i] == static_cast<float>(m[i]));
    CHECK(c.density[i] == static_cast<float>(m[i] / V[i]));
    CHECK(c.kT[i] == static_cast<float>(T[i]));
    // physics.md sec. 7: equivalent radius (3V/4pi)^(1/3) times the support factor.
    CHECK(c.support[i] == static_cast<float>(2.5 * std::cbrt(3.0 * V[i] / (4.0 * core::constants::kPi))));
  }
  // Round trip through the own HDF5 layout keeps every value.
  const auto h5 = (dir / "mesh.h5").string();
  io::write_cells_hdf5(h5, c);
  const auto back = io::read_cells(h5, io::own_layout_field_map());
  CHECK(back.kind == cells::CellKind::Mesh);
  CHECK(back.support == c.support);
  CHECK(back.density == c.density);
}

TEST_CASE("bad cells: error naming index and field, or dropped and counted", "[io][cells_reader][validate]") {
  const auto dir = testing::scratch_dir("cells_reader_bad");
  cells::GasCells c;
  const std::size_t n = 50;
  c.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    c.x[i] = c.y[i] = c.z[i] = static_cast<float>(i);
    c.mass[i] = 1e8f;
    c.density[i] = 1e5f;
    c.kT[i] = 2.0f;
    c.metallicity[i] = 0.3f;
    c.support[i] = 10.0f;
  }
  c.kT[17] = std::numeric_limits<float>::quiet_NaN();
  c.density[30] = -1.0f;
  c.kT[40] = 0.0f;
  c.density[40] = 0.0f;  // one cell failing two fields
  const auto path = (dir / "cells.h5").string();
  io::write_cells_hdf5(path, c);

  const auto rep = cells::validate_cells(c);
  CHECK(rep.n_bad == 3);
  CHECK(rep.count(cells::CellField::Temperature) == 2);
  CHECK(rep.count(cells::CellField::Density) == 2);
  CHECK(rep.first_index == 17);
  CHECK(rep.first_field == cells::CellField::Temperature);
  CHECK(rep.field_counts() == "density 2, temperature 2");

  SECTION("Error policy") {
    CHECK_THROWS_AS(io::read_cells(path, io::own_layout_field_map()), core::InputError);
    CHECK_THROWS_WITH(io::read_cells(path, io::own_layout_field_map()),
                      path + ": 3 cells unusable; first: index 17, field temperature = nan (expected finite > 0)");
  }
  SECTION("Drop policy") {
    io::CellsReadInfo info;
    const auto d = io::read_cells(path, io::own_layout_field_map(), cells::BadCellPolicy::Drop, &info);
    CHECK(info.cells_dropped == 3);
    CHECK(info.validation.n_bad == 3);
    REQUIRE(d.size() == n - 3);
    std::vector<float> xs;
    for (std::size_t i = 0; i < n; ++i)
      if (i != 17 && i != 30 && i != 40) xs.push_back(static_cast<float>(i));
    CHECK(d.x == xs);  // order kept, the right cells removed
    CHECK(cells::validate_cells(d).ok());
  }
  SECTION("all cells bad") {
    for (auto& v : c.mass) v = -1.0f;
    const auto p2 = (dir / "allbad.h5").string();
    io::write_cells_hdf5(p2, c);
    CHECK_THROWS_WITH(io::read_cells(p2, io::own_layout_field_map(), cells::BadCellPolicy::Drop),
                      Contains("no usable cells") && Contains("50 cells unusable; first: index 0, field mass = -1"));
  }
}

TEST_CASE("bad HDF5 inputs give one-line errors naming file and dataset", "[io][cells_reader][python]") {
  const auto dir = testing::scratch_dir("cells_reader_badh5");
  SECTION("missing file, unknown extension") {
    CHECK_THROWS_WITH(io::read_cells((dir / "none.h5").string(), io::own_layout_field_map()),
                      Contains("none.h5: no such file"));
    CHECK_THROWS_WITH(io::read_cells((dir / "cells.txt").string(), io::own_layout_field_map()),
                      Contains("unknown cells file type '.txt'"));
    std::ofstream((dir / "fake.h5").string()) << "not hdf5\n";
    CHECK_THROWS_WITH(io::read_cells((dir / "fake.h5").string(), io::own_layout_field_map()),
                      Contains("not an HDF5 file"));
  }
  SECTION("missing dataset and missing group") {
    const auto path = make_gadget(dir, "ok");
    auto m = gadget_map();
    m.mass.source = "PartType0/MassesX";
    CHECK_THROWS_WITH(io::read_cells(path, m),
                      path + ": dataset 'PartType0/MassesX' (mass) not found");
    m.mass.source = "PartType5/Masses";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("no 'PartType5' in the file"));
    m.mass.source = "Header";  // a group, not a dataset
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("'Header' (mass) is not a dataset"));
  }
  SECTION("mismatched lengths") {
    const auto path = make_gadget(dir, "short");
    CHECK_THROWS_WITH(io::read_cells(path, gadget_map()),
                      Contains("different lengths") && Contains("1000 rows") && Contains("'PartType0/Masses' has 999"));
  }
  SECTION("wrong shape") {
    const auto path = make_gadget(dir, "badshape");
    CHECK_THROWS_WITH(io::read_cells(path, gadget_map()),
                      Contains("'PartType0/Coordinates' (position) has shape (1000,4), expected (N,3)"));
  }
  SECTION("field-map problems are ConfigErrors") {
    const auto path = make_gadget(dir, "ok");
    auto m = gadget_map();
    m.hubble_h_attribute.clear();
    CHECK_THROWS_AS(io::read_cells(path, m), core::ConfigError);
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("position (h_exp -1) needs little h"));
    m = gadget_map();
    m.hubble_h_attribute = "Header/NoSuchAttr";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("attribute 'Header/NoSuchAttr' (little h) not found"));
    m = gadget_map();
    m.temperature.source = "PartType0/InternalEnergy";
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("name temperature or internal_energy, not both"));
    m = gadget_map();
    m.solar_metal_mass_fraction = 0.0;
    CHECK_THROWS_WITH(io::read_cells(path, m), Contains("solar_metal_mass_fraction is not set"));
  }
}

TEST_CASE("bad CSV inputs name the line", "[io][cells_reader]") {
  const auto dir = testing::scratch_dir("cells_reader_badcsv");
  cells::FieldMap map;
  map.position.components = {"x", "y", "z"};
  map.mass.source = "m";
  map.density.source = "rho";
  map.temperature.source = "temp";
  map.metallicity_fallback_solar = 0.3;
  map.smoothing_length.source = "h";
  auto write = [&](const std::string& name, const std::string& body) {
    const auto p = (dir / name).string();
    std::ofstream(p) << body;
    return p;
  };
  const std::string header = "# comment\nx,y,z,m,rho,temp,h\n";
  const auto ok = write("ok.csv", header + "1,2,3,4,5,6,7\n");
  const auto c = io::read_cells(ok, map);
  REQUIRE(c.size() == 1);
  CHECK(c.metallicity[0] == 0.3f);  // the fallback is used
  CHECK(c.support[0] == 7.0f);

  const auto bad = write("bad.csv", header + "1,2,3,4,5,6,7\n\n# c\n1,2,3,4,5,abc,7\n");
  CHECK_THROWS_AS(io::read_cells(bad, map), core::InputError);
  CHECK_THROWS_WITH(io::read_cells(bad, map), bad + ": line 6, column 'temp': 'abc' is not a number");
  const auto few = write("few.csv", header + "1,2,3,4,5,6\n");
  CHECK_THROWS_WITH(io::read_cells(few, map), Contains("line 3: 6 fields, the header has 7"));
  const auto empty = write("empty.csv", header + "1,2,3,,5,6,7\n");
  CHECK_THROWS_WITH(io::read_cells(empty, map), Contains("line 3, column 'm': empty field"));
  const auto nohdr = write("nohdr.csv", "# only comments\n");
  CHECK_THROWS_WITH(io::read_cells(nohdr, map), Contains("no header row"));
  const auto norows = write("norows.csv", header);
  CHECK_THROWS_WITH(io::read_cells(norows, map), Contains("no cells"));
  const auto nocol = write("nocol.csv", "x,y,z,m,rho,h\n1,2,3,4,5,6\n");
  CHECK_THROWS_WITH(io::read_cells(nocol, map), Contains("column 'temp' (temperature) not found; header has: x, y, z"));
  const auto nan = write("nan.csv", header + "1,2,3,4,5,6,7\n1,2,3,4,5,nan,7\n");
  CHECK_THROWS_WITH(io::read_cells(nan, map),
                    nan + ": 1 cell unusable; first: index 1, field temperature = nan (expected finite > 0)");
  map.position = {"pos", {}, 1.0, 0.0, 0.0, false};
  CHECK_THROWS_AS(io::read_cells(ok, map), core::ConfigError);
}
