#pragma once
// Refilling masked holes (point sources, chip gaps, zero exposure) from the
// local annulus mean [M, common practice]. For a bad pixel p at Euclidean
// distance d from the nearest good pixel, the local annulus is the set of good
// pixels q with d <= |q - p| <= d + width, width = max(min_width_px, d) (doubled
// until it holds min_pixels good pixels). For a round point-source hole of
// radius r this is the annulus r..2r around the source at its centre and a thin
// ring at its edge; for a strip (chip gap) it reaches both sides. Holes farther
// than max_distance_px from good data stay unfilled (weight 0, reported).
// The raw measurement uses the mean; re-Poissonised realisations draw Poisson
// counts from it (realisations.hpp).
#include <cstddef>
#include <cstdint>
#include <vector>

namespace icmscope::morphology {

enum class RefillMethod { none, local_annulus };

struct RefillSettings {
  RefillMethod method = RefillMethod::local_annulus;
  double min_width_px = 2.0;
  int min_pixels = 8;
  double max_distance_px = 24.0;
};

// Fill values of the bad pixels of one grid, from several planes at once.
struct RefillResult {
  std::vector<std::size_t> index;            // bad pixels that were filled
  std::vector<std::vector<double>> values;   // values[plane][j] = local mean of plane at index[j]
  std::vector<std::size_t> unfilled;         // bad pixels left empty
  std::size_t n_bad = 0;
};

// Exact Euclidean distance from every pixel to the nearest pixel with good != 0
// (Felzenszwalb & Huttenlocher 2012, Theory of Computing 8, 415); 0 on good
// pixels, +inf if there is none.
std::vector<double> distance_to_good(const std::vector<std::uint8_t>& good, int nx, int ny);

// Local annulus means of each plane (nx * ny values) at the bad pixels.
RefillResult local_annulus_refill(const std::vector<std::uint8_t>& good, int nx, int ny,
                                  const std::vector<const std::vector<double>*>& planes,
                                  const RefillSettings& s);

}  // namespace icmscope::morphology
