#include "icmscope/instrument/response_matrix.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {
std::string num(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}
}  // namespace

void ResponseRows::begin_row(double e_lo, double e_hi) {
  if (row_group_begin.empty()) row_group_begin.push_back(0);
  energ_lo_keV.push_back(e_lo);
  energ_hi_keV.push_back(e_hi);
  row_group_begin.push_back(group_first.size());
}

void ResponseRows::add_group(int first_index, const double* v, int n) {
  group_first.push_back(first_index);
  group_count.push_back(n);
  values.insert(values.end(), v, v + n);
  row_group_begin.back() = group_first.size();
}

void ResponseRows::add_dense_row(double e_lo, double e_hi, const std::vector<double>& dense) {
  begin_row(e_lo, e_hi);
  const int n = static_cast<int>(dense.size());
  int i = 0;
  while (i < n) {
    while (i < n && dense[i] == 0.0) ++i;
    if (i >= n) break;
    int j = i;
    while (j < n && dense[j] != 0.0) ++j;
    add_group(i, dense.data() + i, j - i);
    i = j;
  }
}

ResponseMatrix::ResponseMatrix(ResponseRows r, std::string origin) : origin_(std::move(origin)) {
  auto fail = [&](const std::string& what) { throw core::DomainError("response (" + origin_ + "): " + what); };
  const std::size_t ne = r.energ_lo_keV.size();
  if (ne == 0) fail("no energy bins, expected at least one");
  if (r.energ_hi_keV.size() != ne) fail("energ_hi_keV has a different length from energ_lo_keV");
  if (r.row_group_begin.size() != ne + 1) fail("row_group_begin has the wrong length");
  if (r.n_channels <= 0) fail("n_channels = " + std::to_string(r.n_channels) + ", expected > 0");
  for (std::size_t i = 0; i < ne; ++i) {
    const double lo = r.energ_lo_keV[i], hi = r.energ_hi_keV[i];
    if (!std::isfinite(lo) || !std::isfinite(hi) || lo < 0.0 || !(hi > lo))
      fail("energy bin " + std::to_string(i) + " = [" + num(lo) + ", " + num(hi) +
           "] keV, expected 0 <= ENERG_LO < ENERG_HI");
    if (i > 0) {
      const double prev = r.energ_hi_keV[i - 1];
      if (!(lo >= r.energ_lo_keV[i - 1]) || std::fabs(lo - prev) > 1e-6 * std::max(1.0, std::fabs(prev)))
        fail("energy bin " + std::to_string(i) + " starts at " + num(lo) + " keV but bin " + std::to_string(i - 1) +
             " ends at " + num(prev) + " keV, expected increasing, contiguous bins");
    }
  }
  const std::size_t ng = r.group_first.size();
  if (r.group_count.size() != ng) fail("group_count has a different length from group_first");
  if (r.row_group_begin.front() != 0 || r.row_group_begin.back() != ng) fail("row_group_begin does not span the groups");
  std::size_t total = 0;
  for (std::size_t g = 0; g < ng; ++g) {
    const int f = r.group_first[g], c = r.group_count[g];
    if (f < 0 || c < 0 || f + c > r.n_channels)
      fail("group " + std::to_string(g) + " covers channel indices [" + std::to_string(f) + ", " +
           std::to_string(f + c) + "), expected inside [0, " + std::to_string(r.n_channels) + ")");
    total += static_cast<std::size_t>(c);
  }
  if (r.values.size() != total)
    fail("values has " + std::to_string(r.values.size()) + " entries, groups need " + std::to_string(total));
  for (std::size_t k = 0; k < total; ++k)
    if (!std::isfinite(r.values[k]) || r.values[k] < 0.0)
      fail("matrix value " + std::to_string(k) + " = " + num(r.values[k]) + ", expected finite and >= 0");
  if (!r.chan_e_min_keV.empty() || !r.chan_e_max_keV.empty()) {
    if (r.chan_e_min_keV.size() != static_cast<std::size_t>(r.n_channels) ||
        r.chan_e_max_keV.size() != static_cast<std::size_t>(r.n_channels))
      fail("EBOUNDS has " + std::to_string(r.chan_e_min_keV.size()) + " channels, expected " +
           std::to_string(r.n_channels));
    for (int j = 0; j < r.n_channels; ++j)
      if (!(r.chan_e_max_keV[j] >= r.chan_e_min_keV[j]))
        fail("EBOUNDS channel index " + std::to_string(j) + " has E_MAX < E_MIN");
  }
  lo_ = std::move(r.energ_lo_keV);
  hi_ = std::move(r.energ_hi_keV);
  ch_lo_ = std::move(r.chan_e_min_keV);
  ch_hi_ = std::move(r.chan_e_max_keV);
  rowg_ = std::move(r.row_group_begin);
  gfirst_ = std::move(r.group_first);
  gcount_ = std::move(r.group_count);
  val_ = std::move(r.values);
  n_channels_ = r.n_channels;
  first_channel_ = r.first_channel;
  goff_.resize(ng + 1);
  goff_[0] = 0;
  for (std::size_t g = 0; g < ng; ++g) goff_[g + 1] = goff_[g] + static_cast<std::size_t>(gcount_[g]);
  cdf_.resize(val_.size());
  rowsum_.assign(ne, 0.0);
  for (std::size_t i = 0; i < ne; ++i) {
    double s = 0.0;
    for (std::size_t k = goff_[rowg_[i]]; k < goff_[rowg_[i + 1]]; ++k) {
      s += val_[k];
      cdf_[k] = s;
    }
    rowsum_[i] = s;
  }
  // Guide table: 4 cells per energy bin, uniform in energy.
  const std::size_t G = 4 * ne;
  guide_.resize(G);
  guide_e0_ = lo_.front();
  guide_inv_de_ = static_cast<double>(G) / (hi_.back() - lo_.front());
  std::size_t row = 0;
  for (std::size_t g = 0; g < G; ++g) {
    const double e = guide_e0_ + static_cast<double>(g) / guide_inv_de_;
    while (row + 1 < ne && lo_[row + 1] <= e) ++row;
    guide_[g] = static_cast<std::uint32_t>(row);
  }
}

