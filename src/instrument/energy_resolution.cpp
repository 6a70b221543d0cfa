#include "icmscope/instrument/energy_resolution.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/normal_deviate.hpp"

namespace icmscope::instrument {

double GaussianResolution::fwhm_keV(double E) const {
  const double electrons_var = fano * std::max(E, 0.0) / pair_energy_keV + read_noise_electrons * read_noise_electrons;
  return 2.3548200450309493 * pair_energy_keV * std::sqrt(electrons_var);
}

void GaussianResolution::validate() const {
  auto bad = [](const char* f, double v, const char* want) {
    throw core::DomainError(std::string("energy resolution: ") + f + " = " + std::to_string(v) + ", expected " + want);
  };
  if (!(pair_energy_keV > 0)) bad("pair_energy_keV", pair_energy_keV, "> 0");
  if (!(fano >= 0)) bad("fano", fano, ">= 0");
  if (!(read_noise_electrons >= 0)) bad("read_noise_electrons", read_noise_electrons, ">= 0");
  if (!(channel_width_keV > 0)) bad("channel_width_keV", channel_width_keV, "> 0");
  if (n_channels <= 0) bad("n_channels", n_channels, "> 0");
}

int GaussianResolution::channel_for_energy(double E) const {
  const double c = std::floor(E / channel_width_keV);
  const double cl = std::clamp(c, 0.0, static_cast<double>(n_channels - 1));
  return first_channel + static_cast<int>(cl);
}

int GaussianResolution::draw_channel(double E, core::RandomStream& rng) const {
  // sigma^2 = w F E + (w sigma_read)^2 (keV^2).
  const double wr = pair_energy_keV * read_noise_electrons;
  const double sig = std::sqrt(pair_energy_keV * fano * std::max(E, 0.0) + wr * wr);
  return channel_for_energy(E + sig * standard_normal(rng));
}

ResponseMatrix make_gaussian_response(const std::vector<double>& edges, const GaussianResolution& res) {
  res.validate();
  if (edges.size() < 2) throw core::DomainError("gaussian response: energy_edges_keV needs at least 2 values");
  ResponseRows r;
  r.n_channels = res.n_channels;
  r.first_channel = res.first_channel;
  r.chan_e_min_keV.resize(static_cast<std::size_t>(res.n_channels));
  r.chan_e_max_keV.resize(static_cast<std::size_t>(res.n_channels));
  for (int j = 0; j < res.n_channels; ++j) {
    r.chan_e_min_keV[j] = j * res.channel_width_keV;
    r.chan_e_max_keV[j] = (j + 1) * res.channel_width_keV;
  }
  std::vector<double> dense(static_cast<std::size_t>(res.n_channels));
  for (std::size_t i = 0; i + 1 < edges.size(); ++i) {
    const double E = 0.5 * (edges[i] + edges[i + 1]);
    const double sig = res.sigma_keV(E);
    double tot = 0.0;
    for (int j = 0; j < res.n_channels; ++j) {
      const double a = (r.chan_e_min_keV[j] - E) / (sig * std::sqrt(2.0));
      const double b = (r.chan_e_max_keV[j] - E) / (sig * std::sqrt(2.0));
      dense[j] = 0.5 * (std::erf(b) - std::erf(a));
      tot += dense[j];
    }
    if (tot > 0) {
      double mx = 0.0;
      for (double& v : dense) {
        v /= tot;
        mx = std::max(mx, v);
      }
      for (double& v : dense)
        if (v < 1e-9 * mx) v = 0.0;
    }
    r.add_dense_row(edges[i], edges[i + 1], dense);
  }
  return ResponseMatrix(std::move(r), "gaussian resolution");
}

}  // namespace icmscope::instrument
