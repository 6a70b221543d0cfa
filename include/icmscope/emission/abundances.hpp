#pragma once
// Solar abundance sets and the composition of a fully ionised plasma.
//
// Sets (number abundance relative to H):
//  - Anders & Grevesse 1989, GCA 53, 197 ("ag89"): values of physics.md section 3
//    (from memory, unverified element by element; the resulting X/Y/Z =
//    0.7066/0.2741/0.0193 matches the published 0.7065/0.2741/0.0194).
//  - Asplund, Grevesse, Sauval & Scott 2009, ARA&A 47, 481, Table 1 ("a09"):
//    photospheric log eps (H = 12).
// Both carry the 17 elements H, He, C, N, O, Ne, Na, Mg, Al, Si, S, Cl, Ar, Ca,
// Cr, Fe, Ni. Atomic weights are the IUPAC standard (conventional) atomic
// weights in atomic mass units (common practice).
//
// Metallicity: Z (in solar units of the set) multiplies every element heavier
// than He; He stays at the set's solar value; H is the reference.
#include <cstddef>
#include <string>
#include <vector>

namespace icmscope::emission {

struct Element {
  std::string symbol;      // "Fe"
  int Z = 1;               // atomic number (= charge when fully stripped)
  double atomic_weight;    // standard atomic weight [u]
  double n_over_nH;        // solar number abundance relative to H
};

struct AbundanceSet {
  std::string name;        // short identifier, e.g. "ag89"
  std::string reference;   // citation
  std::vector<Element> elements;  // elements[0] is H, elements[1] is He; metals follow

  // Index of the element with atomic number Z, or -1.
  int index_of(int Z) const;
};

// The built-in sets (immutable tables).
const AbundanceSet& anders_grevesse_1989();
const AbundanceSet& asplund_2009();
// Look up a built-in set by name: "ag89" / "anders_grevesse_1989", "a09" / "asplund_2009".
// Throws core::DomainError naming the unknown set and the valid names.
const AbundanceSet& abundance_set(const std::string& name);
// Names accepted by abundance_set().
std::vector<std::string> abundance_set_names();
// Hydrogen and helium only, with hydrogen mass fraction X (0 < X <= 1): for
// primordial-gas checks. Metallicity has no effect on this set.
AbundanceSet hydrogen_helium(double X);

// Composition of a fully ionised plasma (every element completely stripped).
struct PlasmaComposition {
  double ne_over_nH = 0.0;       // n_e / n_H
  double ni_over_nH = 0.0;       // n_ion / n_H (all nuclei, H included)
  double mu = 0.0;               // mean mass per particle (ions + electrons) in proton masses
  double mu_e = 0.0;             // mass per electron in proton masses
  double X = 0.0, Y = 0.0, Zmet = 0.0;  // H, He and metal mass fractions
  double sum_Z2_ni_over_nH = 0.0;  // sum_i Z_i^2 n_i / n_H (free-free weight)
  double mass_per_H_g = 0.0;     // rho / n_H [g]; electrons neglected (< 3e-4)
};

// Throws core::DomainError if Z_solar is negative or not finite.
PlasmaComposition composition(const AbundanceSet& set, double Z_solar);

// Number abundance of element index i relative to H at metallicity Z_solar.
double scaled_abundance(const AbundanceSet& set, std::size_t i, double Z_solar);

}  // namespace icmscope::emission
