#pragma once
// Photon asymmetry A_phot (Nurgaliev et al. 2013, ApJ 779, 112; algorithm as
// summarised in morphology.md sec. 5 [M]):
//  - photons: a pixel holding n counts gives n photons; their positions are
//    drawn uniformly within the pixel with an explicit random stream (breaks
//    angle ties; can be switched off, then photons sit at the pixel centre);
//  - annuli in R500 units (default 0.05-0.12, 0.12-0.2, 0.2-0.3, 0.3-1.0);
//  - per annulus Watson's U^2 of u = phi / 2 pi, N_k photons, B_k background
//    counts from the model (exact pixel-annulus overlap), C_k = N_k - B_k;
//  - d_k = (N_k / C_k^2) (U_k^2 - 1/12); A_phot = 100 sum C_k d_k / sum C_k
//    over the annuli with C_k > 0 and N_k >= 2.
// Photons are the raw counts (not exposure-corrected).
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

// Watson's U^2 (Watson 1961, Biometrika 48, 109) of values u in [0, 1):
//   U^2 = sum_j [u_(j) - (2j - 1)/(2N)]^2 + 1/(12N) - N (mean(u) - 1/2)^2.
// Sorts u in place. E[U^2] = 1/12 for uniform u at any N; U^2 = N/12 if all u
// are equal; invariant under rotation u -> (u + t) mod 1.
double watson_u2(std::vector<double>& u);

struct PhotonAsymmetrySettings {
  double r500_px = 0.0;  // R500 [pixels]
  std::vector<double> edges_r500 = {0.05, 0.12, 0.2, 0.3, 1.0};  // annulus edges [R500]
  bool jitter_within_pixel = true;
  CentreChoice centre = CentreChoice::centroid;
};

struct PhotonAnnulus {
  double r_in_px = 0.0, r_out_px = 0.0;
  double N = 0.0;   // photons
  double B = 0.0;   // expected background counts
  double C = 0.0;   // N - B
  double U2 = 0.0;  // Watson U^2
  double d = 0.0;   // (N / C^2)(U2 - 1/12)
  bool used = false;
};

struct PhotonAsymmetryResult {
  double A_phot = 0.0;
  std::vector<PhotonAnnulus> annuli;
  bool inside_image = true;
};

// Scratch buffers reused between calls (no allocation per realisation).
struct PhotonScratch {
  std::vector<std::vector<double>> u;
  std::vector<double> tmp;
};

// counts: photons per pixel (non-negative integers stored as double);
// bkg_counts: expected background counts per pixel (may be null = 0).
PhotonAsymmetryResult photon_asymmetry(const core::ImageD& counts, const core::ImageD* bkg_counts,
                                       PixelPoint centre, const PhotonAsymmetrySettings& s,
                                       core::RandomStream& rng, PhotonScratch& scratch);
PhotonAsymmetryResult photon_asymmetry(const core::ImageD& counts, const core::ImageD* bkg_counts,
                                       PixelPoint centre, const PhotonAsymmetrySettings& s,
                                       core::RandomStream& rng);

}  // namespace icmscope::morphology
