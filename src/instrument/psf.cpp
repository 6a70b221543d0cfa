#include "icmscope/instrument/psf.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/normal_deviate.hpp"

namespace icmscope::instrument {

namespace {

constexpr double kPi = core::constants::kPi;
constexpr double kFwhmToSigma = 1.0 / 2.3548200450309493;  // 1 / (2 sqrt(2 ln 2))

[[noreturn]] void fail(const std::string& what) { throw core::DomainError("psf: " + what); }

// Gauss-Legendre nodes and weights on [-0.5, 0.5] (weights sum to 1).
void gauss_legendre(int n, std::vector<double>& x, std::vector<double>& w) {
  x.assign(static_cast<std::size_t>(n), 0.0);
  w.assign(static_cast<std::size_t>(n), 0.0);
  for (int i = 0; i < (n + 1) / 2; ++i) {
    double z = std::cos(kPi * (i + 0.75) / (n + 0.5));
    double dp = 1.0;
    for (int it = 0; it < 100; ++it) {
      double p1 = 1.0, p2 = 0.0;
      for (int j = 1; j <= n; ++j) {
        const double p3 = p2;
        p2 = p1;
        p1 = ((2.0 * j - 1.0) * z * p2 - (j - 1.0) * p3) / j;
      }
      dp = n * (z * p1 - p2) / (z * z - 1.0);
      const double z1 = z;
      z = z1 - p1 / dp;
      if (std::fabs(z - z1) < 1e-15) break;
    }
    x[i] = -0.5 * z;
    x[n - 1 - i] = 0.5 * z;
    w[i] = w[n - 1 - i] = 1.0 / ((1.0 - z * z) * dp * dp);  // 2/((1-z^2)p'^2) scaled by 1/2
  }
}

double phi(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

}  // namespace

double PsfScaling::factor(double theta_arcmin, double E_keV) const {
  double f = 1.0;
  if (theta_s_arcmin > 0.0) {
    const double t = theta_arcmin / theta_s_arcmin;
    f *= std::sqrt(1.0 + t * t);
  }
  if (eta != 0.0) {
    if (!(E_keV > 0.0) || !(e0_keV > 0.0))
      fail("energy scaling needs E_keV > 0 and e0_keV > 0, got E = " + std::to_string(E_keV) +
           ", e0_keV = " + std::to_string(e0_keV));
    f *= std::pow(E_keV / e0_keV, eta);
  }
  return f;
}

Psf Psf::gaussian(double fwhm_arcsec, PsfScaling scaling) {
  if (!(fwhm_arcsec > 0.0) || !std::isfinite(fwhm_arcsec))
    fail("fwhm_arcsec = " + std::to_string(fwhm_arcsec) + ", expected > 0");
  Psf p;
  p.kind_ = PsfKind::Gaussian;
  p.fwhm_ = fwhm_arcsec;
  p.scaling_ = scaling;
  return p;
}

Psf Psf::king(double r_c_arcsec, double beta, PsfScaling scaling) {
  if (!(r_c_arcsec > 0.0) || !std::isfinite(r_c_arcsec))
    fail("r_c_arcsec = " + std::to_string(r_c_arcsec) + ", expected > 0");
  if (!(beta > 1.0) || !std::isfinite(beta))
    fail("beta = " + std::to_string(beta) + ", expected > 1 (finite total flux)");
  Psf p;
  p.kind_ = PsfKind::King;
  p.rc_ = r_c_arcsec;
  p.beta_ = beta;
  p.scaling_ = scaling;
  return p;
}

Psf Psf::image(const core::ImageD& img, PsfScaling scaling) {
  if (img.empty()) fail("PSF image is empty");
  if (!(img.pixel_arcsec() > 0.0)) fail("PSF image pixel_arcsec = " + std::to_string(img.pixel_arcsec()) + ", expected > 0");
  auto d = std::make_shared<ImageData>();
  d->nx = img.nx();
  d->ny = img.ny();
  d->pixel_arcsec = img.pixel_arcsec();
  d->cx = img.anchor().crpix1 - 1.0;
  d->cy = img.anchor().crpix2 - 1.0;
  double s = 0.0;
  for (std::size_t i = 0; i < img.size(); ++i) {
    const double v = img.data()[i];
    if (!std::isfinite(v) || v < 0.0)
      fail("PSF image pixel " + std::to_string(i) + " = " + std::to_string(v) + ", expected finite and >= 0");
    s += v;
  }
  if (!(s > 0.0)) fail("PSF image sums to 0, expected a positive total");
  d->p.resize(img.size());
  d->cdf.resize(img.size());
  double c = 0.0;
  for (std::size_t i = 0; i < img.size(); ++i) {
    d->p[i] = img.data()[i] / s;
    c += d->p[i];
    d->cdf[i] = c;
  }
  d->cdf.back() = 1.0;
  Psf p;
  p.kind_ = PsfKind::Image;
  p.img_ = std::move(d);
  p.scaling_ = scaling;
  return p;
}

Psf Psf::at(double theta_arcmin, double E_keV) const {
  Psf p = *this;
  p.scale_ = scaling_.factor(theta_arcmin, E_keV);
  return p;
}

Psf Psf::scaled(double f) const {
  if (!(f > 0.0) || !std::isfinite(f)) fail("scale factor " + std::to_string(f) + ", expected > 0");
  Psf p = *this;
  p.scale_ *= f;
  return p;
}

double Psf::image_density_unscaled(double dx, double dy) const {
  // Bilinear interpolation of the pixel densities (pixel fraction / pixel area),
  // zero beyond the outer pixel centres.
  const ImageData& d = *img_;
  const double px = d.cx + dx / d.pixel_arcsec, py = d.cy + dy / d.pixel_arcsec;
  const double fx = std::floor(px), fy = std::floor(py);
  const int ix = static_cast<int>(fx), iy = static_cast<int>(fy);
  const double tx = px - fx, ty = py - fy;
  auto val = [&](int x, int y) {
    return (x < 0 || y < 0 || x >= d.nx || y >= d.ny) ? 0.0 : d.p[static_cast<std::size_t>(y) * d.nx + x];
  };
  const double v = (1 - tx) * (1 - ty) * val(ix, iy) + tx * (1 - ty) * val(ix + 1, iy) +
                   (1 - tx) * ty * val(ix, iy + 1) + tx * ty * val(ix + 1, iy + 1);
  return v / (d.pixel_arcsec * d.pixel_arcsec);
}

double Psf::density(double dx, double dy) const {
  const double r2 = dx * dx + dy * dy;
  switch (kind_) {
    case PsfKind::Gaussian: {
      const double sig = fwhm_ * scale_ * kFwhmToSigma;
      return std::exp(-r2 / (2 * sig * sig)) / (2 * kPi * sig * sig);
    }
    case PsfKind::King: {
      const double rc = rc_ * scale_;
      return (beta_ - 1.0) / (kPi * rc * rc) * std::pow(1.0 + r2 / (rc * rc), -beta_);
    }
    case PsfKind::Image:
      return image_density_unscaled(dx / scale_, dy / scale_) / (scale_ * scale_);
  }
  return 0.0;
}

double Psf::eef(double r) const {
  if (!(r > 0.0)) return 0.0;
  switch (kind_) {
    case PsfKind::Gaussian: {
      const double sig = fwhm_ * scale_ * kFwhmToSigma;
      return -std::expm1(-r * r / (2 * sig * sig));
    }
    case PsfKind::King: {
      const double rc = rc_ * scale_;
      return 1.0 - std::pow(1.0 + r * r / (rc * rc), 1.0 - beta_);
    }
    case PsfKind::Image: {
      // Sum of pixel fractions with 8x8 sub-samples inside the circle (scaled frame).
      const ImageData& d = *img_;
      const double rr = r / scale_ / d.pixel_arcsec;  // radius in PSF pixels
      const int n = 8;
      double s = 0.0;
      for (int iy = 0; iy < d.ny; ++iy) {
        const double y0 = iy - d.cy;
        if (std::fabs(y0) > rr + 1) continue;
        for (int ix = 0; ix < d.nx; ++ix) {
          const double x0 = ix - d.cx;
          if (std::fabs(x0) > rr + 1) continue;
          const double p = d.p[static_cast<std::size_t>(iy) * d.nx + ix];
          if (p == 0.0) continue;
          int inside = 0;
          for (int sy = 0; sy < n; ++sy)
            for (int sx = 0; sx < n; ++sx) {
              const double x = x0 - 0.5 + (sx + 0.5) / n, y = y0 - 0.5 + (sy + 0.5) / n;
              inside += (x * x + y * y <= rr * rr);
            }
          s += p * inside / (n * n);
        }
      }
      return std::min(1.0, s);
    }
  }
  return 0.0;
}

double Psf::eef_radius(double f) const {
  if (!(f > 0.0 && f < 1.0)) fail("eef_radius: fraction " + std::to_string(f) + ", expected in (0, 1)");
  switch (kind_) {
    case PsfKind::Gaussian: {
      const double sig = fwhm_ * scale_ * kFwhmToSigma;
      return sig * std::sqrt(-2.0 * std::log1p(-f));
    }
    case PsfKind::King: {
      const double rc = rc_ * scale_;
      return rc * std::sqrt(std::pow(1.0 - f, 1.0 / (1.0 - beta_)) - 1.0);
    }
    case PsfKind::Image: {
      const ImageData& d = *img_;
      double lo = 0.0;
      double hi = std::hypot(std::max(d.cx, d.nx - 1 - d.cx) + 1, std::max(d.cy, d.ny - 1 - d.cy) + 1) *
                  d.pixel_arcsec * scale_;
      if (eef(hi) < f) return hi;
      for (int it = 0; it < 60 && hi - lo > 1e-6 * hi; ++it) {
        const double mid = 0.5 * (lo + hi);
        (eef(mid) < f ? lo : hi) = mid;
      }
      return 0.5 * (lo + hi);
    }
  }
  return 0.0;
}

double Psf::fwhm_arcsec() const {
  switch (kind_) {
    case PsfKind::Gaussian:
      return fwhm_ * scale_;
    case PsfKind::King:
      return 2.0 * rc_ * scale_ * std::sqrt(std::pow(2.0, 1.0 / beta_) - 1.0);
    case PsfKind::Image: {
      // Radius where the mean of the density along +-x, +-y falls to half the centre value.
      const double peak = density(0, 0);
      auto mean = [&](double r) { return 0.25 * (density(r, 0) + density(-r, 0) + density(0, r) + density(0, -r)); };
      const ImageData& d = *img_;
      const double step = 0.01 * d.pixel_arcsec * scale_;
      double r = 0.0;
      const double rmax = std::max(d.nx, d.ny) * d.pixel_arcsec * scale_;
      while (r < rmax && mean(r) > 0.5 * peak) r += step;
      return 2.0 * r;
    }
  }
  return 0.0;
}

int Psf::kernel_half_size(double pixel_arcsec, const KernelSettings& ks) const {
  if (!(pixel_arcsec > 0.0)) fail("kernel pixel_arcsec = " + std::to_string(pixel_arcsec) + ", expected > 0");
  const double r = eef_radius(std::clamp(ks.eef_target, 1e-6, 1.0 - 1e-12));
  const double h = std::ceil(r / pixel_arcsec + 0.5);
  const double lo = std::max(0, ks.min_half_size), hi = std::max(ks.max_half_size, ks.min_half_size);
  return static_cast<int>(std::clamp(h, lo, hi));
}

core::ImageD Psf::kernel(double pixel_arcsec, const KernelSettings& ks, double shift_x, double shift_y) const {
  if (std::fabs(shift_x) > 0.5 + 1e-12 || std::fabs(shift_y) > 0.5 + 1e-12)
    fail("kernel shift (" + std::to_string(shift_x) + ", " + std::to_string(shift_y) + ") pixels, expected |shift| <= 0.5");
  const int h = kernel_half_size(pixel_arcsec, ks) + ((shift_x != 0.0 || shift_y != 0.0) ? 1 : 0);
  const int n = 2 * h + 1;
  core::ImageD k(n, n, 0.0);
  core::SkyAnchor a;
  a.crpix1 = h + 1 + shift_x;
  a.crpix2 = h + 1 + shift_y;
  a.pixel_arcsec = pixel_arcsec;
  k.set_anchor(a);
  const double cx = h + shift_x, cy = h + shift_y;  // centre, 0-based pixel coordinates
  if (kind_ == PsfKind::Gaussian) {
    const double sig_pix = fwhm_ * scale_ * kFwhmToSigma / pixel_arcsec;
    std::vector<double> fx(static_cast<std::size_t>(n)), fy(static_cast<std::size_t>(n));
    for (int i = 0; i < n; ++i) {
      fx[i] = phi((i + 0.5 - cx) / sig_pix) - phi((i - 0.5 - cx) / sig_pix);
      fy[i] = phi((i + 0.5 - cy) / sig_pix) - phi((i - 0.5 - cy) / sig_pix);
    }
    for (int iy = 0; iy < n; ++iy)
      for (int ix = 0; ix < n; ++ix) k(ix, iy) = fx[ix] * fy[iy];
  } else {
    const int os = std::max(1, ks.oversample);
    std::vector<double> xs, ws, xf, wf, x2, w2;
    gauss_legendre(os, xs, ws);
    gauss_legendre(4 * os, xf, wf);
    gauss_legendre(2, x2, w2);  // far wings: the profile varies slowly across a pixel
    // Pixels within this distance (pixels) of the centre get 4x finer nodes.
    const double core_pix =
        2.0 + 2.0 * (kind_ == PsfKind::King ? rc_ * scale_ : img_->pixel_arcsec * scale_) / pixel_arcsec;
#pragma omp parallel for schedule(static)
    for (int iy = 0; iy < n; ++iy) {
      for (int ix = 0; ix < n; ++ix) {
        const double dxc = ix - cx, dyc = iy - cy;
        const double dist = std::hypot(dxc, dyc);
        const bool fine = dist < core_pix, far = dist > 4.0 * core_pix;
        const std::vector<double>& x = fine ? xf : (far ? x2 : xs);
        const std::vector<double>& w = fine ? wf : (far ? w2 : ws);
        double s = 0.0;
        for (std::size_t j = 0; j < x.size(); ++j)
          for (std::size_t i = 0; i < x.size(); ++i)
            s += w[i] * w[j] * density((dxc + x[i]) * pixel_arcsec, (dyc + x[j]) * pixel_arcsec);
        k(ix, iy) = s;
      }
    }
  }
  const double tot = k.sum();
  if (!(tot > 0.0)) fail("rasterised kernel sums to 0 (PSF far below the pixel grid resolution?)");
  for (double& v : k.pixels()) v /= tot;
  return k;
}

void Psf::draw_offset(core::RandomStream& rng, double& dx, double& dy) const {
  switch (kind_) {
    case PsfKind::Gaussian: {
      const double sig = fwhm_ * scale_ * kFwhmToSigma;
      dx = sig * standard_normal(rng);
      dy = sig * standard_normal(rng);
      return;
    }
    case PsfKind::King: {
      const double rc = rc_ * scale_;
      const double u = rng.uniform();
      const double r = rc * std::sqrt(std::pow(1.0 - u, 1.0 / (1.0 - beta_)) - 1.0);
      const double t = 2 * kPi * rng.uniform();
      dx = r * std::cos(t);
      dy = r * std::sin(t);
      return;
    }
    case PsfKind::Image: {
      const ImageData& d = *img_;
      const double u = rng.uniform();
      std::size_t i = static_cast<std::size_t>(std::upper_bound(d.cdf.begin(), d.cdf.end(), u) - d.cdf.begin());
      if (i >= d.cdf.size()) i = d.cdf.size() - 1;
      const int ix = static_cast<int>(i % static_cast<std::size_t>(d.nx));
      const int iy = static_cast<int>(i / static_cast<std::size_t>(d.nx));
      dx = (ix - 0.5 + rng.uniform() - d.cx) * d.pixel_arcsec * scale_;
      dy = (iy - 0.5 + rng.uniform() - d.cy) * d.pixel_arcsec * scale_;
      return;
    }
  }
}

}  // namespace icmscope::instrument