long ResponseMatrix::energy_row(double E) const {
  if (lo_.empty() || !(E >= lo_.front()) || !(E < hi_.back())) return -1;
  std::size_t g = static_cast<std::size_t>((E - guide_e0_) * guide_inv_de_);
  if (g >= guide_.size()) g = guide_.size() - 1;
  std::size_t r = guide_[g];
  while (r + 1 < lo_.size() && lo_[r + 1] <= E) ++r;
  while (r > 0 && lo_[r] > E) --r;  // rounding at a cell edge
  return static_cast<long>(r);
}

double ResponseMatrix::element(std::size_t row, int ch) const {
  for (std::size_t g = rowg_[row]; g < rowg_[row + 1]; ++g)
    if (ch >= gfirst_[g] && ch < gfirst_[g] + gcount_[g]) return val_[goff_[g] + static_cast<std::size_t>(ch - gfirst_[g])];
  return 0.0;
}

int ResponseMatrix::draw_channel(double E, double u) const {
  const long row = energy_row(E);
  if (row < 0) return -1;
  const std::size_t r = static_cast<std::size_t>(row);
  const double s = rowsum_[r];
  if (!(s > 0.0)) return -1;
  const std::size_t k0 = goff_[rowg_[r]], k1 = goff_[rowg_[r + 1]];
  const double target = u * s;
  // First value index whose cumulative sum exceeds the target.
  std::size_t k = static_cast<std::size_t>(std::upper_bound(cdf_.begin() + static_cast<long>(k0),
                                                            cdf_.begin() + static_cast<long>(k1), target) -
                                           cdf_.begin());
  if (k >= k1) k = k1 - 1;
  while (k > k0 && val_[k] == 0.0) --k;  // never land on an explicit zero (u*s rounding)
  // Group of value index k.
  const std::size_t g0 = rowg_[r], g1 = rowg_[r + 1];
  const std::size_t g = static_cast<std::size_t>(
      std::upper_bound(goff_.begin() + static_cast<long>(g0), goff_.begin() + static_cast<long>(g1), k) -
      goff_.begin()) - 1;
  return first_channel_ + gfirst_[g] + static_cast<int>(k - goff_[g]);
}

std::vector<double> ResponseMatrix::fold(const std::vector<double>& s) const {
  if (s.size() != lo_.size())
    throw core::DomainError("response (" + origin_ + "): fold got " + std::to_string(s.size()) +
                            " energy-bin values, expected " + std::to_string(lo_.size()));
  std::vector<double> out(static_cast<std::size_t>(n_channels_), 0.0);
  for (std::size_t i = 0; i < lo_.size(); ++i) {
    if (s[i] == 0.0) continue;
    for (std::size_t g = rowg_[i]; g < rowg_[i + 1]; ++g) {
      double* o = out.data() + gfirst_[g];
      const double* v = val_.data() + goff_[g];
      for (int c = 0; c < gcount_[g]; ++c) o[c] += s[i] * v[c];
    }
  }
  return out;
}

std::vector<double> ResponseMatrix::fold_spectrum(const SpectrumFn& flux, const EffectiveArea* arf, int n_sub) const {
  n_sub = std::max(1, n_sub);
  // An ARF on the matrix's own energy grid applies one area per bin (OGIP
  // convention, common practice when folding); otherwise it is interpolated.
  bool per_bin = false;
  if (arf) {
    std::vector<double> edges(lo_);
    edges.push_back(hi_.back());
    per_bin = arf->same_bins(edges);
  }
  std::vector<double> s(lo_.size(), 0.0);
  for (std::size_t i = 0; i < lo_.size(); ++i) {
    const double h = (hi_[i] - lo_[i]) / n_sub;
    double acc = 0.0;
    for (int k = 0; k < n_sub; ++k) {
      const double E = lo_[i] + (k + 0.5) * h;
      acc += flux(E) * (arf && !per_bin ? arf->at(E) : 1.0);
    }
    s[i] = acc * h * (per_bin ? arf->area_cm2()[i] : 1.0);
  }
  return fold(s);
}

int ResponseMatrix::channel_for_energy(double E) const {
  if (ch_lo_.empty()) return -1;
  for (int j = 0; j < n_channels_; ++j)  // EBOUNDS may be non-uniform; linear scan is fine for a lookup
    if (E >= ch_lo_[j] && E < ch_hi_[j]) return first_channel_ + j;
  return -1;
}

}  // namespace icmscope::instrument
