#pragma once
// Standard normal deviates by the ziggurat method (Marsaglia & Tsang 2000,
// J. Stat. Softw. 5(8); 256 layers, R = 3.6541528853610088): one 64-bit draw
// for ~99% of the deviates, exact tails. Tables are built once (immutable).
#include "icmscope/core/random.hpp"

namespace icmscope::instrument {

double standard_normal(core::RandomStream& rng);

}  // namespace icmscope::instrument
