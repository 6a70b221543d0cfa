// Analytic cluster models from YAML (config/synth_settings.hpp): the example,
// every shipped model, round trips and bad inputs.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <functional>
#include <string>
#include <vector>

#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/cells/synth.hpp"
#include "icmscope/cells/validate.hpp"
#include "icmscope/config/settings_reader.hpp"
#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/cosmo/cosmology.hpp"
#include "icmscope/emission/abundances.hpp"
#include "test_support.hpp"

using namespace icmscope;
using config::SettingsFile;
using core::ConfigError;

namespace {

std::string config_error(const std::function<void()>& f) {
  try {
    f();
  } catch (const ConfigError& e) {
    return e.what();
  }
  return "";
}

// Parse a model from text and finish the file (unknown keys are errors).
cells::ClusterModel parse_model(const std::string& text) {
  const auto f = SettingsFile::parse(text, "model.yaml");
  auto m = config::read_cluster_model(f.root());
  f.finish();
  return m;
}

const char* kMinimal = R"(name: t
n_particles: 1000
components:
  - name: c
    r_max_kpc: 1500
    density:
      profile: beta
      r_c_kpc: 120
      beta: 0.7
      n_e0_cm3: 4e-3
    temperature:
      profile: isothermal
      kT_keV: 4
)";

std::string replace(std::string s, const std::string& from, const std::string& to) {
  const auto p = s.find(from);
  REQUIRE(p != std::string::npos);
  return s.replace(p, from.size(), to);
}

void check_same(const cells::ClusterModel& a, const cells::ClusterModel& b) {
  CHECK(a.name == b.name);
  CHECK(a.seed == b.seed);
  CHECK(a.n_particles == b.n_particles);
  CHECK(a.k_neighbours == b.k_neighbours);
  CHECK(a.abundance_set == b.abundance_set);
  CHECK(a.redshift == b.redshift);
  CHECK(a.ra_deg == b.ra_deg);
  CHECK(a.dec_deg == b.dec_deg);
  CHECK(a.m500_msun == b.m500_msun);
  REQUIRE(a.components.size() == b.components.size());
  for (std::size_t i = 0; i < a.components.size(); ++i) {
    const auto &p = a.components[i], &q = b.components[i];
    CHECK(p.name == q.name);
    CHECK(p.offset_kpc == q.offset_kpc);
    CHECK(p.velocity_km_s == q.velocity_km_s);
    CHECK(p.sigma_km_s == q.sigma_km_s);
    CHECK(p.r_max_kpc == q.r_max_kpc);
    const auto &d = p.density, &e = q.density;
    CHECK(d.kind == e.kind);
    CHECK(d.normalisation == e.normalisation);
    CHECK(d.gas_mass_msun == e.gas_mass_msun);
    CHECK(d.gas_mass_radius_kpc == e.gas_mass_radius_kpc);
    CHECK(d.beta.n_e0_cm3 == e.beta.n_e0_cm3);
    CHECK(d.beta.r_c_kpc == e.beta.r_c_kpc);
    CHECK(d.beta.beta == e.beta.beta);
    if (d.kind == cells::DensityKind::Vikhlinin06) {
      CHECK(d.v06.n0_cm3 == e.v06.n0_cm3);
      CHECK(d.v06.r_c_kpc == e.v06.r_c_kpc);
      CHECK(d.v06.alpha == e.v06.alpha);
      CHECK(d.v06.beta == e.v06.beta);
      CHECK(d.v06.r_s_kpc == e.v06.r_s_kpc);
      CHECK(d.v06.epsilon == e.v06.epsilon);
      CHECK(d.v06.gamma == e.v06.gamma);
      CHECK(d.v06.n02_cm3 == e.v06.n02_cm3);
      CHECK(d.v06.r_c2_kpc == e.v06.r_c2_kpc);
      CHECK(d.v06.beta2 == e.v06.beta2);
    }
    const auto &t = p.temperature, &u = q.temperature;
    CHECK(t.kind == u.kind);
    CHECK(t.kT_keV == u.kT_keV);
    CHECK(t.v06.kT0_keV == u.v06.kT0_keV);
    CHECK(t.v06.r_t_kpc == u.v06.r_t_kpc);
    CHECK(t.v06.a == u.v06.a);
    CHECK(t.v06.b == u.v06.b);
    CHECK(t.v06.c == u.v06.c);
    CHECK(t.v06.r_cool_kpc == u.v06.r_cool_kpc);
    CHECK(t.v06.a_cool == u.v06.a_cool);
    CHECK(t.v06.kT_min_keV == u.v06.kT_min_keV);
    CHECK(t.universal.kT_mg_keV == u.universal.kT_mg_keV);
    CHECK(t.universal.r500_kpc == u.universal.r500_kpc);
    const auto &z = p.metallicity, &w = q.metallicity;
    CHECK(z.kind == w.kind);
    CHECK(z.Z_solar == w.Z_solar);
    CHECK(z.cored.Z0_solar == w.cored.Z0_solar);
    CHECK(z.cored.r_Z_kpc == w.cored.r_Z_kpc);
    CHECK(z.cored.alpha_Z == w.cored.alpha_Z);
    CHECK(z.cored.Z_out_solar == w.cored.Z_out_solar);
  }
}

