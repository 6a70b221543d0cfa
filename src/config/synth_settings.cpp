// Analytic cluster models from YAML: see include/icmscope/config/synth_settings.hpp.
#include "icmscope/config/synth_settings.hpp"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <limits>
#include <set>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"

namespace icmscope::config {

using cells::ClusterComponent;
using cells::ClusterModel;
using cells::DensityKind;
using cells::DensityNormalisation;
using cells::MetallicityKind;
using cells::TemperatureKind;

namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();
const Range kAboveThird{1.0 / 3.0, kInf, true, false};
const Range kCusp{0.0, 3.0, false, true};

// Shortest decimal text that reads back to the same double.
std::string num(double v) {
  char buf[40];
  for (int prec = 15; prec <= 17; ++prec) {
    std::snprintf(buf, sizeof buf, "%.*g", prec, v);
    if (std::strtod(buf, nullptr) == v) break;
  }
  return buf;
}


void read_density(const Section& d, double r_max_kpc, cells::DensityProfile& p) {
  const std::string kind = d.choice("profile", {"beta", "vikhlinin06"});
  const bool by_mass = d.has("gas_mass_msun") || d.has("gas_mass_radius_kpc");
  const std::string amp_key = kind == "beta" ? "n_e0_cm3" : "n0_cm3";
  if (by_mass && d.has(amp_key))
    d.fail(amp_key, "give either " + amp_key + " or gas_mass_msun with gas_mass_radius_kpc, not both");
  if (!by_mass && !d.has(amp_key))
    d.fail(amp_key, "missing normalisation: give " + amp_key +
                        (kind == "beta" ? " (central electron density)" : " (amplitude of sqrt(n_p n_e))") +
                        " or gas_mass_msun with gas_mass_radius_kpc");
  if (kind == "beta") {
    p.kind = DensityKind::Beta;
    p.beta.r_c_kpc = d.number("r_c_kpc", std::nullopt, Range::positive());
    p.beta.beta = d.number("beta", std::nullopt, kAboveThird);
    p.beta.n_e0_cm3 = by_mass ? 1.0 : d.number("n_e0_cm3", std::nullopt, Range::positive());
  } else {
    p.kind = DensityKind::Vikhlinin06;
    cells::Vikhlinin06Density& v = p.v06;
    v.r_c_kpc = d.number("r_c_kpc", std::nullopt, Range::positive());
    v.beta = d.number("beta", std::nullopt, kAboveThird);
    v.alpha = d.number("alpha", 0.0, kCusp);
    v.epsilon = d.number("epsilon", 0.0, Range::closed(0.0, 5.0));
    v.r_s_kpc = d.number("r_s_kpc", v.epsilon > 0.0 ? std::nullopt : std::optional<double>(1000.0),
                         Range::positive());
    v.gamma = d.number("gamma", 3.0, Range::positive());
    if (by_mass) {
      if (d.has("n02_cm3")) d.fail("n02_cm3", "with gas_mass_msun give the ratio n02_over_n0 instead");
      v.n0_cm3 = 1.0;
      v.n02_cm3 = d.number("n02_over_n0", 0.0, Range::non_negative());
    } else {
      if (d.has("n02_over_n0")) d.fail("n02_over_n0", "only with gas_mass_msun; with n0_cm3 give n02_cm3");
      v.n0_cm3 = d.number("n0_cm3", std::nullopt, Range::positive());
      v.n02_cm3 = d.number("n02_cm3", 0.0, Range::non_negative());
    }
    const bool second = v.n02_cm3 > 0.0;
    v.r_c2_kpc = d.number("r_c2_kpc", second ? std::nullopt : std::optional<double>(10.0), Range::positive());
    v.beta2 = d.number("beta2", second ? std::nullopt : std::optional<double>(1.0), Range::positive());
  }
  if (by_mass) {
    p.normalisation = DensityNormalisation::GasMass;
    p.gas_mass_msun = d.number("gas_mass_msun", std::nullopt, Range::positive());
    p.gas_mass_radius_kpc = d.number("gas_mass_radius_kpc", std::nullopt, Range::positive());
    if (p.gas_mass_radius_kpc > r_max_kpc)
      d.fail("gas_mass_radius_kpc", "value " + num(p.gas_mass_radius_kpc) +
                                        " exceeds the truncation radius r_max_kpc = " + num(r_max_kpc));
  } else {
    p.normalisation = DensityNormalisation::Amplitude;
  }
}

void read_temperature(const Section& t, cells::TemperatureProfile& p) {
  const std::string kind = t.choice("profile", {"isothermal", "vikhlinin06", "vikhlinin06_universal"});
  if (kind == "isothermal") {
    p.kind = TemperatureKind::Isothermal;
    p.kT_keV = t.number("kT_keV", std::nullopt, Range::positive());
  } else if (kind == "vikhlinin06") {
    p.kind = TemperatureKind::Vikhlinin06;
    cells::Vikhlinin06Temperature& v = p.v06;
    v.kT0_keV = t.number("kT0_keV", std::nullopt, Range::positive());
    v.r_t_kpc = t.number("r_t_kpc", std::nullopt, Range::positive());
    v.a = t.number("a", 0.0);
    v.b = t.number("b", 2.0, Range::positive());
    v.c = t.number("c", std::nullopt);
    v.r_cool_kpc = t.number("r_cool_kpc", std::nullopt, Range::positive());
    v.a_cool = t.number("a_cool", 2.0, Range::positive());
    v.kT_min_keV = t.number("kT_min_keV", std::nullopt, Range::positive());
  } else {
    p.kind = TemperatureKind::Vikhlinin06Universal;
    p.universal.kT_mg_keV = t.number("kT_mg_keV", std::nullopt, Range::positive());
    p.universal.r500_kpc = t.number("r500_kpc", std::nullopt, Range::positive());
  }
}

void read_metallicity(const Section& z, cells::MetallicityProfile& p) {
  const std::string kind = z.choice("profile", {"constant", "cored"}, std::string("constant"));
  if (kind == "constant") {
    p.kind = MetallicityKind::Constant;
    p.Z_solar = z.number("Z_solar", 0.3, Range::non_negative());
  } else {
    p.kind = MetallicityKind::Cored;
    p.cored.Z0_solar = z.number("Z0_solar", std::nullopt, Range::non_negative());
    p.cored.r_Z_kpc = z.number("r_Z_kpc", std::nullopt, Range::positive());
    p.cored.alpha_Z = z.number("alpha_Z", 0.5, Range::non_negative());
    p.cored.Z_out_solar = z.number("Z_out_solar", 0.25, Range::non_negative());
  }
}

ClusterComponent read_component(const Section& c, std::size_t index) {
  ClusterComponent out;
  out.name = c.text("name", "component" + std::to_string(index));
  if (out.name.empty()) c.fail("name", "must not be empty");
  const auto off = c.numbers("offset_kpc", std::vector<double>{0.0, 0.0, 0.0}, Range::any(), 3, 3);
  const auto vel = c.numbers("velocity_km_s", std::vector<double>{0.0, 0.0, 0.0}, Range::any(), 3, 3);
  for (int i = 0; i < 3; ++i) {
    out.offset_kpc[i] = off[i];
    out.velocity_km_s[i] = vel[i];
  }
  out.sigma_km_s = c.number("sigma_km_s", 0.0, Range::non_negative());
  out.r_max_kpc = c.number("r_max_kpc", std::nullopt, Range::positive());
  read_density(c.child("density"), out.r_max_kpc, out.density);
  read_temperature(c.child("temperature"), out.temperature);
  if (auto z = c.maybe_child("metallicity")) read_metallicity(*z, out.metallicity);
  return out;
}

std::optional<double> maybe_number(const Section& s, const std::string& key, Range range) {
  if (!s.has(key)) {
    s.accept(key);
    return std::nullopt;
  }
  return s.number(key, std::nullopt, range);
}

}  // namespace

