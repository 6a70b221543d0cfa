// OGIP redistribution-matrix (RMF) reader, CAL/GEN/92-002 and 92-002a.
#include <algorithm>
#include <cmath>
#include <string>

#include "io/detail/ogip_table.hpp"
#include "icmscope/io/ogip.hpp"

namespace icmscope::io {


instrument::ResponseMatrix read_rmf(const std::string& path, int extver) {
  using detail::fmt;
  instrument::ResponseRows r;

  // EBOUNDS first (optional): channel bounds and the first CHANNEL.
  long eb_first = 1;
  bool have_eb = false;
  {
    detail::OgipTable eb(path);
    if (eb.move_to({"EBOUNDS"})) {
      have_eb = true;
      const int cc = eb.column("CHANNEL"), cmin = eb.column("E_MIN"), cmax = eb.column("E_MAX");
      detail::require_kev(eb, cmin);
      detail::require_kev(eb, cmax);
      const std::vector<long> ch = eb.scalar_longs(cc);
      r.chan_e_min_keV = eb.scalar_doubles(cmin);
      r.chan_e_max_keV = eb.scalar_doubles(cmax);
      if (ch.empty()) eb.fail("no rows, expected one per channel");
      for (std::size_t i = 1; i < ch.size(); ++i)
        if (ch[i] != ch[i - 1] + 1)
          eb.fail(cc, "row " + std::to_string(i + 1) + ": channel " + std::to_string(ch[i]) + " after " +
                          std::to_string(ch[i - 1]) + ", expected consecutive channels");
      for (std::size_t i = 0; i < ch.size(); ++i)
        if (!(r.chan_e_max_keV[i] >= r.chan_e_min_keV[i]) || !std::isfinite(r.chan_e_min_keV[i]))
          eb.fail(cmax, "row " + std::to_string(i + 1) + ": E_MAX " + fmt(r.chan_e_max_keV[i]) + " keV below E_MIN " +
                            fmt(r.chan_e_min_keV[i]) + " keV");
      eb_first = ch.front();
    }
  }

  detail::OgipTable t(path);
  if (!t.move_to({"MATRIX", "SPECRESP MATRIX"}, extver))
    t.fail("no MATRIX or SPECRESP MATRIX extension" + (extver > 0 ? " with EXTVER = " + std::to_string(extver) : std::string()) +
           " (expected an OGIP redistribution matrix)");
  const long nrows = t.rows();
  if (nrows < 1) t.fail("no rows, expected one per energy bin");
  const int clo = t.column("ENERG_LO"), chi = t.column("ENERG_HI"), cng = t.column("N_GRP"), cfc = t.column("F_CHAN"),
            cnc = t.column("N_CHAN"), cm = t.column("MATRIX");
  detail::require_kev(t, clo);
  detail::require_kev(t, chi);
  const std::vector<double> lo = t.scalar_doubles(clo), hi = t.scalar_doubles(chi);
  detail::check_energy_grid(t, clo, chi, lo, hi);
  const std::vector<long> ngrp = t.scalar_longs(cng);

  long first = 1, tlmin = 0;
  if (t.key_long("TLMIN" + std::to_string(cfc), tlmin))
    first = tlmin;
  else if (have_eb)
    first = eb_first;
  if (have_eb && eb_first != first)
    t.fail(cfc, "TLMIN = " + std::to_string(first) + " but EBOUNDS starts at channel " + std::to_string(eb_first) +
                    "; expected the same first channel");
  long detchans = 0;
  const bool have_detchans = t.key_long("DETCHANS", detchans);
  if (have_detchans && detchans <= 0) t.fail("DETCHANS = " + std::to_string(detchans) + ", expected > 0");
  if (have_eb && have_detchans && static_cast<long>(r.chan_e_min_keV.size()) != detchans)
    t.fail("DETCHANS = " + std::to_string(detchans) + " but EBOUNDS has " + std::to_string(r.chan_e_min_keV.size()) +
           " channels");
  long nch = have_detchans ? detchans : (have_eb ? static_cast<long>(r.chan_e_min_keV.size()) : 0);

  std::vector<long> fch, nchv;
  std::vector<double> mv;
  struct Group {
    long f, n;
  };
  std::vector<std::vector<Group>> groups(static_cast<std::size_t>(nrows));
  std::vector<std::vector<double>> values(static_cast<std::size_t>(nrows));
  long max_index = 0;
  for (long row = 1; row <= nrows; ++row) {
    const std::string rs = "row " + std::to_string(row);
    const long ng = ngrp[static_cast<std::size_t>(row - 1)];
    if (ng < 0) t.fail(cng, rs + ": N_GRP = " + std::to_string(ng) + ", expected >= 0");
    if (ng == 0) continue;
    t.row_longs(cfc, row, fch);
    t.row_longs(cnc, row, nchv);
    if (static_cast<long>(fch.size()) < ng)
      t.fail(cfc, rs + ": " + std::to_string(fch.size()) + " values for N_GRP = " + std::to_string(ng));
    if (static_cast<long>(nchv.size()) < ng)
      t.fail(cnc, rs + ": " + std::to_string(nchv.size()) + " values for N_GRP = " + std::to_string(ng));
    long need = 0;
    auto& gv = groups[static_cast<std::size_t>(row - 1)];
    for (long g = 0; g < ng; ++g) {
      const long f = fch[static_cast<std::size_t>(g)] - first, n = nchv[static_cast<std::size_t>(g)];
      if (n < 0) t.fail(cnc, rs + ": N_CHAN = " + std::to_string(n) + ", expected >= 0");
      if (f < 0)
        t.fail(cfc, rs + ": F_CHAN = " + std::to_string(fch[static_cast<std::size_t>(g)]) + " below the first channel " +
                        std::to_string(first));
      if (nch > 0 && f + n > nch)
        t.fail(cnc, rs + ": group " + std::to_string(g + 1) + " reaches channel " + std::to_string(f + n - 1 + first) +
                        ", beyond the last channel " + std::to_string(nch - 1 + first));
      gv.push_back({f, n});
      need += n;
      max_index = std::max(max_index, f + n);
    }
    t.row_doubles(cm, row, mv);
    if (static_cast<long>(mv.size()) < need)
      t.fail(cm, rs + ": " + std::to_string(mv.size()) + " values, N_CHAN needs " + std::to_string(need));
    for (long k = 0; k < need; ++k) {
      const double v = mv[static_cast<std::size_t>(k)];
      if (!std::isfinite(v) || v < 0) t.fail(cm, rs + ": value " + fmt(v) + ", expected finite and >= 0");
    }
    values[static_cast<std::size_t>(row - 1)].assign(mv.begin(), mv.begin() + need);
  }
  if (nch == 0) nch = max_index;
  if (nch <= 0) t.fail("no DETCHANS, no EBOUNDS and no groups: cannot tell the number of channels");

  r.n_channels = static_cast<int>(nch);
  r.first_channel = static_cast<int>(first);
  for (long row = 0; row < nrows; ++row) {
    r.begin_row(lo[static_cast<std::size_t>(row)], hi[static_cast<std::size_t>(row)]);
    const auto& gv = groups[static_cast<std::size_t>(row)];
    const double* v = values[static_cast<std::size_t>(row)].data();
    for (const Group& g : gv) {
      if (g.n > 0) r.add_group(static_cast<int>(g.f), v, static_cast<int>(g.n));
      v += g.n;
    }
  }
  try {
    return instrument::ResponseMatrix(std::move(r), path + "[" + t.extname() + "]");
  } catch (const core::DomainError& e) {
    t.fail(e.what());
  }
}

}  // namespace icmscope::io
