#include "icmscope/morphology/classification.hpp"

#include <cmath>

#include "icmscope/core/errors.hpp"

namespace icmscope::morphology {

const std::vector<std::string>& preset_names() {
  static const std::vector<std::string> names = {"cassano2010",  "w_two_class",    "w_three_class",
                                                 "p3_two_class", "p3_three_class", "santos2008"};
  return names;
}

ClassificationScheme classification_preset(const std::string& name) {
  ClassificationScheme s;
  s.name = name;
  const std::vector<std::string> rd = {"relaxed", "disturbed"};
  const std::vector<std::string> rid = {"relaxed", "intermediate", "disturbed"};
  if (name == "cassano2010") {
    s.source = "Cassano et al. 2010, ApJL 721, L82";
    s.verified = false;
    s.note = "thresholds from memory, unverified; combination rule is a project convention";
    s.rules = {{"c", "100/500 kpc", RelaxedSide::above, {0.2}},
               {"w", "500 kpc", RelaxedSide::below, {0.012}},
               {"P3/P0", "500 kpc", RelaxedSide::below, {1.2e-7}}};
    s.combination = Combination::unanimous;
    s.classes = rid;
  } else if (name == "w_two_class") {
    s.source = "Pratt et al. 2009; Boehringer et al. 2010, A&A 514, A32";
    s.verified = true;
    s.rules = {{"w", "R500", RelaxedSide::below, {0.01}}};
    s.classes = rd;
  } else if (name == "w_three_class") {
    s.source = "project convention from the typical w ranges of morphology.md sec. 2";
    s.verified = false;
    s.note = "not a published three-class cut";
    s.rules = {{"w", "R500", RelaxedSide::below, {0.005, 0.01}}};
    s.classes = rid;
  } else if (name == "p3_two_class") {
    s.source = "Weissmann et al. 2013, A&A 549, A19; Boehringer et al. 2010";
    s.verified = true;
    s.rules = {{"P3/P0", "R500", RelaxedSide::below, {1e-7}}};
    s.classes = rd;
  } else if (name == "p3_three_class") {
    s.source = "Weissmann et al. 2013, A&A 549, A19";
    s.verified = true;
    s.rules = {{"P3/P0", "R500", RelaxedSide::below, {1e-8, 5e-7}}};
    s.classes = rid;
  } else if (name == "santos2008") {
    s.source = "Santos et al. 2008, A&A 483, 35";
    s.verified = false;
    s.note = "class limits from memory, unverified";
    s.rules = {{"c", "40/400 kpc", RelaxedSide::above, {0.075, 0.155}}};
    s.classes = {"strong cool core", "moderate cool core", "non-cool-core"};
  } else {
    std::string list;
    for (const auto& n : preset_names()) list += (list.empty() ? "" : ", ") + n;
    throw core::ConfigError("classification preset '" + name + "' is unknown; expected one of: " + list);
  }
  return s;
}

int rule_class(const ThresholdRule& r, double v) {
  int k = 0;
  if (r.relaxed == RelaxedSide::below) {
    for (double c : r.cuts) k += (v >= c) ? 1 : 0;
  } else {
    for (double c : r.cuts) k += (v <= c) ? 1 : 0;
  }
  return k;
}

int scheme_class(const ClassificationScheme& s, const std::vector<double>& values) {
  switch (s.combination) {
    case Combination::single: return rule_class(s.rules.at(0), values.at(0));
    case Combination::unanimous: {
      int relaxed = 0;
      for (std::size_t i = 0; i < s.rules.size(); ++i) relaxed += rule_class(s.rules[i], values[i]) == 0 ? 1 : 0;
      if (relaxed == static_cast<int>(s.rules.size())) return 0;
      if (relaxed == 0) return 2;
      return 1;
    }
    case Combination::majority: {
      int relaxed = 0;
      for (std::size_t i = 0; i < s.rules.size(); ++i) relaxed += rule_class(s.rules[i], values[i]) == 0 ? 1 : 0;
      return 2 * relaxed > static_cast<int>(s.rules.size()) ? 0 : 1;
    }
  }
  return 0;
}

ClassResult classify(const std::vector<NamedEstimate>& values, const ClassificationScheme& s) {
  ClassResult r;
  r.scheme = s.name;
  r.verified = s.verified;
  r.classes = s.classes;
  if (s.rules.empty()) {
    r.reason = "scheme has no rules";
    return r;
  }
  std::vector<const Estimate*> est;
  for (const auto& rule : s.rules) {
    const NamedEstimate* e = find_estimate(values, rule.indicator, rule.aperture);
    if (!e) {
      r.reason = "indicator " + rule.indicator + " (" + rule.aperture + ") was not measured";
      return r;
    }
    const double v = std::isfinite(e->value.corrected) ? e->value.corrected : e->value.raw;
    if (!std::isfinite(v)) {
      r.reason = "indicator " + rule.indicator + " (" + rule.aperture + ") is not finite";
      return r;
    }
    est.push_back(&e->value);
  }
  std::vector<double> v(est.size());
  for (std::size_t i = 0; i < est.size(); ++i)
    v[i] = std::isfinite(est[i]->corrected) ? est[i]->corrected : est[i]->raw;
  r.available = true;
  r.label = s.classes.at(static_cast<std::size_t>(scheme_class(s, v)));
  const std::size_t n = est[0]->samples.size();
  bool same = n > 0;
  for (const Estimate* e : est) same = same && e->samples.size() == n && std::isfinite(e->mean);
  if (!same) return r;
  r.probability.assign(s.classes.size(), 0.0);
  std::size_t used = 0;
  for (std::size_t k = 0; k < n; ++k) {
    bool ok = true;
    for (std::size_t i = 0; i < est.size(); ++i) {
      v[i] = est[i]->sample_corrected(k);
      ok = ok && std::isfinite(v[i]);
    }
    if (!ok) continue;
    r.probability[static_cast<std::size_t>(scheme_class(s, v))] += 1.0;
    ++used;
  }
  if (used > 0)
    for (double& p : r.probability) p /= static_cast<double>(used);
  return r;
}

}  // namespace icmscope::morphology
