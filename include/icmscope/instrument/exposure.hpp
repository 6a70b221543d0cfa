#pragma once
// Exposure maps on a sky grid (physics.md section 8):
//   exposure_s(x)      = t_live <mask(x - d)>_d                         [s]
//   exposure_cm2_s(x)  = t_live <mask(x - d) A_band V_band(theta(x - d))>_d  [cm^2 s]
// averaged over the dither offsets d, with the band-averaged area
//   A_band = Int S A dE / Int S dE  and  V_band(theta) = Int S A V dE / Int S A dE
// for a photon spectrum S over [e_min, e_max] (flat when not given). The
// instantaneous map is computed on a grid padded by the dither reach, smeared
// by the dither kernel and cropped, so the map edges are right.
#include "icmscope/core/image.hpp"
#include "icmscope/instrument/detector.hpp"
#include "icmscope/instrument/effective_area.hpp"
#include "icmscope/instrument/pointing.hpp"
#include "icmscope/instrument/vignetting.hpp"

namespace icmscope::instrument {

struct ExposureSettings {
  double exposure_s = 1.0e4;      // on-time
  double dead_fraction = 0.0;     // live time = exposure_s (1 - dead_fraction)
  double e_min_keV = 0.5;         // band for A_band and V_band
  double e_max_keV = 2.0;
  int subpixel = 4;               // mask samples per pixel side
  int n_theta = 256;              // V_band table nodes over the grid's off-axis range
  int n_energy = 128;             // band integration samples
  DitherSettings dither;
};

struct ExposureMaps {
  core::ImageD exposure_s;        // unit "s"
  core::ImageD exposure_cm2_s;    // unit "cm**2 s"
  double band_area_cm2 = 0.0;     // A_band (on axis)
  double live_time_s = 0.0;
};

// Maps on the shape and anchor of `grid`. DomainError naming the field for a
// non-positive exposure, a dead fraction outside [0, 1), an empty band.
ExposureMaps make_exposure_maps(const core::ImageD& grid, const Detector& detector, const Pointing& pointing,
                                const EffectiveArea& area, const Vignetting& vignetting,
                                const ExposureSettings& settings, const SpectrumFn& spectrum = {});

// Off-axis angle (arcmin) of every pixel centre of `grid` from the pointing axis.
core::ImageD off_axis_map(const core::ImageD& grid, const Pointing& pointing);

}  // namespace icmscope::instrument
