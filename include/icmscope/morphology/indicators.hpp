#pragma once
// One entry point for all morphology indicators of one image:
//   Indicators measure(const MeasureInput&, const MeasureSettings&).
// Apertures are given in pixels per indicator (default_measure_settings builds
// the published conventions from kpc_per_pixel and R500). Pure function: no
// I/O; all randomness from RandomStream(seed, k) (k = realisation; the raw
// measurement and the hole refill use stream kRawStream), so results do not
// depend on the thread count.
//
// Processing order: flux image (input.hpp) -> peak on the unfilled image ->
// crop around the peak holding every aperture -> refill holes -> raw
// indicators -> realisations (realisations.hpp) measured by the same code ->
// estimates -> classes (classification.hpp).
//
// Values (NamedEstimate::name; aperture = the spec's label):
//   peak_x, peak_y, centroid_x, centroid_y  [input pixels, 0-based]; bias mode none
//   peak_centroid_offset [pixels], peak_centroid_offset_kpc (if kpc_per_pixel > 0),
//   peak_centroid_offset_r500 (if r500_px > 0)
//   c                          per concentration spec
//   w                          per centroid-shift spec [R_max units]
//   P0, P1/P0 .. P4/P0         per power-ratio spec; P2/P0_analytic .. P4/P0_analytic:
//                              analytic noise-bias corrected (morphology.md sec. 3)
//   A, A_raw                   rotational asymmetry with / without background term
//   A_phot                     photon asymmetry
//   gini, M20, S, ellipticity, pa_deg (east of north; bias mode none)
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/morphology/asymmetry.hpp"
#include "icmscope/morphology/centre.hpp"
#include "icmscope/morphology/centroid_shift.hpp"
#include "icmscope/morphology/classification.hpp"
#include "icmscope/morphology/concentration.hpp"
#include "icmscope/morphology/ellipticity.hpp"
#include "icmscope/morphology/gini_m20.hpp"
#include "icmscope/morphology/input.hpp"
#include "icmscope/morphology/photon_asymmetry.hpp"
#include "icmscope/morphology/power_ratios.hpp"
#include "icmscope/morphology/realisations.hpp"
#include "icmscope/morphology/refill.hpp"
#include "icmscope/morphology/smoothness.hpp"

namespace icmscope::morphology {

inline constexpr std::uint64_t kRawStream = 0xFFFFFFFFULL;

struct MeasureSettings {
  PeakSettings peak;                // smoothing sigma [pixels] and search radius
  // Realisations re-find the peak within this radius of the raw peak [pixels]
  // (0 = max(10, 5 sigma); < 0 = the same search as the raw measurement), and
  // start the asymmetry descent at the raw minimum.
  double realisation_peak_window_px = 0.0;
  double centroid_radius_px = 0.0;  // aperture of the reported centroid; 0 = largest aperture
  RefillSettings refill;
  std::vector<ConcentrationSettings> concentration;
  std::vector<CentroidShiftSettings> centroid_shift;
  std::vector<PowerRatioSettings> power_ratios;
  AsymmetrySettings asymmetry;               // radius_px = 0: off
  PhotonAsymmetrySettings photon_asymmetry;  // r500_px = 0: off
  GiniM20Settings gini_m20;                  // radius_px = 0: off
  SmoothnessSettings smoothness;             // radius_px = 0: off
  EllipticitySettings ellipticity;           // radius_px = 0: off
  // Weissmann et al. 2013 correct w linearly; linear under-corrects noise-dominated w
  // (realisations.hpp), so the default is the quadrature form.
  BiasMode w_bias = BiasMode::quadrature;
  int realisations = 100;
  std::uint64_t seed = 1;
  RealisationSource source = RealisationSource::observed;
  int threads = 0;                           // 0 = OpenMP default
  double r500_px = 0.0;                      // for offsets in R500 (0 = unknown)
  double low_counts_net = 1000.0;            // flag below this net count in the largest aperture
  double large_mask_fraction = 0.1;          // flag above this bad-pixel fraction in the largest aperture
  double edge_margin_px = 0.0;               // flag a peak closer to the edge; 0 = max(5, 3 sigma)
  double min_pixel_sn = 3.0;                 // flag a lower mean S/N per pixel for G / M20 (Lotz et al. 2004)
  std::vector<std::string> presets;          // classification presets to apply
  std::vector<ClassificationScheme> schemes; // user schemes to apply
};

// Published conventions in pixels: peak smoothing sigma 10 kpc (>= 1 pixel);
// concentration 40/400 kpc, 100/500 kpc and
// (r500_kpc > 0) 0.1/1 R500; w at 500 kpc (Cassano) and R500 (20 apertures to
// 0.05 R_max, core 30 kpc excluded); power ratios at 500 kpc and R500 (ln R in
// kpc); asymmetry, Gini/M20, smoothness, ellipticity at R500 (500 kpc without
// R500); photon asymmetry needs R500. Labels "40/400 kpc", "100/500 kpc",
// "0.1/1 R500", "500 kpc", "R500" (what the classification presets look up).
MeasureSettings default_measure_settings(double kpc_per_pixel, double r500_kpc);

struct MeasureFlags {
  bool low_counts = false;
  bool aperture_beyond_image = false;
  bool large_masked_fraction = false;
  bool centre_near_edge = false;
  bool unfilled_pixels = false;
  bool asymmetry_pairs_outside = false;
  bool low_pixel_sn = false;
  std::vector<std::string> notes;  // one line per raised flag, naming the aperture
};

struct Indicators {
  std::vector<NamedEstimate> values;
  MeasureFlags flags;
  std::vector<ClassResult> classes;
  // Raw details (input pixel coordinates).
  PeakResult peak;
  CentroidResult centroid;
  std::vector<ConcentrationResult> concentration;
  std::vector<CentroidShiftResult> centroid_shift;
  std::vector<PowerRatioResult> power_ratios;
  AsymmetryResult asymmetry;
  PhotonAsymmetryResult photon_asymmetry;
  GiniM20Result gini_m20;
  SmoothnessResult smoothness;
  EllipticityResult ellipticity;
  double net_counts = 0.0;       // sum of I in the largest aperture
  double masked_fraction = 0.0;  // bad-pixel area fraction in the largest aperture
  double mean_pixel_sn = 0.0;    // mean I / sqrt(var) over the Gini/M20 aperture
  int crop_x0 = 0, crop_y0 = 0, crop_nx = 0, crop_ny = 0;
  int realisations = 0;
  std::uint64_t seed = 0;
  RealisationSource source = RealisationSource::observed;

  const NamedEstimate* find(const std::string& name, const std::string& aperture = "") const {
    return find_estimate(values, name, aperture);
  }
};

Indicators measure(const MeasureInput& in, const MeasureSettings& s);

}  // namespace icmscope::morphology
