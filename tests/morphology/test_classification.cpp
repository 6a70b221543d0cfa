// Threshold presets, class probabilities and the combined statistic M.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/classification.hpp"
#include "icmscope/morphology/combined.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

namespace {
NamedEstimate est(const std::string& name, const std::string& ap, double corrected, std::vector<double> samples = {}) {
  NamedEstimate e;
  e.name = name;
  e.aperture = ap;
  e.value = summarise(corrected, samples, BiasMode::none);
  return e;
}
}  // namespace

TEST_CASE("presets carry the thresholds and tags of morphology.md sec. 8", "[morphology][classification]") {
  const ClassificationScheme c = classification_preset("cassano2010");
  REQUIRE(c.rules.size() == 3);
  CHECK(c.rules[0].cuts[0] == 0.2);     // c(100/500 kpc) [M]
  CHECK(c.rules[1].cuts[0] == 0.012);   // w(500 kpc) [M]
  CHECK(c.rules[2].cuts[0] == 1.2e-7);  // P3/P0(500 kpc) [M]
  CHECK_FALSE(c.verified);
  CHECK(classification_preset("w_two_class").rules[0].cuts == std::vector<double>{0.01});  // [V]
  CHECK(classification_preset("w_two_class").verified);
  CHECK(classification_preset("p3_two_class").rules[0].cuts == std::vector<double>{1e-7});  // [V]
  CHECK(classification_preset("p3_three_class").rules[0].cuts == std::vector<double>{1e-8, 5e-7});  // [V]
  CHECK(classification_preset("p3_three_class").verified);
  CHECK(classification_preset("santos2008").rules[0].cuts == std::vector<double>{0.075, 0.155});  // [M]
  CHECK_FALSE(classification_preset("santos2008").verified);
  CHECK_FALSE(classification_preset("w_three_class").verified);
  for (const auto& n : preset_names()) CHECK_NOTHROW(classification_preset(n));
  CHECK_THROWS_AS(classification_preset("bogus"), core::ConfigError);
}

TEST_CASE("rule classes at and around the cuts", "[morphology][classification]") {
  ThresholdRule below{"P3/P0", "R500", RelaxedSide::below, {1e-8, 5e-7}};
  CHECK(rule_class(below, 5e-9) == 0);
  CHECK(rule_class(below, 1e-8) == 1);  // a value on a cut falls on the disturbed side
  CHECK(rule_class(below, 1e-7) == 1);
  CHECK(rule_class(below, 6e-7) == 2);
  ThresholdRule above{"c", "40/400 kpc", RelaxedSide::above, {0.075, 0.155}};
  CHECK(rule_class(above, 0.2) == 0);
  CHECK(rule_class(above, 0.155) == 1);
  CHECK(rule_class(above, 0.1) == 1);
  CHECK(rule_class(above, 0.05) == 2);
}

TEST_CASE("cassano2010: unanimous combination and class probabilities", "[morphology][classification]") {
  const ClassificationScheme s = classification_preset("cassano2010");
  // all relaxed
  std::vector<NamedEstimate> v = {est("c", "100/500 kpc", 0.3), est("w", "500 kpc", 0.005), est("P3/P0", "500 kpc", 1e-8)};
  CHECK(classify(v, s).label == "relaxed");
  v[1] = est("w", "500 kpc", 0.02);
  CHECK(classify(v, s).label == "intermediate");
  v = {est("c", "100/500 kpc", 0.1), est("w", "500 kpc", 0.02), est("P3/P0", "500 kpc", 1e-6)};
  CHECK(classify(v, s).label == "disturbed");
  // a missing indicator makes the class unavailable, with a reason
  v.pop_back();
  const ClassResult r = classify(v, s);
  CHECK_FALSE(r.available);
  CHECK(r.reason.find("P3/P0") != std::string::npos);
  // probabilities: samples placed on the corrected value (here: 4 samples, one across the cut)
  std::vector<NamedEstimate> p = {est("w", "R500", 0.008, {0.008, 0.008, 0.008, 0.016})};
  const ClassResult pr = classify(p, classification_preset("w_two_class"));
  REQUIRE(pr.probability.size() == 2);
  // mean of samples 0.01; sample_corrected = raw + (v - mean): 0.006 x3, 0.014
  CHECK(pr.probability[0] == Approx(0.75));
  CHECK(pr.probability[1] == Approx(0.25));
}

TEST_CASE("majority combination", "[morphology][classification]") {
  ClassificationScheme s = classification_preset("cassano2010");
  s.combination = Combination::majority;
  s.classes = {"relaxed", "disturbed"};
  const std::vector<NamedEstimate> v = {est("c", "100/500 kpc", 0.3), est("w", "500 kpc", 0.02),
                                        est("P3/P0", "500 kpc", 1e-8)};
  CHECK(classify(v, s).label == "relaxed");
}

TEST_CASE("combined statistic M (Rasia et al. 2013 form) with user medians", "[morphology][combined]") {
  // [D] each term is 0 at the relaxed median and 1 at the disturbed one; s = -1 for c.
  const std::vector<CombinedComponent> comps = {{"P3/P0", "R500", 1e-8, 1e-6, true},
                                                {"A", "R500", 0.1, 0.5, false},
                                                {"c", "0.1/1 R500", 0.4, 0.1, false}};
  std::vector<double> terms;
  CHECK(combined_m({1e-8, 0.1, 0.4}, comps, &terms) == Approx(0.0).margin(1e-14));
  CHECK(combined_m({1e-6, 0.5, 0.1}, comps) == Approx(1.0).epsilon(1e-14));
  // P3/P0 = 1e-7 is half way in log10; A = 0.3 half way; c = 0.25 half way.
  CHECK(combined_m({1e-7, 0.3, 0.25}, comps, &terms) == Approx(0.5).epsilon(1e-12));
  REQUIRE(terms.size() == 3);
  CHECK(terms[2] == Approx(0.5));
  // c above the relaxed median gives a negative term (s = -1)
  combined_m({1e-8, 0.1, 0.55}, comps, &terms);
  CHECK(terms[2] == Approx(-0.5));
  CHECK_THROWS_AS(combined_m(std::vector<double>{1.0}, comps), core::DomainError);
  // From estimates, with samples propagated.
  const std::vector<NamedEstimate> v = {est("P3/P0", "R500", 1e-7, {1e-7, 1e-7}), est("A", "R500", 0.3, {0.3, 0.5}),
                                        est("c", "0.1/1 R500", 0.25, {0.25, 0.25})};
  const CombinedResult r = combined_m(v, comps);
  REQUIRE(r.available);
  CHECK(r.M.corrected == Approx(0.5).epsilon(1e-12));
  CHECK(r.M.samples.size() == 2);
  CHECK(r.M.samples[1] == Approx((0.5 + 1.0 + 0.5) / 3));
}
