#include "icmscope/instrument/convolve.hpp"

#include <fftw3.h>

#include <algorithm>
#include <cmath>
#include <cstring>
#include <mutex>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {
// The FFTW planner (plan creation and destruction) is not thread-safe.
std::mutex& planner_mutex() {
  static std::mutex m;
  return m;
}

bool small_primes_only(int n) {
  for (int p : {2, 3, 5, 7})
    while (n % p == 0) n /= p;
  return n == 1;
}
}  // namespace

int fft_good_size(int n) {
  if (n < 1) n = 1;
  while (!small_primes_only(n)) ++n;
  return n;
}

struct FftConvolver::Impl {
  int nx = 0, ny = 0, px = 0, py = 0, pcx = 0;
  double* r = nullptr;
  fftw_complex* c = nullptr;
  fftw_complex* kf = nullptr;
  fftw_plan fwd = nullptr, bwd = nullptr;
  ~Impl() {
    std::lock_guard<std::mutex> lock(planner_mutex());
    if (fwd) fftw_destroy_plan(fwd);
    if (bwd) fftw_destroy_plan(bwd);
    fftw_free(r);
    fftw_free(c);
    fftw_free(kf);
  }
};

FftConvolver::FftConvolver(int nx, int ny, const core::ImageD& kernel, bool measure) : impl_(std::make_unique<Impl>()) {
  if (nx <= 0 || ny <= 0) throw core::DomainError("convolve: image shape " + std::to_string(nx) + " x " + std::to_string(ny) + ", expected positive");
  if (kernel.empty() || kernel.nx() % 2 == 0 || kernel.ny() % 2 == 0)
    throw core::DomainError("convolve: kernel shape " + std::to_string(kernel.nx()) + " x " + std::to_string(kernel.ny()) +
                            ", expected odd sizes (centre = middle pixel)");
  Impl& m = *impl_;
  const int hx = kernel.nx() / 2, hy = kernel.ny() / 2;
  m.nx = nx;
  m.ny = ny;
  m.px = fft_good_size(nx + hx);
  m.py = fft_good_size(ny + hy);
  m.pcx = m.px / 2 + 1;
  const std::size_t nr = static_cast<std::size_t>(m.px) * m.py, nc = static_cast<std::size_t>(m.pcx) * m.py;
  {
    std::lock_guard<std::mutex> lock(planner_mutex());
    m.r = fftw_alloc_real(nr);
    m.c = fftw_alloc_complex(nc);
    m.kf = fftw_alloc_complex(nc);
    if (!m.r || !m.c || !m.kf) throw core::DomainError("convolve: cannot allocate FFT buffers of " + std::to_string(nr) + " values");
    const unsigned flags = measure ? FFTW_MEASURE : FFTW_ESTIMATE;
    m.fwd = fftw_plan_dft_r2c_2d(m.py, m.px, m.r, m.c, flags);
    m.bwd = fftw_plan_dft_c2r_2d(m.py, m.px, m.c, m.r, flags);
    if (!m.fwd || !m.bwd) throw core::DomainError("convolve: FFTW could not make plans");
  }
  std::fill(m.r, m.r + nr, 0.0);
  for (int j = 0; j < kernel.ny(); ++j) {
    const int y = ((j - hy) % m.py + m.py) % m.py;
    for (int i = 0; i < kernel.nx(); ++i) {
      const int x = ((i - hx) % m.px + m.px) % m.px;
      m.r[static_cast<std::size_t>(y) * m.px + x] += kernel(i, j);
    }
  }
  fftw_execute(m.fwd);
  const double norm = 1.0 / static_cast<double>(nr);
  for (std::size_t k = 0; k < nc; ++k) {
    m.kf[k][0] = m.c[k][0] * norm;
    m.kf[k][1] = m.c[k][1] * norm;
  }
}

FftConvolver::~FftConvolver() = default;
FftConvolver::FftConvolver(FftConvolver&&) noexcept = default;
FftConvolver& FftConvolver::operator=(FftConvolver&&) noexcept = default;
int FftConvolver::padded_nx() const { return impl_->px; }
int FftConvolver::padded_ny() const { return impl_->py; }

core::ImageD FftConvolver::apply(const core::ImageD& img) {
  Impl& m = *impl_;
  if (img.nx() != m.nx || img.ny() != m.ny)
    throw core::DomainError("convolve: image " + std::to_string(img.nx()) + " x " + std::to_string(img.ny()) +
                            " but the convolver was made for " + std::to_string(m.nx) + " x " + std::to_string(m.ny));
  const std::ptrdiff_t py = m.py;
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t y = 0; y < py; ++y) {
    double* row = m.r + y * m.px;
    if (y < m.ny) {
      std::memcpy(row, img.data() + y * m.nx, sizeof(double) * m.nx);
      std::fill(row + m.nx, row + m.px, 0.0);
    } else {
      std::fill(row, row + m.px, 0.0);
    }
  }
  fftw_execute(m.fwd);
  const std::ptrdiff_t nc = static_cast<std::ptrdiff_t>(m.pcx) * m.py;
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t k = 0; k < nc; ++k) {
    const double a = m.c[k][0], b = m.c[k][1], c = m.kf[k][0], d = m.kf[k][1];
    m.c[k][0] = a * c - b * d;
    m.c[k][1] = a * d + b * c;
  }
  fftw_execute(m.bwd);
  core::ImageD out(m.nx, m.ny, 0.0);
  out.set_anchor(img.anchor());
  out.set_unit(img.unit());
  const std::ptrdiff_t ny = m.ny;
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t y = 0; y < ny; ++y) std::memcpy(out.data() + y * m.nx, m.r + y * m.px, sizeof(double) * m.nx);
  return out;
}

