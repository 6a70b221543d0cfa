#include "icmscope/emission/abundances.hpp"

#include <cmath>
#include <sstream>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::emission {
namespace {

// Standard atomic weights [u], IUPAC conventional values (common practice).
struct Base {
  const char* sym;
  int Z;
  double A;
};
constexpr Base kBase[] = {
    {"H", 1, 1.008},      {"He", 2, 4.002602}, {"C", 6, 12.011},      {"N", 7, 14.007},  {"O", 8, 15.999},
    {"Ne", 10, 20.1797},  {"Na", 11, 22.98977}, {"Mg", 12, 24.305},   {"Al", 13, 26.98154}, {"Si", 14, 28.085},
    {"S", 16, 32.06},     {"Cl", 17, 35.45},   {"Ar", 18, 39.948},     {"Ca", 20, 40.078}, {"Cr", 24, 51.9961},
    {"Fe", 26, 55.845},   {"Ni", 28, 58.6934},
};
constexpr int kNElem = sizeof(kBase) / sizeof(kBase[0]);

AbundanceSet make_set(const char* name, const char* ref, const double* n_over_nH) {
  AbundanceSet s;
  s.name = name;
  s.reference = ref;
  for (int i = 0; i < kNElem; ++i) s.elements.push_back({kBase[i].sym, kBase[i].Z, kBase[i].A, n_over_nH[i]});
  return s;
}

std::string num(double v) {
  std::ostringstream os;
  os << v;
  return os.str();
}

}  // namespace

int AbundanceSet::index_of(int Z) const {
  for (std::size_t i = 0; i < elements.size(); ++i)
    if (elements[i].Z == Z) return static_cast<int>(i);
  return -1;
}

const AbundanceSet& anders_grevesse_1989() {
  // physics.md section 3 (from memory, unverified per element; X/Y/Z verified).
  static const double n[kNElem] = {1.0,     9.77e-2, 3.63e-4, 1.12e-4, 8.51e-4, 1.23e-4, 2.14e-6, 3.80e-5, 2.95e-6,
                                   3.55e-5, 1.62e-5, 1.88e-7, 3.63e-6, 2.29e-6, 4.84e-7, 4.68e-5, 1.78e-6};
  static const AbundanceSet s = make_set("ag89", "Anders & Grevesse 1989, GCA 53, 197", n);
  return s;
}

const AbundanceSet& asplund_2009() {
  // Asplund et al. 2009, ARA&A 47, 481, Table 1: log eps with H = 12.
  static const double logeps[kNElem] = {12.0, 10.93, 8.43, 7.83, 8.69, 7.93, 6.24, 7.60, 6.45,
                                        7.51, 7.12,  5.50, 6.40, 6.34, 5.64, 7.50, 6.22};
  static const AbundanceSet s = [] {
    double n[kNElem];
    for (int i = 0; i < kNElem; ++i) n[i] = std::pow(10.0, logeps[i] - 12.0);
    return make_set("a09", "Asplund, Grevesse, Sauval & Scott 2009, ARA&A 47, 481", n);
  }();
  return s;
}

std::vector<std::string> abundance_set_names() {
  return {"ag89", "anders_grevesse_1989", "a09", "asplund_2009"};
}

const AbundanceSet& abundance_set(const std::string& name) {
  if (name == "ag89" || name == "anders_grevesse_1989") return anders_grevesse_1989();
  if (name == "a09" || name == "asplund_2009") return asplund_2009();
  throw core::DomainError("abundance set '" + name +
                          "' is unknown; expected one of ag89, anders_grevesse_1989, a09, asplund_2009");
}

AbundanceSet hydrogen_helium(double X) {
  if (!std::isfinite(X) || X <= 0.0 || X > 1.0)
    throw core::DomainError("hydrogen_helium: hydrogen mass fraction X must be in (0, 1], got " + num(X));
  AbundanceSet s;
  s.name = "HHe(X=" + num(X) + ")";
  s.reference = "hydrogen and helium only";
  const double yHe = (1.0 - X) / X * kBase[0].A / kBase[1].A;
  s.elements.push_back({kBase[0].sym, 1, kBase[0].A, 1.0});
  s.elements.push_back({kBase[1].sym, 2, kBase[1].A, yHe});
  return s;
}

double scaled_abundance(const AbundanceSet& set, std::size_t i, double Z_solar) {
  const Element& e = set.elements[i];
  return e.Z > 2 ? Z_solar * e.n_over_nH : e.n_over_nH;
}

PlasmaComposition composition(const AbundanceSet& set, double Z_solar) {
  if (!std::isfinite(Z_solar) || Z_solar < 0.0)
    throw core::DomainError("composition: metallicity Z_solar must be finite and >= 0, got " + num(Z_solar));
  if (set.elements.empty() || set.elements[0].Z != 1)
    throw core::DomainError("composition: abundance set '" + set.name + "' must start with hydrogen");
  namespace k = core::constants;
  double ne = 0, ni = 0, mH = 0, mHe = 0, mZ = 0, z2 = 0;
  for (std::size_t i = 0; i < set.elements.size(); ++i) {
    const Element& e = set.elements[i];
    const double a = scaled_abundance(set, i, Z_solar);
    ne += e.Z * a;
    ni += a;
    z2 += static_cast<double>(e.Z) * e.Z * a;
    const double m = a * e.atomic_weight;
    (e.Z == 1 ? mH : e.Z == 2 ? mHe : mZ) += m;
  }
  const double mtot_u = mH + mHe + mZ;  // mass per H nucleus in u
  PlasmaComposition c;
  c.ne_over_nH = ne;
  c.ni_over_nH = ni;
  c.sum_Z2_ni_over_nH = z2;
  c.X = mH / mtot_u;
  c.Y = mHe / mtot_u;
  c.Zmet = mZ / mtot_u;
  c.mass_per_H_g = mtot_u * k::m_u_g;
  const double m_over_mp = c.mass_per_H_g / k::m_p_g;
  c.mu = m_over_mp / (ne + ni);
  c.mu_e = m_over_mp / ne;
  return c;
}

}  // namespace icmscope::emission
