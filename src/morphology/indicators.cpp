#include "icmscope/morphology/indicators.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"

namespace icmscope::morphology {

MeasureSettings default_measure_settings(double kpc_per_pixel, double r500_kpc) {
  if (!(kpc_per_pixel > 0.0)) throw core::ConfigError("morphology: kpc_per_pixel must be > 0");
  MeasureSettings s;
  const double px = 1.0 / kpc_per_pixel;
  const bool has_r500 = r500_kpc > 0.0;
  const double R = has_r500 ? r500_kpc * px : 500.0 * px;
  const std::string Rlabel = has_r500 ? "R500" : "500 kpc";
  s.r500_px = has_r500 ? r500_kpc * px : 0.0;
  // Peak smoothing on a physical scale (10 kpc, at least 1 pixel) so that the peak
  // does not follow single noisy pixels on finely binned images [common practice].
  s.peak.smooth_sigma_px = std::max(1.0, 10.0 * px);
  s.concentration.push_back({40 * px, 400 * px, ConcentrationConvention::santos2008_40_400kpc, "40/400 kpc",
                             CentreChoice::peak});
  s.concentration.push_back({100 * px, 500 * px, ConcentrationConvention::cassano2010_100_500kpc, "100/500 kpc",
                             CentreChoice::peak});
  if (has_r500)
    s.concentration.push_back({0.1 * R, R, ConcentrationConvention::scaled_0p1_1_r500, "0.1/1 R500",
                               CentreChoice::peak});
  s.centroid_shift.push_back({500 * px, 20, 0.05, 30 * px, "500 kpc"});
  if (has_r500) s.centroid_shift.push_back({R, 20, 0.05, 30 * px, "R500"});
  s.power_ratios.push_back({500 * px, "500 kpc", CentreChoice::centroid, LengthUnit::kpc});
  if (has_r500) s.power_ratios.push_back({R, "R500", CentreChoice::centroid, LengthUnit::kpc});
  s.asymmetry.radius_px = R;
  s.asymmetry.label = Rlabel;
  if (has_r500) s.photon_asymmetry.r500_px = R;
  s.gini_m20.radius_px = R;
  s.gini_m20.label = Rlabel;
  s.smoothness.radius_px = R;
  s.smoothness.label = Rlabel;
  s.ellipticity.radius_px = R;
  s.ellipticity.label = Rlabel;
  s.centroid_radius_px = R;
  return s;
}

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct SlotInfo {
  std::string name, aperture, convention;
  BiasMode mode = BiasMode::linear;
  double period = 0.0;
};

// Collects values in a fixed order; on the raw call it also records names.
struct Sink {
  std::vector<double>* values = nullptr;
  std::vector<SlotInfo>* info = nullptr;
  void put(const std::string& name, const std::string& ap, double v, BiasMode m = BiasMode::linear,
           const std::string& conv = "", double period = 0.0) {
    values->push_back(v);
    if (info) info->push_back({name, ap, conv, m, period});
  }
};

struct Frame {
  const core::ImageD* flux = nullptr;
  const core::ImageD* variance = nullptr;
  const core::ImageD* counts = nullptr;
  const core::ImageD* bkg = nullptr;
  const core::ImageD* rel_exposure = nullptr;
  bool has_background = false;
};

struct Workspace {
  core::ImageD flux, variance, counts;
  RowPrefix prefix, abs_prefix;
  std::vector<double> absbuf;
  std::vector<double> smoothed, tmp, ga, gb;
  PhotonScratch photons;
  SmoothnessScratch smooth;
  std::vector<std::pair<double, CentroidResult>> memo;
  const std::vector<std::pair<double, CentroidResult>>* warm = nullptr;  // raw centroids (realisations)
};

struct Plan {
  MeasureSettings s;
  bool find_centre = true;
  PixelPoint input_centre;  // crop coordinates
  double unit_px[4] = {1, 1, 1, 1};  // pixel -> unit for LengthUnit
  double kpc_per_pixel = 0.0;
  int x0 = 0, y0 = 0;       // crop origin in input pixels
  PixelPoint raw_peak;      // crop coordinates, set by the raw call
  PixelPoint raw_asym_centre;
  std::vector<std::pair<double, CentroidResult>> raw_centroids;
  double asym_bg_residual = 0.0;
  double smooth_bg_residual = 0.0;
  bool backgrounds_done = false;
};

CentroidResult centroid_in(const Frame& f, Workspace& ws, PixelPoint start, double R) {
  for (const auto& m : ws.memo)
    if (m.first == R) return m.second;
  if (const auto* warm = ws.warm)  // realisations start from the raw centroid of the same aperture (same fixed point, fewer steps)
    for (const auto& m : *warm)
      if (m.first == R && m.second.converged) start = m.second.centre;
  CentroidSettings cs;
  cs.radius_px = R;
  const CentroidResult r = iterated_centroid(*f.flux, start, cs, &ws.prefix);
  ws.memo.emplace_back(R, r);
  return r;
}


PixelPoint choose(CentreChoice c, const Frame& f, Workspace& ws, const Plan& p, PixelPoint peak, double R) {
  switch (c) {
    case CentreChoice::peak: return peak;
    case CentreChoice::input: return p.find_centre ? peak : p.input_centre;
    case CentreChoice::centroid: return centroid_in(f, ws, peak, R).centre;
  }
  return peak;
}

std::string fmt(double v) {
  std::ostringstream o;
  o.precision(6);
  o << v;
  return o.str();
}

double largest_radius(const MeasureSettings& s) {
  double R = s.centroid_radius_px;
  for (const auto& c : s.concentration) R = std::max(R, c.r2_px);
  for (const auto& c : s.centroid_shift) R = std::max(R, c.r_max_px);
  for (const auto& c : s.power_ratios) R = std::max(R, c.radius_px);
  R = std::max(R, s.asymmetry.radius_px);
  if (s.photon_asymmetry.r500_px > 0.0 && !s.photon_asymmetry.edges_r500.empty())
    R = std::max(R, s.photon_asymmetry.r500_px * s.photon_asymmetry.edges_r500.back());
  R = std::max(R, s.gini_m20.radius_px);
  R = std::max(R, s.smoothness.radius_px);
  R = std::max(R, s.ellipticity.radius_px);
  return R;
}

// All indicators of one frame. details != null on the raw call (typed results,
// crop coordinates) and plan backgrounds are computed then.
// realisation: the peak search is restricted to a window about the raw peak and
// the asymmetry descent starts at the raw minimum (MeasureSettings doc).
void compute_all(const Frame& f, const Plan& plan, Workspace& ws, core::RandomStream& rng, Sink& sink,
                 Indicators* details, Plan* wplan = nullptr, bool realisation = false) {
  const MeasureSettings& s = plan.s;
  ws.memo.clear();
  ws.warm = realisation ? &plan.raw_centroids : nullptr;
  const core::ImageD& I = *f.flux;
  ws.prefix.build(I.data(), I.nx(), I.ny());
  // Centre.
  PeakResult pk;
  PixelPoint peak;
  if (plan.find_centre) {
    PeakSettings ps = s.peak;
    PixelPoint guess = plan.input_centre;
    if (realisation && s.realisation_peak_window_px >= 0.0) {
      ps.search_radius_px = s.realisation_peak_window_px > 0.0
                                ? s.realisation_peak_window_px
                                : std::max(10.0, 5.0 * s.peak.smooth_sigma_px);
      guess = plan.raw_peak;
    }
    pk = find_peak(I, ps, guess, ws.smoothed, ws.tmp);
    peak = pk.found ? pk.refined : PixelPoint{0.5 * (I.nx() - 1), 0.5 * (I.ny() - 1)};
  } else {
    peak = plan.input_centre;
    pk.found = true;
    pk.refined = peak;
    pk.ix = static_cast<int>(std::lround(peak.x));
    pk.iy = static_cast<int>(std::lround(peak.y));
  }
  if (wplan) wplan->raw_peak = peak;
  const double Rc = s.centroid_radius_px > 0.0 ? s.centroid_radius_px : largest_radius(s);
  const CentroidResult cen = centroid_in(f, ws, peak, Rc);
  const std::string cap = fmt(Rc) + " px";
  sink.put("peak_x", "", peak.x + plan.x0, BiasMode::none, "smoothed peak, sigma " + fmt(s.peak.smooth_sigma_px) + " px");
  sink.put("peak_y", "", peak.y + plan.y0, BiasMode::none);
  sink.put("centroid_x", cap, cen.centre.x + plan.x0, BiasMode::none, "iterated centroid");
  sink.put("centroid_y", cap, cen.centre.y + plan.y0, BiasMode::none);
  const double off = centre_offset_px(peak, cen.centre);
  sink.put("peak_centroid_offset", cap, off, BiasMode::linear, "pixels");
  if (plan.kpc_per_pixel > 0.0) sink.put("peak_centroid_offset_kpc", cap, off * plan.kpc_per_pixel, BiasMode::linear, "kpc");
  if (s.r500_px > 0.0) sink.put("peak_centroid_offset_r500", cap, off / s.r500_px, BiasMode::linear, "R500");
  if (details) {
    details->peak = pk;
    details->centroid = cen;
  }
  // Concentration.
  for (const auto& c : s.concentration) {
    const PixelPoint cc = choose(c.centre, f, ws, plan, peak, c.r2_px);
    const ConcentrationResult r = concentration(I, cc, c.r1_px, c.r2_px, &ws.prefix);
    const std::string label = c.label.empty() ? concentration_label(c.convention) : c.label;
    sink.put("c", label, r.c, BiasMode::linear,
             std::string("F(<") + fmt(c.r1_px) + " px)/F(<" + fmt(c.r2_px) + " px), centre " + to_string(c.centre));
    if (details) details->concentration.push_back(r);
  }
  // Centroid shift.
  for (const auto& c : s.centroid_shift) {
    const CentroidShiftResult r = centroid_shift(I, peak, c, &ws.prefix);
    sink.put("w", c.label, r.w, s.w_bias,
             std::to_string(r.radii_px.size()) + " apertures " + fmt(c.min_fraction) + "-1 R_max, core " +
                 fmt(c.core_exclusion_px) + " px excluded, about the peak");
    if (details) details->centroid_shift.push_back(r);
  }
  // Power ratios.
  for (const auto& c : s.power_ratios) {
    const PixelPoint o = choose(c.origin, f, ws, plan, peak, c.radius_px);
    const double upx = plan.unit_px[static_cast<int>(c.ln_unit)];
    const PowerRatioResult r = power_ratios(I, f.variance, o, c.radius_px, upx);
    const std::string conv = std::string("ln R in ") + to_string(c.ln_unit) + " (R = " + fmt(r.radius) + "), origin " +
                             to_string(c.origin);
    sink.put("P0", c.label, r.P[0], BiasMode::linear, conv);
    for (int m = 1; m <= kMaxPowerOrder; ++m) sink.put("P" + std::to_string(m) + "/P0", c.label, r.ratio[m], BiasMode::linear, conv);
    for (int m = 2; m <= kMaxPowerOrder; ++m)
      sink.put("P" + std::to_string(m) + "/P0_analytic", c.label, r.ratio_corrected[m], BiasMode::none,
               conv + ", analytic noise term subtracted");
    if (details) details->power_ratios.push_back(r);
  }
  // Asymmetry.
  if (s.asymmetry.radius_px > 0.0) {
    const auto& a = s.asymmetry;
    const PixelPoint start = realisation ? plan.raw_asym_centre : centroid_in(f, ws, peak, a.radius_px).centre;
    ws.absbuf.resize(I.size());
    for (std::size_t i = 0; i < I.size(); ++i) ws.absbuf[i] = std::fabs(I.pixels()[i]);
    ws.abs_prefix.build(ws.absbuf.data(), I.nx(), I.ny());
    AsymmetryResult r = asymmetry_minimum(I, start, a, &ws.abs_prefix);
    if (wplan) wplan->raw_asym_centre = r.centre;
    if (wplan && !plan.backgrounds_done) {
      if (a.background == AsymmetryBackground::model && f.has_background)
        wplan->asym_bg_residual = asymmetry_background_model(*f.bkg, f.rel_exposure, r.centre, a.radius_px,
                                                           a.background_draws, rng);
      else if (a.background == AsymmetryBackground::blank_region) {
        AsymmetrySettings b = a;
        const PixelPoint bc{a.blank_centre.x - plan.x0, a.blank_centre.y - plan.y0};
        wplan->asym_bg_residual = asymmetry_minimum(I, bc, b).residual_sum;
      }
    }
    const double norm = (a.normalisation == AsymmetryNormalisation::sum_abs ? 1.0 : 2.0) * r.abs_sum;
    r.background_term = norm > 0.0 ? plan.asym_bg_residual / norm : 0.0;
    r.A = r.A_raw - r.background_term;
    const std::string conv = std::string("180 deg, half-pixel centres, / ") + to_string(a.normalisation) +
                             ", background: " + to_string(a.background);
    sink.put("A", a.label, r.A, BiasMode::linear, conv);
    sink.put("A_raw", a.label, r.A_raw, BiasMode::linear, conv);
    if (details) details->asymmetry = r;
  }
  // Photon asymmetry.
  if (s.photon_asymmetry.r500_px > 0.0) {
    const auto& p = s.photon_asymmetry;
    const double Rout = p.r500_px * p.edges_r500.back();
    const PixelPoint c = choose(p.centre, f, ws, plan, peak, Rout);
    const PhotonAsymmetryResult r =
        photon_asymmetry(*f.counts, f.has_background ? f.bkg : nullptr, c, p, rng, ws.photons);
    sink.put("A_phot", "R500", r.A_phot, BiasMode::linear,
             std::string("Watson U^2, ") + std::to_string(r.annuli.size()) + " annuli, centre " + to_string(p.centre) +
                 (p.jitter_within_pixel ? ", photons jittered in pixel" : ", photons at pixel centres"));
    if (details) details->photon_asymmetry = r;
  }
  // Gini / M20.
  if (s.gini_m20.radius_px > 0.0) {
    const PixelPoint c = centroid_in(f, ws, peak, s.gini_m20.radius_px).centre;
    const GiniM20Result r = gini_m20(I, c, s.gini_m20, ws.ga, ws.gb);
    sink.put("gini", s.gini_m20.label, r.gini, BiasMode::linear, "|I|, pixel centres inside aperture");
    sink.put("M20", s.gini_m20.label, r.m20, BiasMode::linear, "about the aperture centroid");
    if (details) details->gini_m20 = r;
  }
  // Smoothness.
  if (s.smoothness.radius_px > 0.0) {
    const PixelPoint c = centroid_in(f, ws, peak, s.smoothness.radius_px).centre;
    if (wplan && !plan.backgrounds_done && f.has_background)
      wplan->smooth_bg_residual = smoothness_background_model(*f.bkg, f.rel_exposure, c, s.smoothness, rng, ws.smooth);
    const SmoothnessResult r = smoothness(I, c, s.smoothness, plan.smooth_bg_residual, ws.smooth);
    sink.put("S", s.smoothness.label, r.S, BiasMode::linear,
             "boxcar " + std::to_string(2 * r.half_width + 1) + " px, positive residuals, r > " +
                 fmt(smoothness_exclusion(s.smoothness)) + " px");
    if (details) details->smoothness = r;
  }
  // Ellipticity.
  if (s.ellipticity.radius_px > 0.0) {
    const PixelPoint c = centroid_in(f, ws, peak, s.ellipticity.radius_px).centre;
    const EllipticityResult r = ellipticity(I, c, s.ellipticity);
    sink.put("ellipticity", s.ellipticity.label, r.ellipticity, BiasMode::linear, "1 - sqrt(lambda-/lambda+)");
    sink.put("pa_deg", s.ellipticity.label, r.pa_deg, BiasMode::none, "deg east of north (+y north, east = -x)", 180.0);
    if (details) details->ellipticity = r;
  }
  if (wplan) {
    wplan->backgrounds_done = true;
    wplan->raw_centroids = ws.memo;
  }
}

void shift(PixelPoint& p, int x0, int y0) {
  p.x += x0;
  p.y += y0;
}

}  // namespace

