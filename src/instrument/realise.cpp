#include "icmscope/instrument/realise.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <numeric>
#include <string>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {

[[noreturn]] void fail(const std::string& w) { throw core::DomainError("realise: " + w); }

// ln k! : table below 256, Stirling series of ln Gamma(k + 1) above.
double log_factorial(long k) {
  static const std::array<double, 256> table = [] {
    std::array<double, 256> t{};
    t[0] = 0.0;
    for (int i = 1; i < 256; ++i) t[i] = t[i - 1] + std::log(static_cast<double>(i));
    return t;
  }();
  if (k < 256) return table[static_cast<std::size_t>(k)];
  const double x = static_cast<double>(k) + 1.0, x2 = x * x;
  return (x - 0.5) * std::log(x) - x + 0.91893853320467274178 + 1.0 / (12.0 * x) - 1.0 / (360.0 * x * x2) +
         1.0 / (1260.0 * x * x2 * x2);
}

// Event-attribute stream of block b.
std::uint64_t event_stream(std::uint8_t component, std::size_t b) {
  return (std::uint64_t{1} << 32) + (static_cast<std::uint64_t>(component) << 24) + static_cast<std::uint64_t>(b);
}

// Margin that keeps a position strictly inside its pixel under rounding.
constexpr double kEdgeMargin = 1e-6;

}  // namespace

std::int32_t poisson_draw(core::RandomStream& rng, double lam) {
  if (!(lam > 0.0)) return 0;
  if (lam < 10.0) {
    // Inversion by sequential search.
    const double u = rng.uniform();
    double p = std::exp(-lam), F = p;
    std::int32_t k = 0;
    while (u > F && k < 1000) {
      ++k;
      p *= lam / k;
      F += p;
    }
    return k;
  }
  // PTRS, Hoermann (1993).
  const double slam = std::sqrt(lam), loglam = std::log(lam);
  const double b = 0.931 + 2.53 * slam;
  const double a = -0.059 + 0.02483 * b;
  const double invalpha = 1.1239 + 1.1328 / (b - 3.4);
  const double vr = 0.9277 - 3.6224 / (b - 2.0);
  const double log_invalpha = std::log(invalpha);
  for (;;) {
    const double U = rng.uniform() - 0.5;
    const double V = rng.uniform();
    const double us = 0.5 - std::fabs(U);
    const double kd = std::floor((2.0 * a / us + b) * U + lam + 0.43);
    if (us >= 0.07 && V <= vr) return static_cast<std::int32_t>(kd);
    if (kd < 0 || (us < 0.013 && V > us)) continue;
    const long k = static_cast<long>(kd);
    if (std::log(V) + log_invalpha - std::log(a / (us * us) + b) <= -lam + kd * loglam - log_factorial(k))
      return static_cast<std::int32_t>(k);
  }
}

CountsImage poisson_counts(const core::ImageD& expected, std::uint64_t seed) {
  if (expected.empty()) fail("the expected-counts image is empty");
  for (std::size_t i = 0; i < expected.size(); ++i) {
    const double v = expected.data()[i];
    if (!std::isfinite(v) || v > 2.0e9)
      fail("expected counts at pixel (" + std::to_string(i % expected.nx()) + ", " + std::to_string(i / expected.nx()) +
           ") = " + std::to_string(v) + ", expected finite and below 2e9");
  }
  const int nx = expected.nx(), ny = expected.ny();
  CountsImage c(nx, ny, 0);
  c.set_anchor(expected.anchor());
  c.set_unit("count");
  const int nb = (ny + kRowsPerBlock - 1) / kRowsPerBlock;
#pragma omp parallel for schedule(dynamic, 1)
  for (int b = 0; b < nb; ++b) {
    core::RandomStream rng(seed, static_cast<std::uint64_t>(b));
    const int y1 = std::min(ny, (b + 1) * kRowsPerBlock);
    for (int iy = b * kRowsPerBlock; iy < y1; ++iy) {
      const double* e = expected.data() + static_cast<std::size_t>(iy) * nx;
      std::int32_t* o = c.data() + static_cast<std::size_t>(iy) * nx;
      for (int ix = 0; ix < nx; ++ix) o[ix] = poisson_draw(rng, e[ix]);
    }
  }
  return c;
}

