#pragma once
// Galactic photoelectric absorption, Morrison & McCammon 1983 (ApJ 270, 119),
// Table 2: cross-section per H atom of the interstellar medium (solar
// abundances of their time, gas + grains),
//   sigma(E) = (c0 + c1 E + c2 E^2) E^-3 * 1e-24 cm^2,  E in keV, 14 rows, 0.03-10 keV.
// The c2 of the 4.038-7.111 keV row is taken as +0.75 (the sign differs between
// transcriptions; +0.75 gives the upward jump at the Ca K edge).
//
// Outside the published range (documented choices):
//  - E < 0.03 keV: sigma is clamped to sigma(0.03 keV) = 1.24e-18 cm^2, so any
//    column above ~1e19 cm^-2 is opaque there (the true cross-section is larger
//    still down to the H edge; nothing is observed there through the Galaxy);
//  - E > 10 keV: the last row's polynomial is extrapolated (sigma ~ E^-2.9,
//    smooth, no further edges of consequence below ~ 30 keV).
// Transmission exp(-sigma N_H) with N_H the Galactic H column [cm^-2].
#include <array>

namespace icmscope::emission {

// Row boundaries of the table [keV] (absorption edges: C, N, O, Ne, Mg, Si, S, Ar, Ca, Fe, ...).
// The cross-section jumps at each interior boundary; integrators split there.
const std::array<double, 15>& mm83_edges_keV();

// Cross-section per H atom [cm^2] at observed energy E > 0 [keV]. At a row
// boundary the upper row applies (the value just above the edge).
double mm83_cross_section_cm2(double E_keV);

// Transmission exp(-sigma(E) N_H) for N_H >= 0 [cm^-2].
double mm83_transmission(double E_keV, double nH_cm2);

}  // namespace icmscope::emission