std::vector<std::filesystem::path> shipped_models() {
  std::vector<std::filesystem::path> out;
  for (const auto& e : std::filesystem::directory_iterator(icmscope::testing::source_dir() / "demo_clusters" / "models"))
    if (e.path().extension() == ".yaml") out.push_back(e.path());
  std::sort(out.begin(), out.end());
  out.push_back(icmscope::testing::source_dir() / "config" / "examples" / "beta_model.yaml");
  return out;
}

}  // namespace

TEST_CASE("the synth example parses, reads every key and round-trips", "[config][synth]") {
  const auto f = SettingsFile::parse(config::synth_example_yaml(), "example.yaml");
  const cells::ClusterModel m = config::read_cluster_model(f.root());
  CHECK_NOTHROW(f.finish());
  // Complete: no value of the example came from a default.
  for (const auto& e : f.resolved()) {
    INFO(e.path);
    CHECK_FALSE(e.is_default);
  }
  REQUIRE(m.components.size() == 3);
  CHECK(m.components[0].density.kind == cells::DensityKind::Vikhlinin06);
  CHECK(m.components[1].density.normalisation == cells::DensityNormalisation::GasMass);
  CHECK(m.components[1].temperature.kind == cells::TemperatureKind::Vikhlinin06Universal);
  CHECK(m.components[2].density.kind == cells::DensityKind::Beta);
  CHECK(m.components[2].temperature.kind == cells::TemperatureKind::Isothermal);
  CHECK(m.redshift == 0.18);
  CHECK(m.components[1].offset_kpc == std::array<double, 3>{900, 300, 0});

  // Round trip: model -> YAML -> model is the identity, and the text is a fixed point.
  const std::string text = config::cluster_model_yaml(m);
  const cells::ClusterModel back = parse_model(text);
  check_same(m, back);
  CHECK(config::cluster_model_yaml(back) == text);
  // Numbers that need 17 digits survive too.
  cells::ClusterModel odd = m;
  odd.components[0].density.v06.beta = 0.1 + 0.2 + 0.3;  // 0.6000000000000001
  odd.components[2].offset_kpc[1] = 1.0 / 3.0;
  check_same(odd, parse_model(config::cluster_model_yaml(odd)));
}

TEST_CASE("every shipped model parses and synthesises", "[config][synth]") {
  const auto files = shipped_models();
  REQUIRE(files.size() >= 6);  // five demo models and the beta test model
  const cosmo::Cosmology cosmology;  // H0 = 70, Om = 0.3 (the demo comments' convention)
  for (const auto& path : files) {
    INFO(path.string());
    std::string echo;
    cells::ClusterModel m = config::load_cluster_model(path.string(), &echo);
    CHECK(echo.find("name:") != std::string::npos);
    CHECK(m.n_particles <= 500000);  // the demo suite stays fast
    m.n_particles = 20000;
    cells::SynthSummary s;
    const cells::GasCells g = cells::synthesise(m, 0, &s);
    CHECK(g.size() == 20000);
    const auto report = cells::validate_cells(g);
    INFO(report.summary());
    CHECK(report.ok());
    double total = 0;
    for (float v : g.mass) total += v;
    CHECK_THAT(total, Catch::Matchers::WithinRel(s.total_gas_mass_msun, 1e-6));
    // Plausibility of the demo clusters: gas fraction inside R500 (sum of the
    // components about their own centres) within 0.05-0.16, the range of
    // observed clusters and groups (common practice; from memory, unverified).
    if (m.m500_msun && m.redshift) {
      const double r500 = cosmology.r500_kpc_from_m500(*m.m500_msun, *m.redshift);
      const cells::GasComposition comp(emission::abundance_set(m.abundance_set));
      double mgas = 0;
      for (const auto& c : m.components) mgas += cells::ComponentProfile(c, comp).gas_mass_msun(r500);
      const double fgas = mgas / *m.m500_msun;
      INFO("R500 = " << r500 << " kpc, f_gas = " << fgas);
      CHECK(fgas > 0.05);
      CHECK(fgas < 0.16);
      CHECK(r500 > 450.0);
      CHECK(r500 < 1450.0);
    }
  }
}