void EventList::reserve(std::size_t n) {
  x.reserve(n);
  y.reserve(n);
  energy_keV.reserve(n);
  pi.reserve(n);
  time_s.reserve(n);
  component.reserve(n);
}

void EventList::append(const EventList& o) {
  if (o.size() == 0) return;
  if (size() == 0 && nx == 0 && ny == 0) {
    nx = o.nx;
    ny = o.ny;
    anchor = o.anchor;
  }
  if (o.nx != nx || o.ny != ny)
    fail("appending events of a " + std::to_string(o.nx) + " x " + std::to_string(o.ny) + " grid to a " +
         std::to_string(nx) + " x " + std::to_string(ny) + " one");
  x.insert(x.end(), o.x.begin(), o.x.end());
  y.insert(y.end(), o.y.begin(), o.y.end());
  energy_keV.insert(energy_keV.end(), o.energy_keV.begin(), o.energy_keV.end());
  pi.insert(pi.end(), o.pi.begin(), o.pi.end());
  time_s.insert(time_s.end(), o.time_s.begin(), o.time_s.end());
  component.insert(component.end(), o.component.begin(), o.component.end());
}

namespace {
// One event as a record, for the permutation phase of the time sort (one
// cache line per event instead of six scattered columns).
struct EventRecord {
  double t, x, y;
  float e;
  std::int32_t pi;
  std::uint32_t order;  // position before sorting within the bucket (stability)
  std::uint8_t comp;
};
}  // namespace

