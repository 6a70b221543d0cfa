// OGIP effective-area (ARF) reader, CAL/GEN/92-002.
#include <cmath>
#include <string>

#include "io/detail/ogip_table.hpp"
#include "icmscope/io/ogip.hpp"

namespace icmscope::io {


instrument::EffectiveArea read_arf(const std::string& path) {
  detail::OgipTable t(path);
  if (!t.move_to({"SPECRESP"})) t.fail("no SPECRESP extension (expected an OGIP effective-area file)");
  if (t.rows() < 1) t.fail("no rows, expected an effective-area curve");
  const int clo = t.column("ENERG_LO"), chi = t.column("ENERG_HI"), ca = t.column("SPECRESP");
  detail::require_kev(t, clo);
  detail::require_kev(t, chi);
  const std::vector<double> lo = t.scalar_doubles(clo), hi = t.scalar_doubles(chi), a = t.scalar_doubles(ca);
  detail::check_energy_grid(t, clo, chi, lo, hi);
  for (std::size_t i = 0; i < a.size(); ++i)
    if (!std::isfinite(a[i]) || a[i] < 0)
      t.fail(ca, "row " + std::to_string(i + 1) + ": area " + detail::fmt(a[i]) + " cm^2, expected finite and >= 0");
  std::vector<double> edges(lo);
  edges.push_back(hi.back());
  try {
    return instrument::EffectiveArea::from_bins(std::move(edges), a, path);
  } catch (const core::DomainError& e) {
    t.fail(e.what());
  }
}

}  // namespace icmscope::io