cells::ClusterModel read_cluster_model(const Section& s) {
  ClusterModel m;
  m.name = s.text("name");
  if (m.name.empty()) s.fail("name", "must not be empty");
  m.seed = static_cast<std::uint64_t>(s.integer("seed", 1, Range::closed(0.0, 9.0e15)));
  m.n_particles = static_cast<std::size_t>(s.integer("n_particles", 200000, Range::closed(100.0, 4.0e9)));
  m.k_neighbours = static_cast<int>(s.integer("k_neighbours", cells::kDefaultNeighbours, Range::closed(1.0, 10000.0)));
  m.stratified_radii = s.choice("radial_sampling", {"stratified", "random"}, std::string("stratified")) == "stratified";
  if (static_cast<std::size_t>(m.k_neighbours) >= m.n_particles)
    s.fail("k_neighbours", "value " + std::to_string(m.k_neighbours) + " must be smaller than n_particles = " +
                               std::to_string(m.n_particles));
  m.abundance_set = s.choice("abundance_set", emission::abundance_set_names(), std::string("anders_grevesse_1989"));
  m.redshift = maybe_number(s, "redshift", Range::non_negative());
  m.ra_deg = maybe_number(s, "ra_deg", Range{0.0, 360.0, false, true});
  m.dec_deg = maybe_number(s, "dec_deg", Range::closed(-90.0, 90.0));
  m.m500_msun = maybe_number(s, "m500_msun", Range::positive());

  const auto comps = s.children("components");
  if (comps.empty()) s.fail("components", "expected a list of at least one component");
  std::set<std::string> names;
  for (std::size_t i = 0; i < comps.size(); ++i) {
    m.components.push_back(read_component(comps[i], i));
    if (!names.insert(m.components.back().name).second)
      comps[i].fail("name", "duplicate component name '" + m.components.back().name + "'");
  }
  // Last line of defence: the physics layer's own checks (all of them should
  // have been caught above with their key).
  try {
    cells::validate_model(m);
  } catch (const core::DomainError& e) {
    throw core::ConfigError(s.where() + ": " + e.what());
  }
  return m;
}