void EventList::sort_by_time() {
  const std::size_t n = size();
  if (n < 2) return;
  if (n > 0xffffffffULL) fail("sort_by_time: more than 2^32 events");
  if (std::is_sorted(time_s.begin(), time_s.end())) return;
  // Two-level bucket sort, deterministic and stable: a counting pass places
  // every event as one record into at most 4096 time buckets of ~64k events
  // (keeping the original order within a bucket); each bucket is then sorted
  // in cache by a counting pass over ~4-event sub-buckets and an insertion sort
  // (stable_sort where times cluster), buckets in parallel; the records are
  // written back to the columns in order.
  const auto [mn, mx] = std::minmax_element(time_s.begin(), time_s.end());
  const double t0 = *mn, span = *mx - *mn;
  const std::size_t nb = std::clamp<std::size_t>(n / 65536, 1, 4096);
  const double scale = static_cast<double>(nb) / span;
  std::vector<std::size_t> start(nb + 1, 0);
  std::vector<std::uint32_t> bucket(n);
  for (std::size_t i = 0; i < n; ++i) {
    std::size_t b = static_cast<std::size_t>((time_s[i] - t0) * scale);
    if (b >= nb) b = nb - 1;
    bucket[i] = static_cast<std::uint32_t>(b);
    ++start[b + 1];
  }
  for (std::size_t b = 0; b < nb; ++b) start[b + 1] += start[b];
  std::vector<EventRecord> rec(n);
  {
    std::vector<std::size_t> fill(start.begin(), start.end() - 1);
    for (std::size_t i = 0; i < n; ++i) {
      const std::size_t b = bucket[i];
      const std::size_t k = fill[b]++;
      rec[k] = {time_s[i], x[i], y[i], energy_keV[i], pi[i], static_cast<std::uint32_t>(k - start[b]), component[i]};
    }
  }
  std::vector<std::uint32_t>().swap(bucket);
  const std::ptrdiff_t nbs = static_cast<std::ptrdiff_t>(nb);
#pragma omp parallel
  {
    std::vector<std::uint32_t> key;
    std::vector<std::size_t> sub, fillp;
    std::vector<EventRecord> tmp;
#pragma omp for schedule(dynamic, 1)
    for (std::ptrdiff_t b = 0; b < nbs; ++b) {
      const std::size_t b0 = start[b], m = start[b + 1] - start[b];
      if (m < 2) continue;
      EventRecord* r = rec.data() + b0;
      double tb0 = r[0].t, tb1 = r[0].t;
      for (std::size_t i = 1; i < m; ++i) {
        tb0 = std::min(tb0, r[i].t);
        tb1 = std::max(tb1, r[i].t);
      }
      const std::size_t ns = std::max<std::size_t>(1, m / 4);
      const double bscale = tb1 > tb0 ? static_cast<double>(ns) / (tb1 - tb0) : 0.0;
      sub.assign(ns + 1, 0);
      key.resize(m);
      for (std::size_t i = 0; i < m; ++i) {
        std::size_t k = static_cast<std::size_t>((r[i].t - tb0) * bscale);
        if (k >= ns) k = ns - 1;
        key[i] = static_cast<std::uint32_t>(k);
        ++sub[k + 1];
      }
      for (std::size_t k = 0; k < ns; ++k) sub[k + 1] += sub[k];
      tmp.resize(m);
      fillp.assign(sub.begin(), sub.end() - 1);
      for (std::size_t i = 0; i < m; ++i) tmp[fillp[key[i]]++] = r[i];
      auto less = [](const EventRecord& a, const EventRecord& c) { return a.t < c.t || (a.t == c.t && a.order < c.order); };
      for (std::size_t k = 0; k < ns; ++k) {
        EventRecord* s0 = tmp.data() + sub[k];
        const std::size_t len = sub[k + 1] - sub[k];
        if (len > 64) {  // clustered times: no quadratic insertion sort
          std::sort(s0, s0 + len, less);
          continue;
        }
        for (std::size_t a = 1; a < len; ++a) {
          const EventRecord v = s0[a];
          std::size_t c = a;
          while (c > 0 && less(v, s0[c - 1])) {
            s0[c] = s0[c - 1];
            --c;
          }
          s0[c] = v;
        }
      }
      std::copy(tmp.begin(), tmp.end(), r);
    }
  }
  const std::ptrdiff_t ns = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t i = 0; i < ns; ++i) {
    const EventRecord& q = rec[static_cast<std::size_t>(i)];
    time_s[i] = q.t;
    x[i] = q.x;
    y[i] = q.y;
    energy_keV[i] = q.e;
    pi[i] = q.pi;
    component[i] = q.comp;
  }
}

double gti_total_s(const std::vector<Gti>& gti) {
  if (gti.empty()) fail("gti is empty, expected at least one good time interval");
  double tot = 0.0;
  for (std::size_t i = 0; i < gti.size(); ++i) {
    const Gti& g = gti[i];
    if (!std::isfinite(g.start_s) || !std::isfinite(g.stop_s) || !(g.stop_s > g.start_s))
      fail("gti[" + std::to_string(i) + "] = [" + std::to_string(g.start_s) + ", " + std::to_string(g.stop_s) +
           "] s, expected start_s < stop_s");
    if (i > 0 && g.start_s < gti[i - 1].stop_s)
      fail("gti[" + std::to_string(i) + "] starts at " + std::to_string(g.start_s) + " s before gti[" +
           std::to_string(i - 1) + "] stops; expected increasing, non-overlapping intervals");
    tot += g.stop_s - g.start_s;
  }
  return tot;
}