Indicators measure(const MeasureInput& in, const MeasureSettings& settings) {
  if (settings.realisations < 0) throw core::ConfigError("morphology: realisations must be >= 0");
  if (settings.source == RealisationSource::expected && !in.expected)
    throw core::ConfigError("morphology: realisations of the expected image need MeasureInput::expected");
  Plan plan;
  plan.s = settings;
  plan.find_centre = in.find_centre;
  plan.kpc_per_pixel = in.kpc_per_pixel;
  plan.unit_px[static_cast<int>(LengthUnit::pixel)] = 1.0;
  plan.unit_px[static_cast<int>(LengthUnit::arcsec)] = in.counts.pixel_arcsec();
  plan.unit_px[static_cast<int>(LengthUnit::kpc)] = in.kpc_per_pixel;
  plan.unit_px[static_cast<int>(LengthUnit::mpc)] = in.kpc_per_pixel * 1e-3;
  for (const auto& p : settings.power_ratios)
    if ((p.ln_unit == LengthUnit::kpc || p.ln_unit == LengthUnit::mpc) && !(in.kpc_per_pixel > 0.0))
      throw core::ConfigError("morphology: power ratios with ln R in kpc need kpc_per_pixel > 0");

  // Stage 1: peak on the unfilled full image, to place the crop.
  core::RandomStream raw_rng(settings.seed, kRawStream);
  RefillSettings none = settings.refill;
  none.method = RefillMethod::none;
  PixelPoint centre0 = in.centre;
  if (in.find_centre) {
    core::RandomStream unused(settings.seed, kRawStream + 1);
    const PreparedImage full = prepare_input(in, none, unused);
    PeakSettings ps = settings.peak;
    const PeakResult p = find_peak(full.flux, ps, in.centre);
    if (!p.found) throw core::InputError("morphology: no peak found (image empty or fully masked)");
    centre0 = p.refined;
  }
  const double Rneed = largest_radius(settings) + settings.asymmetry.search_radius_px;
  const double half = 1.25 * Rneed + 4.0 * settings.peak.smooth_sigma_px + 8.0 +
                      (settings.smoothness.radius_px > 0.0 ? 2.0 * smoothness_half_width(settings.smoothness) + 2.0 : 0.0);
  const int x0 = static_cast<int>(std::floor(centre0.x - half)), x1 = static_cast<int>(std::ceil(centre0.x + half));
  const int y0 = static_cast<int>(std::floor(centre0.y - half)), y1 = static_cast<int>(std::ceil(centre0.y + half));
  const PreparedImage base = prepare_input(in, settings.refill, raw_rng, x0, x1, y0, y1);
  plan.x0 = base.x_origin;
  plan.y0 = base.y_origin;
  plan.input_centre = {centre0.x - plan.x0, centre0.y - plan.y0};
  if (!in.find_centre) plan.input_centre = {in.centre.x - plan.x0, in.centre.y - plan.y0};
  // With find_centre the crop-stage peak search starts from the stage-1 peak only
  // through the search radius (if any); input_centre holds that guess.

  Indicators out;
  out.realisations = settings.realisations;
  out.seed = settings.seed;
  out.source = settings.source;
  out.crop_x0 = plan.x0;
  out.crop_y0 = plan.y0;
  out.crop_nx = base.flux.nx();
  out.crop_ny = base.flux.ny();

  Frame f0;
  f0.flux = &base.flux;
  f0.variance = &base.variance;
  f0.counts = &base.counts;
  f0.bkg = &base.bkg;
  f0.rel_exposure = &base.rel_exposure;
  f0.has_background = in.background.has_value() || in.background_level > 0.0;

  std::vector<double> raw;
  std::vector<SlotInfo> info;
  Workspace ws0;
  {
    Sink sink{&raw, &info};
    compute_all(f0, plan, ws0, raw_rng, sink, &out, &plan);
  }
  const std::size_t nslots = raw.size();

  // Expected mode: the noise-free reference and the Poisson means.
  std::vector<double> reference(nslots, kNaN);
  PreparedImage expected;
  const bool exp_mode = settings.source == RealisationSource::expected;
  if (exp_mode) {
    expected = prepare_expected(in, settings.refill, base.x_origin, base.x_origin + base.flux.nx() - 1, base.y_origin,
                                base.y_origin + base.flux.ny() - 1);
    Frame fe = f0;
    fe.flux = &expected.flux;
    fe.variance = &expected.variance;
    fe.counts = &expected.counts;
    std::vector<double> ref;
    Sink sink{&ref, nullptr};
    core::RandomStream rng(settings.seed, kRawStream + 2);
    compute_all(fe, plan, ws0, rng, sink, nullptr);
    reference = ref;
  }

  // Realisations.
  std::vector<std::vector<double>> real;
  if (settings.realisations > 0) {
    const Realiser realiser(base, exp_mode ? expected : base);
    int threads = settings.threads > 0 ? settings.threads : core::max_threads();
    threads = std::max(1, std::min(threads, settings.realisations));
    std::vector<Workspace> wss(static_cast<std::size_t>(threads));
    const Plan& cplan = plan;
    real = run_realisations(settings.realisations, threads, nslots, [&](int k, int t, std::vector<double>& row) {
      Workspace& ws = wss[static_cast<std::size_t>(t)];
      core::RandomStream rng(settings.seed, static_cast<std::uint64_t>(k));
      realiser.draw(rng, ws.flux, ws.variance, ws.counts);
      Frame f = f0;
      f.flux = &ws.flux;
      f.variance = &ws.variance;
      f.counts = &ws.counts;
      Sink sink{&row, nullptr};  // background terms of the raw call are reused
      compute_all(f, cplan, ws, rng, sink, nullptr, nullptr, true);
    });
  }
  out.values.reserve(nslots);
  std::vector<double> samples(real.size());
  for (std::size_t j = 0; j < nslots; ++j) {
    for (std::size_t k = 0; k < real.size(); ++k) samples[k] = real[k].size() == nslots ? real[k][j] : kNaN;
    NamedEstimate e;
    e.name = info[j].name;
    e.aperture = info[j].aperture;
    e.convention = info[j].convention;
    e.value = summarise(raw[j], samples, info[j].mode, reference[j], info[j].period);
    out.values.push_back(std::move(e));
  }

  // Details to input coordinates.
  shift(out.peak.refined, plan.x0, plan.y0);
  out.peak.ix += plan.x0;
  out.peak.iy += plan.y0;
  shift(out.centroid.centre, plan.x0, plan.y0);
  for (auto& p : out.power_ratios) shift(p.origin, plan.x0, plan.y0);
  shift(out.asymmetry.centre, plan.x0, plan.y0);
  shift(out.gini_m20.centre, plan.x0, plan.y0);
  shift(out.ellipticity.centre, plan.x0, plan.y0);

  // Flags.
  const int NX = in.counts.nx(), NY = in.counts.ny();
  const PixelPoint pk = out.peak.refined;
  const PixelPoint pk_crop{pk.x - plan.x0, pk.y - plan.y0};
  const double Rmax = largest_radius(settings);
  {
    const CircleSums cs = circle_sums(base.flux.data(), base.flux.nx(), base.flux.ny(), pk_crop.x, pk_crop.y, Rmax);
    out.net_counts = cs.f;
    double bad = 0.0, area = 0.0;
    for_each_in_circle(base.flux.nx(), base.flux.ny(), pk_crop.x, pk_crop.y, Rmax,
                       [&](int, int, std::size_t i, double, double, double w) {
                         area += w;
                         if (!base.good[i]) bad += w;
                       });
    const double full_area = core::constants::kPi * Rmax * Rmax;
    bad += std::max(0.0, full_area - area);  // outside the image counts as missing
    out.masked_fraction = full_area > 0.0 ? bad / full_area : 0.0;
  }
  auto& fl = out.flags;
  // Mean S/N per pixel in the Gini/M20 aperture (Lotz et al. 2004: M20 and G are
  // reliable to ~10% above S/N 3 per pixel).
  if (settings.gini_m20.radius_px > 0.0) {
    const PixelPoint gc{out.gini_m20.centre.x - plan.x0, out.gini_m20.centre.y - plan.y0};
    double sn = 0.0;
    int np = 0;
    for_each_in_circle(base.flux.nx(), base.flux.ny(), gc.x, gc.y, settings.gini_m20.radius_px,
                       [&](int, int, std::size_t i, double, double, double) {
                         const double v = base.variance.pixels()[i];
                         if (base.good[i] && v > 0.0) sn += base.flux.pixels()[i] / std::sqrt(v);
                         ++np;
                       });
    out.mean_pixel_sn = np > 0 ? sn / np : 0.0;
    if (out.mean_pixel_sn < settings.min_pixel_sn) {
      fl.low_pixel_sn = true;
      fl.notes.push_back("mean S/N per pixel " + fmt(out.mean_pixel_sn) + " in the Gini/M20 aperture (< " +
                         fmt(settings.min_pixel_sn) + "): G and M20 noise-dominated");
    }
  }
  if (out.net_counts < settings.low_counts_net) {
    fl.low_counts = true;
    fl.notes.push_back("low counts: " + fmt(out.net_counts) + " net counts within " + fmt(Rmax) + " px (< " +
                       fmt(settings.low_counts_net) + ")");
  }
  if (out.masked_fraction > settings.large_mask_fraction) {
    fl.large_masked_fraction = true;
    fl.notes.push_back("masked fraction " + fmt(out.masked_fraction) + " within " + fmt(Rmax) + " px");
  }
  const double margin = settings.edge_margin_px > 0.0 ? settings.edge_margin_px
                                                      : std::max(5.0, 3.0 * settings.peak.smooth_sigma_px);
  const double edge = std::min({pk.x + 0.5, NX - 0.5 - pk.x, pk.y + 0.5, NY - 0.5 - pk.y});
  if (edge < margin) {
    fl.centre_near_edge = true;
    fl.notes.push_back("peak " + fmt(edge) + " px from the image edge");
  }
  const auto check_ap = [&](const std::string& what, PixelPoint c, double R) {
    if (R > 0.0 && !circle_inside_image(NX, NY, c.x, c.y, R)) {
      fl.aperture_beyond_image = true;
      fl.notes.push_back("aperture beyond image: " + what + " (" + fmt(R) + " px)");
    }
  };
  for (const auto& c : settings.concentration) check_ap("c " + c.label, pk, c.r2_px);
  for (const auto& c : settings.centroid_shift) check_ap("w " + c.label, pk, c.r_max_px);
  for (std::size_t i = 0; i < settings.power_ratios.size(); ++i)
    check_ap("P_m " + settings.power_ratios[i].label, out.power_ratios[i].origin, settings.power_ratios[i].radius_px);
  check_ap("A " + settings.asymmetry.label, out.asymmetry.centre, settings.asymmetry.radius_px);
  if (settings.photon_asymmetry.r500_px > 0.0)
    check_ap("A_phot", pk, settings.photon_asymmetry.r500_px * settings.photon_asymmetry.edges_r500.back());
  check_ap("gini/M20 " + settings.gini_m20.label, out.gini_m20.centre, settings.gini_m20.radius_px);
  check_ap("ellipticity " + settings.ellipticity.label, out.ellipticity.centre, settings.ellipticity.radius_px);
  if (!base.refill.unfilled.empty()) {
    fl.unfilled_pixels = true;
    fl.notes.push_back(std::to_string(base.refill.unfilled.size()) + " bad pixels left unfilled (weight 0)");
  }
  if (out.asymmetry.pairs_outside) {
    fl.asymmetry_pairs_outside = true;
    fl.notes.push_back("asymmetry: rotated partners outside the image were excluded");
  }

  // Classes.
  for (const auto& name : settings.presets) out.classes.push_back(classify(out.values, classification_preset(name)));
  for (const auto& sch : settings.schemes) out.classes.push_back(classify(out.values, sch));
  return out;
}

}  // namespace icmscope::morphology
