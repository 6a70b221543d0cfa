#include "icmscope/morphology/input.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/poisson.hpp"

namespace icmscope::morphology {

std::vector<std::uint8_t> mask_from_image(const core::ImageD& m, double threshold) {
  std::vector<std::uint8_t> out(m.size());
  for (std::size_t i = 0; i < m.size(); ++i) out[i] = m.pixels()[i] > threshold ? 1 : 0;
  return out;
}

namespace {

void check_grid(const core::ImageD& counts, const core::ImageD& other, const char* what) {
  if (!other.same_grid(counts))
    throw core::InputError(std::string("morphology input: ") + what + " is " + std::to_string(other.nx()) + " x " +
                           std::to_string(other.ny()) + ", expected the counts grid " +
                           std::to_string(counts.nx()) + " x " + std::to_string(counts.ny()));
}

PreparedImage prepare(const MeasureInput& in, const core::ImageD& counts, bool draw_fill,
                      const RefillSettings& refill, core::RandomStream* rng, int x0, int x1, int y0, int y1) {
  if (counts.empty()) throw core::InputError("morphology input: counts image is empty");
  if (in.exposure) check_grid(counts, *in.exposure, "exposure map");
  if (in.background) check_grid(counts, *in.background, "background image");
  if (!in.mask.empty() && in.mask.size() != counts.size())
    throw core::InputError("morphology input: mask has " + std::to_string(in.mask.size()) + " pixels, expected " +
                           std::to_string(counts.size()));
  if (!(in.background_level >= 0.0))
    throw core::InputError("morphology input: background_level must be >= 0 count/pixel");
  const int NX = counts.nx(), NY = counts.ny();
  if (x1 < 0) x1 = NX - 1;
  if (y1 < 0) y1 = NY - 1;
  x0 = std::max(0, x0);
  y0 = std::max(0, y0);
  x1 = std::min(NX - 1, x1);
  y1 = std::min(NY - 1, y1);
  if (x1 < x0 || y1 < y0) throw core::DomainError("morphology input: empty crop");
  double eref = in.exposure_reference;
  if (in.exposure && !(eref > 0.0)) {
    eref = 0.0;
    for (double e : in.exposure->pixels())
      if (std::isfinite(e)) eref = std::max(eref, e);
    if (!(eref > 0.0)) throw core::InputError("morphology input: exposure map has no positive value");
  }
  const int nx = x1 - x0 + 1, ny = y1 - y0 + 1;
  const std::size_t n = static_cast<std::size_t>(nx) * ny;
  PreparedImage p;
  p.x_origin = x0;
  p.y_origin = y0;
  p.pixel_arcsec = counts.pixel_arcsec();
  p.flux = core::ImageD(nx, ny, 0.0);
  p.variance = core::ImageD(nx, ny, 0.0);
  p.counts = core::ImageD(nx, ny, 0.0);
  p.bkg = core::ImageD(nx, ny, 0.0);
  p.rel_exposure = core::ImageD(nx, ny, 0.0);
  p.good.assign(n, 0);
  std::vector<double> bflux(n, 0.0);  // b / e, for the refill of the flux domain
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      const std::size_t src = counts.index(x0 + ix, y0 + iy);
      const std::size_t i = static_cast<std::size_t>(iy) * nx + ix;
      const double c = counts.pixels()[src];
      const double e = in.exposure ? in.exposure->pixels()[src] / eref : 1.0;
      const double b = in.background ? in.background->pixels()[src] : in.background_level;
      bool ok = in.mask.empty() || in.mask[src] != 0;
      ok = ok && std::isfinite(c) && std::isfinite(e) && std::isfinite(b) && e > in.min_relative_exposure && e > 0.0;
      if (ok && (c < 0.0 || b < 0.0))
        throw core::InputError("morphology input: negative counts or background at pixel (" +
                               std::to_string(x0 + ix) + ", " + std::to_string(y0 + iy) + ")");
      if (!ok) continue;
      p.good[i] = 1;
      p.flux.pixels()[i] = (c - b) / e;
      p.variance.pixels()[i] = c / (e * e);
      p.counts.pixels()[i] = c;
      p.bkg.pixels()[i] = b;
      p.rel_exposure.pixels()[i] = e;
      bflux[i] = b / e;
    }
  const std::vector<const std::vector<double>*> planes = {&p.flux.pixels(), &bflux, &p.counts.pixels(),
                                                          &p.bkg.pixels()};
  p.refill = local_annulus_refill(p.good, nx, ny, planes, refill);
  for (std::size_t j = 0; j < p.refill.index.size(); ++j) {
    const std::size_t i = p.refill.index[j];
    p.flux.pixels()[i] = p.refill.values[0][j];
    p.variance.pixels()[i] = 0.0;
    const double mc = std::max(0.0, p.refill.values[2][j]);
    p.counts.pixels()[i] = draw_fill && rng ? poisson_draw(mc, *rng) : mc;
    p.bkg.pixels()[i] = p.refill.values[3][j];
    p.rel_exposure.pixels()[i] = 1.0;
  }
  return p;
}

}  // namespace

PreparedImage prepare_input(const MeasureInput& in, const RefillSettings& refill, core::RandomStream& rng, int x0,
                            int x1, int y0, int y1) {
  return prepare(in, in.counts, true, refill, &rng, x0, x1, y0, y1);
}

PreparedImage prepare_expected(const MeasureInput& in, const RefillSettings& refill, int x0, int x1, int y0,
                               int y1) {
  if (!in.expected) throw core::InputError("morphology input: no expected image given");
  check_grid(in.counts, *in.expected, "expected image");
  return prepare(in, *in.expected, false, refill, nullptr, x0, x1, y0, y1);
}

}  // namespace icmscope::morphology