EventList events_from_counts(const CountsImage& counts, const EnergyModel& em, const ChannelModel& ch,
                             const EventSettings& s, std::uint64_t seed) {
  if (counts.empty()) fail("the counts image is empty");
  const double total_time = gti_total_s(s.gti);
  if (!em.global && !(em.spectra && em.spectrum_index)) fail("no energy source: give a global spectrum or spectra with an index image");
  if (em.spectrum_index && !(em.spectrum_index->nx() == counts.nx() && em.spectrum_index->ny() == counts.ny()))
    fail("spectrum_index is " + std::to_string(em.spectrum_index->nx()) + " x " + std::to_string(em.spectrum_index->ny()) +
         ", expected the counts' " + std::to_string(counts.nx()) + " x " + std::to_string(counts.ny()));
  if (em.spectra && em.spectrum_index) {
    const long ns = static_cast<long>(em.spectra->size());
    for (std::size_t i = 0; i < em.spectrum_index->size(); ++i) {
      const long k = em.spectrum_index->data()[i];
      if (k >= ns || (k < 0 && !em.global))
        fail("spectrum_index at pixel " + std::to_string(i) + " = " + std::to_string(k) + ", expected 0 .. " +
             std::to_string(ns - 1) + (em.global ? " or < 0 for the global spectrum" : ""));
      if (k >= 0 && (*em.spectra)[static_cast<std::size_t>(k)].empty()) fail("spectra[" + std::to_string(k) + "] is empty");
    }
  }
  if (em.global && em.global->empty()) fail("the global spectrum is empty");
  if (!ch.rmf) ch.resolution.validate();
  std::vector<double> gti_cum(s.gti.size() + 1, 0.0);
  for (std::size_t i = 0; i < s.gti.size(); ++i) gti_cum[i + 1] = gti_cum[i] + (s.gti[i].stop_s - s.gti[i].start_s);

  const int nx = counts.nx(), ny = counts.ny();
  const int nb = (ny + kRowsPerBlock - 1) / kRowsPerBlock;
  std::vector<std::size_t> off(static_cast<std::size_t>(nb) + 1, 0);
  for (int b = 0; b < nb; ++b) {
    std::size_t n = 0;
    const std::size_t i0 = static_cast<std::size_t>(b) * kRowsPerBlock * nx;
    const std::size_t i1 = static_cast<std::size_t>(std::min(ny, (b + 1) * kRowsPerBlock)) * nx;
    for (std::size_t i = i0; i < i1; ++i) {
      const std::int32_t c = counts.data()[i];
      if (c < 0) fail("counts at pixel " + std::to_string(i) + " = " + std::to_string(c) + ", expected >= 0");
      n += static_cast<std::size_t>(c);
    }
    off[b + 1] = off[b] + n;
  }
  const std::size_t total = off.back();
  EventList ev;
  ev.nx = nx;
  ev.ny = ny;
  ev.anchor = counts.anchor();
  ev.x.resize(total);
  ev.y.resize(total);
  ev.energy_keV.resize(total);
  ev.pi.resize(total);
  ev.time_s.resize(total);
  ev.component.assign(total, s.component);

#pragma omp parallel for schedule(dynamic, 1)
  for (int b = 0; b < nb; ++b) {
    core::RandomStream rng(seed, event_stream(s.component, static_cast<std::size_t>(b)));
    std::size_t k = off[b];
    const int y1 = std::min(ny, (b + 1) * kRowsPerBlock);
    for (int iy = b * kRowsPerBlock; iy < y1; ++iy) {
      for (int ix = 0; ix < nx; ++ix) {
        const std::size_t pix = static_cast<std::size_t>(iy) * nx + ix;
        const std::int32_t c = counts.data()[pix];
        if (c == 0) continue;
        const SpectrumSampler* sp = em.global;
        if (em.spectrum_index) {
          const std::int32_t si = em.spectrum_index->data()[pix];
          if (si >= 0) sp = &(*em.spectra)[static_cast<std::size_t>(si)];
        }
        for (std::int32_t j = 0; j < c; ++j, ++k) {
          ev.x[k] = ix + 0.5 + kEdgeMargin + (1.0 - 2.0 * kEdgeMargin) * rng.uniform();
          ev.y[k] = iy + 0.5 + kEdgeMargin + (1.0 - 2.0 * kEdgeMargin) * rng.uniform();
          const double E = sp->draw(rng.uniform());
          ev.energy_keV[k] = static_cast<float>(E);
          ev.pi[k] = ch.rmf ? ch.rmf->draw_channel(E, rng) : ch.resolution.draw_channel(E, rng);
          const double t = rng.uniform() * total_time;
          std::size_t g = static_cast<std::size_t>(std::upper_bound(gti_cum.begin(), gti_cum.end(), t) - gti_cum.begin());
          g = std::clamp<std::size_t>(g, 1, s.gti.size()) - 1;
          ev.time_s[k] = std::min(s.gti[g].start_s + (t - gti_cum[g]), s.gti[g].stop_s);
        }
      }
    }
  }
  if (s.sort_by_time) ev.sort_by_time();
  return ev;
}

