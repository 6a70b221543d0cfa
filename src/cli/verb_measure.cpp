// icmscope measure [MEASURE.yaml] [--counts FILE[HDU] ...]
#include <cmath>
#include <cstdio>
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/measure_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/measure_report.hpp"
#include "icmscope/pipeline/measure_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_measure(const std::vector<std::string>& args) {
  VerbCommand cmd("measure",
      "icmscope measure [MEASURE.yaml] [options]\n\n"
      "Morphology indicators of one counts image (a mock from `observe` or a real observation): centre (peak of\n"
      "the smoothed image, iterated centroid), concentration, centroid shift w, power ratios, rotational and photon\n"
      "asymmetry, Gini/M20, smoothness, ellipticity; noise-bias corrections, 16th/84th percentiles and\n"
      "significance from re-Poissonised realisations; flags; classes with their probabilities.\n"
      "Images are FILE, FILE[EXTNAME] or FILE[HDU number]. Apertures carry their unit: '500 kpc', '1 R500',\n"
      "'90 arcsec', '40 px' (pairs '40/400 kpc'); kpc needs the redshift, R500 also R500 or M500.\n"
      "Options given here override the YAML file (icmscope measure --example prints a complete one).\n"
      "The readable table goes to stdout; --json / --csv / --png write the machine outputs.\n\noptions",
      "run");
  cmd.add_printer("example", "print a complete, commented MEASURE.yaml and exit", config::measure_example_yaml);
  cmd.options()
      ("observation", po::value<std::string>(),
       "the products of `icmscope observe` by DIR/PREFIX: PREFIX_counts.fits, _exposure, _background, _model "
       "(the expected counts); images named below take precedence")
      ("counts", po::value<std::string>(), "counts image FILE[HDU] (default HDU: COUNTS, else the first 2-D image)")
      ("exposure", po::value<std::string>(), "exposure map FILE[HDU] on the counts grid [s or cm**2 s]")
      ("background", po::value<std::string>(), "expected background counts per pixel FILE[HDU] (same grid)")
      ("background-level", po::value<double>(), "flat background [count/pixel at full exposure]")
      ("background-annulus", po::value<std::string>(), "estimate the background in this annulus about the centre, e.g. '1.6/2 R500'")
      ("mask", po::value<std::string>(), "mask image FILE[HDU]: > 0.5 good, else masked (same grid)")
      ("mask-circles", po::value<std::vector<std::string>>(), "CSV of circles to mask: ra_deg, dec_deg, radius_arcsec (repeatable)")
      ("expected", po::value<std::string>(), "mock: noise-free expected counts FILE[HDU] (same grid)")
      ("no-unit-check", "accept any BUNIT")
      ("name", po::value<std::string>(), "target name (default: OBJECT keyword, else the file name)")
      ("redshift", po::value<double>(), "redshift (default: the REDSHIFT keyword if any)")
      ("no-header-redshift", "ignore the REDSHIFT keyword of the image")
      ("r500-kpc", po::value<double>(), "R500 [kpc]")
      ("m500-msun", po::value<double>(), "M500 [Msun]; R500 from it and the cosmology")
      ("centre-ra-deg", po::value<double>(), "given centre RA [deg] (with --centre-dec-deg; default: find)")
      ("centre-dec-deg", po::value<double>(), "given centre Dec [deg]")
      ("centre-search", po::value<std::string>(), "search the peak within this distance of the given centre, e.g. '50 kpc'")
      ("find-centre", "find the centre (overrides a centre of the YAML file)")
      ("realisations", po::value<int>(), "number of realisations (default 100; 0 = raw values only)")
      ("seed", po::value<long long>(), "random seed (default 1)")
      ("source", po::value<std::string>(), "realisations of: observed (default) | expected (needs --expected)")
      ("preset", po::value<std::vector<std::string>>(),
       "classification preset (repeatable; default all): cassano2010 w_two_class w_three_class p3_two_class "
       "p3_three_class santos2008")
      ("json", po::value<std::string>(), "write the JSON here")
      ("csv", po::value<std::string>(), "write the CSV here")
      ("png", po::value<std::string>(), "write a quick-look PNG with the centre and the apertures here")
      ("no-table", "do not print the table");
  cmd.add_threads_and_quiet("print only warnings and errors (and the table)");
  if (cmd.parse(args)) return 0;
  const auto& vm = cmd.vm();
  if (!vm.count("run") && !vm.count("counts") && !vm.count("observation"))
    throw core::ConfigError("missing MEASURE.yaml, --counts FILE or --observation PREFIX (see icmscope measure --help)");
  cmd.apply_threads();
  config::MeasureRunSettings s;
  // --observation replaces the file's inputs.observation: resolved below, after the overrides.
  if (vm.count("run")) s = config::load_measure_run(vm["run"].as<std::string>(), !vm.count("observation"));
  std::string over;
  const auto note = [&](const std::string& key, const std::string& v) { note_override(over, key, v); };
  const auto str = [&](const char* opt) { return vm[opt].as<std::string>(); };
  const auto image = [&](const char* opt, config::ImageRef& ref) {
    if (!vm.count(opt)) return;
    ref = config::parse_image_ref(str(opt), std::string("--") + opt);
    note(std::string("inputs.") + opt, str(opt));
  };
  auto& in = s.inputs;
  image("counts", in.counts);
  image("exposure", in.exposure);
  image("background", in.background);
  image("mask", in.mask);
  image("expected", in.expected);
  if (vm.count("background") || vm.count("background-level") || vm.count("background-annulus")) {
    // The command line chooses the background source: drop the file's.
    if (!vm.count("background")) in.background = {};
    in.background_level = std::nan("");
    in.background_annulus.reset();
  }
  if (vm.count("background-level")) {
    in.background_level = vm["background-level"].as<double>();
    note("inputs.background_level_counts_per_pixel", std::to_string(in.background_level));
  }
  if (vm.count("background-annulus")) {
    in.background_annulus = config::parse_aperture(str("background-annulus"), true, "--background-annulus");
    note("inputs.background_annulus", str("background-annulus"));
  }
  if (vm.count("mask-circles"))
    for (const auto& f : vm["mask-circles"].as<std::vector<std::string>>()) {
      in.mask_circle_files.push_back(f);
      note("inputs.mask_circles_csv", f);
    }
  if (vm.count("observation")) {
    in.observation = str("observation");
    note("inputs.observation", in.observation);
    config::resolve_observation(in);
  }
  if (vm.count("no-unit-check")) {
    in.check_units = false;
    note("inputs.check_units", "false");
  }
  auto& t = s.target;
  if (vm.count("name")) t.name = str("name"), note("target.name", t.name);
  const auto num = [&](const char* opt, double& field, const char* key) {
    if (!vm.count(opt)) return;
    field = vm[opt].as<double>();
    note(key, std::to_string(field));
  };
  num("redshift", t.redshift, "target.redshift");
  if (vm.count("no-header-redshift")) t.header_redshift = false, note("target.header_redshift", "false");
  if (vm.count("r500-kpc")) t.m500_msun = 0.0;
  if (vm.count("m500-msun")) t.r500_kpc = 0.0;
  num("r500-kpc", t.r500_kpc, "target.r500_kpc");
  num("m500-msun", t.m500_msun, "target.m500_msun");
  if (vm.count("centre-ra-deg") || vm.count("centre-dec-deg")) {
    if (!vm.count("centre-ra-deg") || !vm.count("centre-dec-deg"))
      throw core::ConfigError("--centre-ra-deg and --centre-dec-deg go together");
    t.centre_ra_deg = vm["centre-ra-deg"].as<double>();
    t.centre_dec_deg = vm["centre-dec-deg"].as<double>();
    t.find_centre = false;
    t.search_radius.reset();
    note("target.centre", "{ra_deg: " + std::to_string(t.centre_ra_deg) + ", dec_deg: " + std::to_string(t.centre_dec_deg) + "}");
  }
  if (vm.count("centre-search")) {
    t.search_radius = config::parse_aperture(str("centre-search"), false, "--centre-search");
    t.find_centre = true;
    note("target.centre.search_radius", str("centre-search"));
  }
  if (vm.count("find-centre")) {
    if (vm.count("centre-ra-deg")) throw core::ConfigError("--find-centre and --centre-ra-deg exclude each other");
    t.find_centre = true;
    t.search_radius.reset();
    t.centre_ra_deg = t.centre_dec_deg = std::nan("");
    note("target.centre", "find");
  }
  auto& q = s.statistics;
  if (vm.count("realisations")) {
    q.realisations = vm["realisations"].as<int>();
    note("realisations.number", std::to_string(q.realisations));
  }
  if (const auto seed = cmd.seed()) {
    q.seed = *seed;
    note("realisations.seed", std::to_string(*seed));
  }
  if (vm.count("source")) q.source = str("source"), note("realisations.source", q.source);
  if (vm.count("preset")) {
    q.presets = vm["preset"].as<std::vector<std::string>>();
    for (const auto& p : q.presets) note("classification.presets", p);
  }
  const int threads = vm["threads"].as<int>();
  if (threads > 0) q.threads = threads;
  auto& o = s.output;
  if (vm.count("json")) o.json = str("json"), note("output.json", o.json);
  if (vm.count("csv")) o.csv = str("csv"), note("output.csv", o.csv);
  if (vm.count("png")) o.quicklook = str("png"), note("output.quicklook", o.quicklook);
  if (vm.count("no-table")) o.table = false;
  s.resolved_yaml += over;
  config::check_measure_run(s);

  pipeline::Log log(cmd.quiet());
  const auto r = pipeline::run_measure(s, log);
  if (s.output.table) std::cout << pipeline::measure_table(r.report) << std::flush;
  return 0;
}

}  // namespace icmscope::cli
