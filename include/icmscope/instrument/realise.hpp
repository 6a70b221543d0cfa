#pragma once
// Random realisations of an expected-counts image, reproducible for any thread
// count: the image rows are cut into fixed blocks of kRowsPerBlock rows, and
// block b draws from its own core::RandomStream(seed, stream(b)).
//
// Map mode and event mode share the draws by construction: events are made
// from the counts image of poisson_counts() (same seed), one event per count,
// placed uniformly within its pixel; bin_events() of those events therefore
// gives back exactly that counts image. Event attributes (position within the
// pixel, energy, channel, time) come from separate per-block streams, so the
// counts do not depend on which attributes are drawn.
//
// Stream ids under one seed (disjoint, so one seed can drive a whole
// observation): counts block b -> b; event attributes 2^32 + 2^24 component + b;
// PSF scattering 2^40 + block; point sources 2^48; random dither 2^48 + 1.
#include <cstdint>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/instrument/energy_resolution.hpp"
#include "icmscope/instrument/psf.hpp"
#include "icmscope/instrument/response_matrix.hpp"
#include "icmscope/instrument/spectrum_sampler.hpp"

namespace icmscope::instrument {

inline constexpr int kRowsPerBlock = 8;

using CountsImage = core::Image<std::int32_t>;

// One Poisson deviate of mean lambda (0 for lambda <= 0 or NaN): inversion
// by sequential search below 10, PTRS transformed rejection above
// (Hoermann 1993, Insurance: Math. Econ. 12, 39).
std::int32_t poisson_draw(core::RandomStream& rng, double lambda);

// Poisson counts image of the expected image (counts per pixel); anchor kept,
// unit "count"; negative values (FFT round-off) count as 0, non-finite values
// or values above 2e9 are a DomainError naming the pixel. Stream of block b: b.
CountsImage poisson_counts(const core::ImageD& expected, std::uint64_t seed);

// A good time interval (s, mission time).
struct Gti {
  double start_s = 0.0;
  double stop_s = 0.0;
};

// Structure-of-arrays event list. x, y are FITS 1-based sky pixel coordinates
// of the grid the events came from (pixel (ix, iy) spans ix + 0.5 .. ix + 1.5);
// energy is the true photon energy (keV), pi the channel, time in s.
struct EventList {
  std::vector<double> x, y;
  std::vector<float> energy_keV;
  std::vector<std::int32_t> pi;
  std::vector<double> time_s;
  std::vector<std::uint8_t> component;  // caller's tag (source, background ...)
  int nx = 0, ny = 0;                    // grid of x, y
  core::SkyAnchor anchor;                // its sky anchor (WCS of x, y)
  std::size_t size() const { return x.size(); }
  void reserve(std::size_t n);
  // Appends another list (same grid); DomainError otherwise.
  void append(const EventList& o);
  // Stable sort of all columns by time.
  void sort_by_time();
};

// Where event energies come from: one global spectrum, or a list of spectra
// with a per-pixel index image (same shape as the counts; index < 0 means
// "use global"). Spectra are of detected counts (photon spectrum x area).
struct EnergyModel {
  const SpectrumSampler* global = nullptr;
  const std::vector<SpectrumSampler>* spectra = nullptr;
  const core::Image<std::int32_t>* spectrum_index = nullptr;
};

// How energies become channels: the redistribution matrix when given, the
// Gaussian resolution otherwise. An energy that the matrix cannot place (outside
// its grid or an empty row) gets channel -1 (caller may drop those events).
struct ChannelModel {
  const ResponseMatrix* rmf = nullptr;
  GaussianResolution resolution;
};

struct EventSettings {
  std::vector<Gti> gti{{0.0, 1.0e4}};  // non-empty, start < stop, non-overlapping, increasing
  bool sort_by_time = true;
  std::uint8_t component = 0;           // tag stored with every event; also decorrelates streams
};

// One event per count of `counts`: uniform position within the pixel, energy
// from the model, channel from the channel model, time uniform over the GTIs.
// Event-attribute streams: RandomStream(seed, 2^32 + 2^24 * component + b).
// DomainError for bad GTIs, a missing energy source, or mismatched shapes.
EventList events_from_counts(const CountsImage& counts, const EnergyModel& energy,
                             const ChannelModel& channels, const EventSettings& settings,
                             std::uint64_t seed);

// events_from_counts(poisson_counts(expected, seed), ...).
EventList realise_events(const core::ImageD& expected, const EnergyModel& energy,
                         const ChannelModel& channels, const EventSettings& settings, std::uint64_t seed);

// Counts image of the events on their grid (events outside are ignored);
// optional selection on channel [pi_min, pi_max] (inclusive; pi_max < pi_min = all).
CountsImage bin_events(const EventList& events, std::int32_t pi_min = 0, std::int32_t pi_max = -1);

// Event-mode PSF: moves every event by a scattering offset drawn from the PSF
// broadened for the event's off-axis angle (from the axis at FITS pixels axis_x,
// axis_y) and energy, for workflows that realise an expected image *before* the
// PSF. bin_events() then gives the scattered image (events leaving the grid are
// kept in the list and ignored by binning). Blocks of 65536 events draw from
// RandomStream(seed, 2^40 + block): deterministic for any thread count.
void scatter_events(EventList& events, const Psf& psf, double axis_x, double axis_y, std::uint64_t seed);

// Total live time of GTIs (s); DomainError naming gti[i] when invalid.
double gti_total_s(const std::vector<Gti>& gti);

}  // namespace icmscope::instrument