EventList realise_events(const core::ImageD& expected, const EnergyModel& em, const ChannelModel& ch,
                         const EventSettings& s, std::uint64_t seed) {
  return events_from_counts(poisson_counts(expected, seed), em, ch, s, seed);
}

void scatter_events(EventList& ev, const Psf& psf, double axis_x, double axis_y, std::uint64_t seed) {
  const std::size_t n = ev.size();
  if (n == 0) return;
  const double pix = ev.anchor.pixel_arcsec;
  if (!(pix > 0)) fail("scatter_events: the event list's anchor has no pixel scale");
  constexpr std::size_t kBlock = 65536;
  const std::ptrdiff_t nb = static_cast<std::ptrdiff_t>((n + kBlock - 1) / kBlock);
  const double base = psf.scale();
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t b = 0; b < nb; ++b) {
    core::RandomStream rng(seed, (std::uint64_t{1} << 40) + static_cast<std::uint64_t>(b));
    const std::size_t i1 = std::min(n, static_cast<std::size_t>(b + 1) * kBlock);
    for (std::size_t i = static_cast<std::size_t>(b) * kBlock; i < i1; ++i) {
      const double theta = std::hypot(ev.x[i] - axis_x, ev.y[i] - axis_y) * pix / 60.0;
      // Every PSF kind scales its offsets linearly with the scale factor.
      const double f = psf.scaling().factor(theta, ev.energy_keV[i]) / base;
      double dx, dy;
      psf.draw_offset(rng, dx, dy);
      ev.x[i] += f * dx / pix;
      ev.y[i] += f * dy / pix;
    }
  }
}

CountsImage bin_events(const EventList& ev, std::int32_t pi_min, std::int32_t pi_max) {
  if (ev.nx <= 0 || ev.ny <= 0) fail("the event list has no grid (nx, ny)");
  const int nx = ev.nx, ny = ev.ny;
  const bool select = pi_max >= pi_min;
  const int nt = std::max(1, core::max_threads());
  std::vector<std::vector<std::int32_t>> bufs(static_cast<std::size_t>(nt));
  const std::size_t n = ev.size();
#pragma omp parallel num_threads(nt)
  {
#ifdef _OPENMP
    const int t = omp_get_thread_num();
    const int tn = omp_get_num_threads();
#else
    const int t = 0, tn = 1;
#endif
    auto& buf = bufs[static_cast<std::size_t>(t)];
    buf.assign(static_cast<std::size_t>(nx) * ny, 0);
    const std::size_t i0 = n * t / tn, i1 = n * (t + 1) / tn;
    for (std::size_t i = i0; i < i1; ++i) {
      if (select && (ev.pi[i] < pi_min || ev.pi[i] > pi_max)) continue;
      const double fx = std::floor(ev.x[i] - 0.5), fy = std::floor(ev.y[i] - 0.5);
      if (fx < 0 || fy < 0 || fx >= nx || fy >= ny) continue;
      ++buf[static_cast<std::size_t>(fy) * nx + static_cast<std::size_t>(fx)];
    }
  }
  CountsImage out(nx, ny, 0);
  out.set_anchor(ev.anchor);
  out.set_unit("count");
  for (const auto& b : bufs)  // integer sums: exact in any order
    if (!b.empty())
      for (std::size_t i = 0; i < b.size(); ++i) out.data()[i] += b[i];
  return out;
}

}  // namespace icmscope::instrument
