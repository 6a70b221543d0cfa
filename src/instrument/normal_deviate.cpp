#include "icmscope/instrument/normal_deviate.hpp"

#include <array>
#include <cmath>

namespace icmscope::instrument {

namespace {
constexpr int kLayers = 256;
constexpr double kR = 3.6541528853610088;      // start of the tail
constexpr double kV = 4.92867323399e-3;         // area of every layer (f = exp(-x^2/2))

struct Tables {
  std::array<double, kLayers + 1> x;  // decreasing: x[0] = V / f(R) > x[1] = R > ... > x[256] = 0
  std::array<double, kLayers + 1> f;  // exp(-x^2/2)
  Tables() {
    auto pdf = [](double t) { return std::exp(-0.5 * t * t); };
    x[0] = kV / pdf(kR);
    x[1] = kR;
    for (int i = 2; i < kLayers; ++i) x[i] = std::sqrt(-2.0 * std::log(kV / x[i - 1] + pdf(x[i - 1])));
    x[kLayers] = 0.0;
    for (int i = 0; i <= kLayers; ++i) f[i] = pdf(x[i]);
  }
};

const Tables& tables() {
  static const Tables t;
  return t;
}
}  // namespace

double standard_normal(core::RandomStream& rng) {
  const Tables& t = tables();
  for (;;) {
    const std::uint64_t bits = rng();
    const int i = static_cast<int>(bits & 0xff);
    const double u = 2.0 * (static_cast<double>(bits >> 11) * 0x1.0p-53) - 1.0;  // [-1, 1)
    const double x = u * t.x[i];
    if (std::fabs(x) < t.x[i + 1]) return x;  // inside the layer's rectangle core
    if (i == 0) {
      // Tail beyond R (Marsaglia 1964): x = -ln(U1)/R, accept if -2 ln(U2) > x^2.
      double xt, y;
      do {
        xt = -std::log(1.0 - rng.uniform()) / kR;
        y = -std::log(1.0 - rng.uniform());
      } while (2.0 * y < xt * xt);
      return u < 0 ? -(kR + xt) : kR + xt;
    }
    if (t.f[i + 1] + (t.f[i] - t.f[i + 1]) * rng.uniform() < std::exp(-0.5 * x * x)) return x;
  }
}

}  // namespace icmscope::instrument