cells::ClusterModel load_cluster_model(const std::string& path, std::string* resolved_yaml,
                                       std::string* resolved_hash) {
  const SettingsFile f = SettingsFile::load(path);
  ClusterModel m = read_cluster_model(f.root());
  f.finish();
  if (resolved_yaml) *resolved_yaml = f.resolved_yaml();
  if (resolved_hash) *resolved_hash = f.resolved_hash();
  return m;
}

// ---------------------------------------------------------------------------
namespace {

std::string quoted(const std::string& s) {
  std::string q = "\"";
  for (char c : s) {
    if (c == '"' || c == '\\') q += '\\';
    q += c;
  }
  return q + "\"";
}

std::string vec3(const std::array<double, 3>& v) {
  return "[" + num(v[0]) + ", " + num(v[1]) + ", " + num(v[2]) + "]";
}

}  // namespace

std::string cluster_model_yaml(const cells::ClusterModel& m) {
  std::ostringstream o;
  o << "name: " << quoted(m.name) << "\n";
  o << "seed: " << m.seed << "\n";
  o << "n_particles: " << m.n_particles << "\n";
  o << "k_neighbours: " << m.k_neighbours << "\n";
  o << "radial_sampling: " << (m.stratified_radii ? "stratified" : "random") << "\n";
  o << "abundance_set: " << m.abundance_set << "\n";
  if (m.redshift) o << "redshift: " << num(*m.redshift) << "\n";
  if (m.ra_deg) o << "ra_deg: " << num(*m.ra_deg) << "\n";
  if (m.dec_deg) o << "dec_deg: " << num(*m.dec_deg) << "\n";
  if (m.m500_msun) o << "m500_msun: " << num(*m.m500_msun) << "\n";
  o << "components:\n";
  for (const auto& c : m.components) {
    o << "  - name: " << quoted(c.name) << "\n";
    o << "    offset_kpc: " << vec3(c.offset_kpc) << "\n";
    o << "    velocity_km_s: " << vec3(c.velocity_km_s) << "\n";
    o << "    sigma_km_s: " << num(c.sigma_km_s) << "\n";
    o << "    r_max_kpc: " << num(c.r_max_kpc) << "\n";
    const auto& d = c.density;
    const bool by_mass = d.normalisation == DensityNormalisation::GasMass;
    o << "    density:\n";
    if (d.kind == DensityKind::Beta) {
      o << "      profile: beta\n";
      o << "      r_c_kpc: " << num(d.beta.r_c_kpc) << "\n";
      o << "      beta: " << num(d.beta.beta) << "\n";
      if (!by_mass) o << "      n_e0_cm3: " << num(d.beta.n_e0_cm3) << "\n";
    } else {
      const auto& v = d.v06;
      o << "      profile: vikhlinin06\n";
      o << "      r_c_kpc: " << num(v.r_c_kpc) << "\n";
      o << "      beta: " << num(v.beta) << "\n";
      o << "      alpha: " << num(v.alpha) << "\n";
      o << "      epsilon: " << num(v.epsilon) << "\n";
      o << "      r_s_kpc: " << num(v.r_s_kpc) << "\n";
      o << "      gamma: " << num(v.gamma) << "\n";
      if (by_mass) {
        o << "      n02_over_n0: " << num(v.n02_cm3 / v.n0_cm3) << "\n";
      } else {
        o << "      n0_cm3: " << num(v.n0_cm3) << "\n";
        o << "      n02_cm3: " << num(v.n02_cm3) << "\n";
      }
      o << "      r_c2_kpc: " << num(v.r_c2_kpc) << "\n";
      o << "      beta2: " << num(v.beta2) << "\n";
    }
    if (by_mass) {
      o << "      gas_mass_msun: " << num(d.gas_mass_msun) << "\n";
      o << "      gas_mass_radius_kpc: " << num(d.gas_mass_radius_kpc) << "\n";
    }
    const auto& t = c.temperature;
    o << "    temperature:\n";
    switch (t.kind) {
      case TemperatureKind::Isothermal:
        o << "      profile: isothermal\n      kT_keV: " << num(t.kT_keV) << "\n";
        break;
      case TemperatureKind::Vikhlinin06:
        o << "      profile: vikhlinin06\n";
        o << "      kT0_keV: " << num(t.v06.kT0_keV) << "\n";
        o << "      r_t_kpc: " << num(t.v06.r_t_kpc) << "\n";
        o << "      a: " << num(t.v06.a) << "\n";
        o << "      b: " << num(t.v06.b) << "\n";
        o << "      c: " << num(t.v06.c) << "\n";
        o << "      r_cool_kpc: " << num(t.v06.r_cool_kpc) << "\n";
        o << "      a_cool: " << num(t.v06.a_cool) << "\n";
        o << "      kT_min_keV: " << num(t.v06.kT_min_keV) << "\n";
        break;
      case TemperatureKind::Vikhlinin06Universal:
        o << "      profile: vikhlinin06_universal\n";
        o << "      kT_mg_keV: " << num(t.universal.kT_mg_keV) << "\n";
        o << "      r500_kpc: " << num(t.universal.r500_kpc) << "\n";
        break;
    }
    const auto& z = c.metallicity;
    o << "    metallicity:\n";
    if (z.kind == MetallicityKind::Constant) {
      o << "      profile: constant\n      Z_solar: " << num(z.Z_solar) << "\n";
    } else {
      o << "      profile: cored\n";
      o << "      Z0_solar: " << num(z.cored.Z0_solar) << "\n";
      o << "      r_Z_kpc: " << num(z.cored.r_Z_kpc) << "\n";
      o << "      alpha_Z: " << num(z.cored.alpha_Z) << "\n";
      o << "      Z_out_solar: " << num(z.cored.Z_out_solar) << "\n";
    }
  }
  return o.str();
}

}  // namespace icmscope::config