core::ImageD convolve_fft(const core::ImageD& image, const core::ImageD& kernel) {
  FftConvolver c(image.nx(), image.ny(), kernel);
  return c.apply(image);
}

core::ImageD convolve_direct(const core::ImageD& img, const core::ImageD& k) {
  if (k.empty() || k.nx() % 2 == 0 || k.ny() % 2 == 0)
    throw core::DomainError("convolve: kernel shape " + std::to_string(k.nx()) + " x " + std::to_string(k.ny()) + ", expected odd sizes");
  const int nx = img.nx(), ny = img.ny(), hx = k.nx() / 2, hy = k.ny() / 2;
  core::ImageD out(nx, ny, 0.0);
  out.set_anchor(img.anchor());
  out.set_unit(img.unit());
#pragma omp parallel for schedule(static)
  for (int y = 0; y < ny; ++y) {
    double* o = out.data() + static_cast<std::size_t>(y) * nx;
    for (int j = 0; j < k.ny(); ++j) {
      const int sy = y - (j - hy);
      if (sy < 0 || sy >= ny) continue;
      const double* src = img.data() + static_cast<std::size_t>(sy) * nx;
      for (int i = 0; i < k.nx(); ++i) {
        const double w = k(i, j);
        if (w == 0.0) continue;
        const int dx = i - hx;
        const int x0 = std::max(0, dx), x1 = std::min(nx, nx + dx);
        for (int x = x0; x < x1; ++x) o[x] += w * src[x - dx];
      }
    }
  }
  return out;
}

core::ImageD convolve(const core::ImageD& image, const core::ImageD& kernel) {
  if (static_cast<long>(kernel.nx()) * kernel.ny() <= 121) return convolve_direct(image, kernel);
  return convolve_fft(image, kernel);
}

double zone_weight(const ZoneSettings& z, std::size_t k, double theta) {
  const auto& e = z.edges_arcmin;
  auto step = [&](double edge) {
    if (z.blend_arcmin <= 0.0) return theta >= edge ? 1.0 : 0.0;
    return std::clamp((theta - edge) / z.blend_arcmin + 0.5, 0.0, 1.0);
  };
  const double in = k == 0 ? 1.0 : step(e[k]);
  const double out = k + 1 < e.size() ? step(e[k + 1]) : 0.0;
  return in - out;
}

core::ImageD convolve_zones(const core::ImageD& image, double axis_x, double axis_y, const Psf& psf, const ZoneSettings& z) {
  const auto& e = z.edges_arcmin;
  if (e.empty() || e.front() != 0.0) throw core::DomainError("psf zones: edges_arcmin must start at 0");
  for (std::size_t k = 1; k < e.size(); ++k)
    if (!(e[k] - e[k - 1] >= std::max(z.blend_arcmin, 1e-12)))
      throw core::DomainError("psf zones: edges_arcmin[" + std::to_string(k) + "] = " + std::to_string(e[k]) +
                              ", expected increasing by at least blend_arcmin = " + std::to_string(z.blend_arcmin));
  if (!(z.blend_arcmin >= 0.0)) throw core::DomainError("psf zones: blend_arcmin must be >= 0");
  const int nx = image.nx(), ny = image.ny();
  const double pix = image.pixel_arcsec();
  core::ImageD theta(nx, ny, 0.0);
  double tmax = 0.0;
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      const double t = std::hypot(ix + 1.0 - axis_x, iy + 1.0 - axis_y) * pix / 60.0;
      theta(ix, iy) = t;
      tmax = std::max(tmax, t);
    }
  struct Zone {
    std::size_t k;
    core::ImageD part;
    std::unique_ptr<FftConvolver> conv;
  };
  std::vector<Zone> zones;
  for (std::size_t k = 0; k < e.size(); ++k) {
    const double lo = e[k];
    if (lo > tmax + z.blend_arcmin) break;
    const double hi = std::min(k + 1 < e.size() ? e[k + 1] : tmax, tmax);
    const double rep = 0.5 * (lo + std::max(lo, hi));
    Zone zn;
    zn.k = k;
    zn.part = core::ImageD(nx, ny, 0.0);
    bool any = false;
    for (std::size_t i = 0; i < image.size(); ++i) {
      const double w = zone_weight(z, k, theta.data()[i]);
      zn.part.data()[i] = image.data()[i] * w;
      any = any || w > 0.0;
    }
    if (!any) continue;
    const core::ImageD kern = psf.at(rep, z.energy_keV).kernel(pix, z.kernel);
    zn.conv = std::make_unique<FftConvolver>(nx, ny, kern);
    zones.push_back(std::move(zn));
  }
  const std::ptrdiff_t nz = static_cast<std::ptrdiff_t>(zones.size());
#pragma omp parallel for schedule(dynamic, 1)
  for (std::ptrdiff_t i = 0; i < nz; ++i) zones[i].part = zones[i].conv->apply(zones[i].part);
  core::ImageD out(nx, ny, 0.0);
  out.set_anchor(image.anchor());
  out.set_unit(image.unit());
  for (const Zone& zn : zones)  // fixed zone order: deterministic sum
    for (std::size_t i = 0; i < out.size(); ++i) out.data()[i] += zn.part.data()[i];
  return out;
}

}  // namespace icmscope::instrument
