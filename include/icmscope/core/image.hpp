#pragma once
// Image<T>: a value type. Copying copies pixels. An image knows its shape, its
// pixel scale, its sky anchor (the RA/Dec of a reference pixel) and its unit.
// Pixels are stored row-major, index = iy * nx + ix, with (ix, iy) 0-based;
// the FITS pixel (1,1) is (ix, iy) = (0, 0) and x (NAXIS1) runs fastest.
#include <cstddef>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"

namespace icmscope::core {

// Tangent-plane anchor: RA/Dec (deg) at the 1-based FITS reference pixel.
// Axes follow the astronomical convention: +x towards lower RA (east is left),
// +y towards the north. Pixels are square, pixel_arcsec on a side.
struct SkyAnchor {
  double ra_deg = 0.0;
  double dec_deg = 0.0;
  double crpix1 = 0.0;  // 1-based; (nx+1)/2 is the centre of the axis
  double crpix2 = 0.0;
  double pixel_arcsec = 1.0;
};

template <typename T>
class Image {
 public:
  Image() = default;
  Image(int nx, int ny, T fill = T{}) : nx_(nx), ny_(ny) {
    if (nx <= 0 || ny <= 0)
      throw DomainError("Image: shape must be positive, got " + std::to_string(nx) + " x " +
                        std::to_string(ny));
    pix_.assign(static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny), fill);
    anchor_.crpix1 = 0.5 * (nx + 1);
    anchor_.crpix2 = 0.5 * (ny + 1);
  }

  int nx() const { return nx_; }
  int ny() const { return ny_; }
  std::size_t size() const { return pix_.size(); }
  bool empty() const { return pix_.empty(); }

  T& operator()(int ix, int iy) { return pix_[index(ix, iy)]; }
  const T& operator()(int ix, int iy) const { return pix_[index(ix, iy)]; }
  T* data() { return pix_.data(); }
  const T* data() const { return pix_.data(); }
  std::vector<T>& pixels() { return pix_; }
  const std::vector<T>& pixels() const { return pix_; }
  std::size_t index(int ix, int iy) const {
    return static_cast<std::size_t>(iy) * static_cast<std::size_t>(nx_) + static_cast<std::size_t>(ix);
  }
  bool contains(int ix, int iy) const { return ix >= 0 && iy >= 0 && ix < nx_ && iy < ny_; }

  const SkyAnchor& anchor() const { return anchor_; }
  void set_anchor(const SkyAnchor& a) { anchor_ = a; }
  double pixel_arcsec() const { return anchor_.pixel_arcsec; }

  // Unit string in the FITS convention astropy parses (e.g. "count", "count/s").
  const std::string& unit() const { return unit_; }
  void set_unit(std::string u) { unit_ = std::move(u); }

  bool same_grid(const Image& o) const { return nx_ == o.nx_ && ny_ == o.ny_; }

  double sum() const {
    double s = 0.0;
    for (const T& v : pix_) s += static_cast<double>(v);
    return s;
  }

 private:
  int nx_ = 0;
  int ny_ = 0;
  std::vector<T> pix_;
  SkyAnchor anchor_;
  std::string unit_;
};

using ImageD = Image<double>;
using ImageF = Image<float>;

}  // namespace icmscope::core
