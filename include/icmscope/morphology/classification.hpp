#pragma once
// Dynamical-state classes from indicator thresholds. A cut is a labelling
// convention on a continuum (Yuan & Han 2020): report values and the
// probability of each class from the realisations.
// Presets (morphology.md sec. 8); `verified` tells whether the numbers are [V]
// in the reference or "from memory, unverified":
//   cassano2010     c(100/500 kpc) > 0.2, w(500 kpc) < 0.012, P3/P0(500 kpc) < 1.2e-7
//                   are the relaxed sides (Cassano et al. 2010, ApJL 721, L82) [M].
//                   Combination rule (ours): relaxed if all three are on the
//                   relaxed side, disturbed if all three are on the disturbed
//                   side, otherwise intermediate.
//   w_two_class     w(R500) < 0.01 relaxed (Pratt et al. 2009; Boehringer et al. 2010) [V].
//   w_three_class   w(R500): relaxed < 0.005 <= intermediate < 0.01 <= disturbed. A project
//                   convention derived from the typical ranges quoted in
//                   morphology.md sec. 2 (relaxed ~1e-3..5e-3, disturbed >~ 0.01), not a
//                   published three-class cut: unverified.
//   p3_two_class    P3/P0(R500) < 1e-7 relaxed (Weissmann et al. 2013; Boehringer et al. 2010) [V].
//   p3_three_class  P3/P0(R500): relaxed < 1e-8 <= intermediate < 5e-7 <= disturbed (Weissmann) [V].
//   santos2008      c(40/400 kpc): strong cool core > 0.155 >= moderate > 0.075 >= non-cool-core
//                   (Santos et al. 2008, A&A 483, 35) [M].
// A value equal to a cut falls on the disturbed side of it.
#include <string>
#include <vector>

#include "icmscope/morphology/realisations.hpp"

namespace icmscope::morphology {

enum class RelaxedSide { below, above };

struct ThresholdRule {
  std::string indicator;  // NamedEstimate::name ("c", "w", "P3/P0", ...)
  std::string aperture;   // NamedEstimate::aperture
  RelaxedSide relaxed = RelaxedSide::below;
  std::vector<double> cuts;  // increasing; k cuts -> k + 1 classes, relaxed side first
};

enum class Combination {
  single,     // one rule; classes = its k + 1 classes
  unanimous,  // two-class rules: all relaxed -> relaxed, all disturbed -> disturbed, else intermediate
  majority    // two-class rules: relaxed if more than half are relaxed, else disturbed
};

struct ClassificationScheme {
  std::string name;
  std::string source;   // publication
  bool verified = false;  // numbers [V] in morphology.md; false = "from memory, unverified"
  std::string note;
  std::vector<ThresholdRule> rules;
  Combination combination = Combination::single;
  std::vector<std::string> classes;  // relaxed side first
};

const std::vector<std::string>& preset_names();
// Throws ConfigError naming the valid presets for an unknown name.
ClassificationScheme classification_preset(const std::string& name);

// 0 = the relaxed-side class of the rule ... cuts.size() = the most disturbed.
int rule_class(const ThresholdRule& r, double value);
// Class of the scheme for the values of its rules (same order).
int scheme_class(const ClassificationScheme& s, const std::vector<double>& values);

struct ClassResult {
  std::string scheme;
  bool verified = false;
  bool available = false;
  std::string reason;                // why not available
  std::string label;                 // class of the corrected values
  std::vector<std::string> classes;
  std::vector<double> probability;   // fraction of realisations in each class (empty without realisations)
};

// Uses each indicator's corrected value (raw without realisations); class
// probabilities from sample_corrected(k) of the realisations.
ClassResult classify(const std::vector<NamedEstimate>& values, const ClassificationScheme& s);

}  // namespace icmscope::morphology
