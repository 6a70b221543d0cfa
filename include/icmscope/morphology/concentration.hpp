#pragma once
// Surface-brightness concentration c_SB = F(<r1) / F(<r2) with exact
// pixel-circle overlap weights (apertures.hpp). Conventions (morphology.md
// sec. 1): Santos et al. 2008 40/400 kpc; Cassano et al. 2010 100/500 kpc;
// scaled 0.1/1 R500 (e.g. Lovisari et al. 2017). The caller converts the
// apertures to pixels; the label records the convention.
#include <string>

#include "icmscope/core/image.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

enum class ConcentrationConvention { santos2008_40_400kpc, cassano2010_100_500kpc, scaled_0p1_1_r500, custom };
// "40/400 kpc", "100/500 kpc", "0.1/1 R500", "custom".
const char* concentration_label(ConcentrationConvention c);

struct ConcentrationSettings {
  double r1_px = 0.0;  // inner aperture radius [pixels]
  double r2_px = 0.0;  // outer aperture radius [pixels]
  ConcentrationConvention convention = ConcentrationConvention::custom;
  std::string label;   // aperture label used in Indicators (defaults to concentration_label)
  CentreChoice centre = CentreChoice::peak;  // Santos et al. 2008: the smoothed-image peak
};

struct ConcentrationResult {
  double c = 0.0;
  double f1 = 0.0, f2 = 0.0;  // F(<r1), F(<r2) in image units
  bool inside_image = true;   // false if the r2 circle leaves the image
};

// c about the centre (cx, cy) [pixels].
// prefix (optional): row prefix sums of flux (apertures.hpp), for speed.
struct RowPrefix;
ConcentrationResult concentration(const core::ImageD& flux, PixelPoint centre, double r1_px, double r2_px,
                                  const RowPrefix* prefix = nullptr);

// Analytic c of a projected beta model (Cavaliere & Fusco-Femiano 1976;
// morphology.md sec. 9): [1 - (1 + r1^2/rc^2)^(3/2 - 3 beta)] / [1 - (1 + r2^2/rc^2)^(3/2 - 3 beta)],
// ln-ratio limit at beta = 1/2. r1, r2, rc in the same unit.
double beta_model_concentration(double beta, double rc, double r1, double r2);

}  // namespace icmscope::morphology