TEST_CASE("a model can be embedded in another settings file", "[config][synth]") {
  std::string text = "target: x\nmodel:\n";
  std::string indented;
  for (char c : std::string(kMinimal)) {
    if (indented.empty() || indented.back() == '\n') indented += "  ";
    indented += c;
  }
  const auto f = SettingsFile::parse(text + indented, "run.yaml");
  f.root().text("target");
  const auto m = config::read_cluster_model(f.root().child("model"));
  f.finish();
  CHECK(m.name == "t");
  CHECK(m.components[0].density.beta.r_c_kpc == 120.0);
  // Defaults of the minimal model.
  CHECK(m.seed == 1);
  CHECK(m.k_neighbours == 48);
  CHECK(m.abundance_set == "anders_grevesse_1989");
  CHECK(m.components[0].metallicity.kind == cells::MetallicityKind::Constant);
  CHECK(m.components[0].metallicity.Z_solar == 0.3);
  CHECK_FALSE(m.redshift.has_value());
  // Errors inside carry the embedding path.
  const auto bad = SettingsFile::parse(text + replace(indented, "beta: 0.7", "beta: 0.2"), "run.yaml");
  const std::string msg = config_error([&] { config::read_cluster_model(bad.root().child("model")); });
  CHECK(msg.find("model.components[0].density.beta") != std::string::npos);
}

TEST_CASE("bad synth models give ConfigError naming the key", "[config][synth]") {
  const std::string ok(kMinimal);
  CHECK_NOTHROW(parse_model(ok));
  struct Case {
    std::string from, to, expect;
  };
  const std::vector<Case> cases = {
      {"beta: 0.7", "beta: 0.3333", "components[0].density.beta: value 0.3333 out of range (expected > 0.333"},
      {"kT_keV: 4", "kT_keV: -2", "components[0].temperature.kT_keV: value -2 out of range"},
      {"n_particles: 1000", "n_particles: 0", "n_particles: value 0 out of range (expected in [100,"},
      {"r_c_kpc: 120", "r_core_kpc: 120", "components[0].density.r_c_kpc: missing required key"},
      {"profile: beta", "profile: betta", "did you mean 'beta'"},
      {"n_e0_cm3: 4e-3", "n_e0_cm3: 4e-3\n      gas_mass_msun: 1e13\n      gas_mass_radius_kpc: 500",
       "components[0].density.n_e0_cm3: give either n_e0_cm3 or gas_mass_msun"},
      {"n_e0_cm3: 4e-3", "gas_mass_msun: 1e13\n      gas_mass_radius_kpc: 2000",
       "components[0].density.gas_mass_radius_kpc: value 2000 exceeds the truncation radius"},
      {"n_e0_cm3: 4e-3", "", "components[0].density.n_e0_cm3: missing normalisation"},
      {"n_particles: 1000", "n_particles: 1000\nk_neighbours: 1000", "k_neighbours: value 1000 must be smaller"},
      {"n_particles: 1000", "n_particles: 1000\nabundance_set: solar", "abundance_set: 'solar' is not a valid choice"},
      {"r_max_kpc: 1500", "r_max_kpc: 1500\n    offset_kpc: [1, 2]", "components[0].offset_kpc: expected 3 numbers"},
      {"kT_keV: 4", "kT_keV: 4\n    metallicity:\n      Z_solar: -0.1", "components[0].metallicity.Z_solar"},
  };
  for (const auto& c : cases) {
    INFO(c.from << " -> " << c.to);
    const std::string msg = config_error([&] { parse_model(replace(ok, c.from, c.to)); });
    CHECK(msg.find(c.expect) != std::string::npos);
    CHECK(msg.find("model.yaml:") == 0);
  }
  // Unknown keys: rejected by finish() with the nearest valid key.
  const std::string unknown = config_error([&] { parse_model(replace(ok, "beta: 0.7", "beta: 0.7\n      r_cc_kpc: 9")); });
  CHECK(unknown.find("unknown key 'components[0].density.r_cc_kpc'") != std::string::npos);
  CHECK(unknown.find("did you mean 'r_c_kpc'") != std::string::npos);
  // Keys of another profile are unknown here (n0_cm3 belongs to vikhlinin06).
  const std::string other = config_error([&] { parse_model(replace(ok, "beta: 0.7", "beta: 0.7\n      alpha: 1")); });
  CHECK(other.find("unknown key 'components[0].density.alpha'") != std::string::npos);
  // Duplicate component names.
  const std::string two = ok + replace(ok.substr(ok.find("  - name: c")), "name: c", "name: c");
  const std::string dup = config_error([&] { parse_model(two); });
  CHECK(dup.find("components[1].name: duplicate component name 'c'") != std::string::npos);
  // V06 normalisation keys.
  const std::string v06 = replace(replace(ok, "profile: beta", "profile: vikhlinin06"), "n_e0_cm3: 4e-3",
                                  "gas_mass_msun: 1e13\n      gas_mass_radius_kpc: 800\n      n02_cm3: 0.01");
  CHECK(config_error([&] { parse_model(v06); }).find("density.n02_cm3: with gas_mass_msun give the ratio n02_over_n0") !=
        std::string::npos);
  const std::string eps = replace(replace(ok, "profile: beta", "profile: vikhlinin06"), "n_e0_cm3: 4e-3",
                                  "n0_cm3: 4e-3\n      epsilon: 2");
  CHECK(config_error([&] { parse_model(eps); }).find("density.r_s_kpc: missing required key") != std::string::npos);
  // A missing file.
  CHECK(!config_error([] { config::load_cluster_model("/nonexistent/model.yaml"); }).empty());
}