namespace icmscope::config {

const char* synth_example_yaml() {
  return R"YAML(# Analytic cluster model for `icmscope synth MODEL.yaml -o cells.h5`.
# Every key is listed with its unit, its default ("required" when it has none)
# and its choices. Units are in the key names: kpc (physical), km/s, Msun,
# cm^-3, keV, Zsun (solar units of abundance_set), deg.
#
# The model is a sum of spherical components. Gas particles of equal mass
# (within each component) sample each component's gas mass profile out to its
# r_max_kpc; every particle carries the TOTAL model density at its position
# and the temperature and metallicity of its own component.

name: Halvard-9               # model name (text; required)
seed: 20240611                # random seed (integer >= 0; default 1): same seed, same particles
n_particles: 300000           # particles of all components together (integer >= 100; default 200000)
radial_sampling: stratified   # stratified (one particle per mass quantile: low-noise radial profile) |
                              # random (independent draws); directions are random either way (default stratified)
k_neighbours: 48              # kernel support = distance to the k-th nearest particle, itself
                              # counted (integer in [1, 10000], < n_particles; default 48)
abundance_set: anders_grevesse_1989   # plasma composition, sets mu_e and n_e/n_H (default
                              # anders_grevesse_1989; choices: ag89, anders_grevesse_1989, a09,
                              # asplund_2009). Use the set of the emission model.

# Metadata for later verbs (optional, no default; not used by the synthesis):
redshift: 0.18                # cosmological redshift (>= 0)
ra_deg: 212.25                # right ascension of the model origin, deg in [0, 360)
dec_deg: -7.5                 # declination of the model origin, deg in [-90, 90]
m500_msun: 8.0e14             # total M500 of the system, Msun (> 0)

components:                   # list of components (at least one; required)
  # --- a cool-core main cluster: Vikhlinin et al. 2006 forms --------------
  - name: main                # unique component name (text; default component<i>)
    offset_kpc: [0, 0, 0]     # centre relative to the model origin, kpc (3 numbers; default [0, 0, 0])
    velocity_km_s: [0, 0, 0]  # bulk velocity, km/s (3 numbers; default [0, 0, 0])
    sigma_km_s: 0             # 1-D isotropic Gaussian velocity dispersion, km/s (>= 0; default 0)
    r_max_kpc: 3000           # truncation radius: no gas of this component beyond, kpc (> 0; required)
    density:
      profile: vikhlinin06    # choices: beta | vikhlinin06 (required)
      # vikhlinin06: n_p n_e = n0^2 (r/r_c)^-alpha / (1 + r^2/r_c^2)^(3 beta - alpha/2)
      #                         / (1 + r^gamma/r_s^gamma)^(epsilon/gamma)
      #                    + n02^2 / (1 + r^2/r_c2^2)^(3 beta2);  n_e = sqrt(n_p n_e * n_e/n_H)
      r_c_kpc: 150            # core radius, kpc (> 0; required)
      beta: 0.6               # slope parameter (> 1/3; required)
      alpha: 1.2              # central cusp slope (in [0, 3); default 0)
      epsilon: 3.0            # extra outer slope (in [0, 5]; default 0)
      r_s_kpc: 1400           # radius of the outer steepening, kpc (> 0; required when epsilon > 0,
                              # default 1000 otherwise)
      gamma: 3                # width of the steepening (> 0; default 3, the paper's fixed value)
      # normalisation, one of: (a) n0_cm3 [+ n02_cm3], (b) gas_mass_msun + gas_mass_radius_kpc [+ n02_over_n0]
      n0_cm3: 5.0e-3          # amplitude of sqrt(n_p n_e), cm^-3 (> 0)
      n02_cm3: 2.5e-2         # amplitude of the second (inner) component, cm^-3 (>= 0; default 0)
      r_c2_kpc: 15            # core radius of the second component, kpc (> 0; required when
                              # n02 > 0, default 10 otherwise)
      beta2: 1.0              # slope of the second component (> 0; required when n02 > 0,
                              # default 1 otherwise)
    temperature:
      profile: vikhlinin06    # choices: isothermal | vikhlinin06 | vikhlinin06_universal (required)
      # vikhlinin06: T = T0 t_cool t,  t = (r/r_t)^-a / (1 + (r/r_t)^b)^(c/b),
      #              t_cool = (x + T_min/T0) / (x + 1),  x = (r/r_cool)^a_cool
      kT0_keV: 9.0            # normalisation T0, keV (> 0; required)
      r_t_kpc: 1200           # transition radius of the outer decline, kpc (> 0; required)
      a: 0.0                  # inner slope of t(r) (any; default 0)
      b: 2.0                  # width of the transition (> 0; default 2)
      c: 0.7                  # outer slope of t(r) (any; required)
      r_cool_kpc: 90          # cool-core radius, kpc (> 0; required)
      a_cool: 1.8             # sharpness of the cool core (> 0; default 2)
      kT_min_keV: 4.0         # central floor T_min of the cool core, keV (> 0; required; = kT0_keV: none)
    metallicity:              # optional section (default: constant 0.3 Zsun)
      profile: cored          # choices: constant | cored (default constant)
      # cored: Z = max(Z_out, Z0 (1 + (r/r_Z)^2)^(-alpha_Z))  (a form of common practice)
      Z0_solar: 0.8           # central metallicity, Zsun (>= 0; required)
      r_Z_kpc: 80             # core radius of the peak, kpc (> 0; required)
      alpha_Z: 0.6            # decline slope (>= 0; default 0.5)
      Z_out_solar: 0.25       # outer floor, Zsun (>= 0; default 0.25)

  # --- an infalling subcluster, normalised by its gas mass -----------------
  - name: subcluster
    offset_kpc: [900, 300, 0]
    velocity_km_s: [-1100, -350, 150]
    sigma_km_s: 250
    r_max_kpc: 1200
    density:
      profile: vikhlinin06
      r_c_kpc: 90
      beta: 0.65
      alpha: 0.0
      epsilon: 2.0
      r_s_kpc: 600
      gamma: 3
      gas_mass_msun: 1.2e13   # gas mass inside gas_mass_radius_kpc of this truncated component, Msun (> 0)
      gas_mass_radius_kpc: 800  # kpc (> 0, <= r_max_kpc); the amplitudes are then derived
      n02_over_n0: 0.0        # with gas_mass_msun: the ratio n02/n0 (>= 0; default 0)
      r_c2_kpc: 10
      beta2: 1.0
    temperature:
      profile: vikhlinin06_universal
      # T = T_mg 1.35 [(x/0.045)^1.9 + 0.45] / [(x/0.045)^1.9 + 1] [1 + (x/0.6)^2]^-0.45, x = r/r500
      kT_mg_keV: 3.5          # gas-mass-weighted temperature T_mg, keV (> 0; required)
      r500_kpc: 750           # R500 of this component, kpc (> 0; required)
    metallicity:
      profile: constant
      Z_solar: 0.35           # metallicity, Zsun (>= 0; default 0.3)

  # --- a small isothermal group: beta model --------------------------------
  - name: group
    offset_kpc: [-1500, -800, 400]
    velocity_km_s: [300, 200, -100]
    sigma_km_s: 150
    r_max_kpc: 600
    density:
      profile: beta           # n_e = n_e0 (1 + (r/r_c)^2)^(-3 beta/2)
      r_c_kpc: 40             # core radius, kpc (> 0; required)
      beta: 0.55              # slope parameter (> 1/3; required)
      n_e0_cm3: 6.0e-3        # central electron density, cm^-3 (> 0), or gas_mass_msun + gas_mass_radius_kpc
    temperature:
      profile: isothermal
      kT_keV: 1.6             # temperature, keV (> 0; required)
    metallicity:
      profile: constant
      Z_solar: 0.3
)YAML";
}

}  // namespace icmscope::config
