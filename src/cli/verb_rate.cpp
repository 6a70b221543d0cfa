// icmscope rate --kT-keV T [--Z-solar Z] [--redshift z] [--nH-cm2 N] [--band-keV lo,hi] [--instrument FILE]
#include <cstdio>
#include <iostream>
#include <sstream>

#include <boost/program_options.hpp>

#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/count_rate.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

namespace {
void parse_band(const std::string& text, double& lo, double& hi) {
  std::string t = text;
  for (char& c : t)
    if (c == ',') c = ' ';
  std::istringstream in(t);
  std::string rest;
  if (!(in >> lo >> hi) || (in >> rest))
    throw core::ConfigError("--band-keV '" + text + "': expected two numbers lo,hi (keV), e.g. 0.5,2");
}
}  // namespace

int run_rate(const std::vector<std::string>& args) {
  VerbCommand cmd("rate",
      "icmscope rate --kT-keV T [options]\n\n"
      "An isothermal plasma (icmscope's continuum: free-free + recombination, no lines), redshifted and absorbed\n"
      "by the Galactic column (Morrison & McCammon 1983), through an instrument's on-axis effective area:\n"
      "count rate per unit band flux, flux per count rate, and, given a flux (and an exposure), the count rate\n"
      "(and counts). Fluxes are band fluxes in the same observed band, absorbed (as observed) unless\n"
      "--unabsorbed. No vignetting, PSF losses or background: see `icmscope observe` for those.\n\noptions");
  cmd.options()
      ("kT-keV", po::value<double>(), "plasma temperature [keV] (required)")
      ("Z-solar", po::value<double>()->default_value(0.3), "metallicity [solar units of the abundance set]")
      ("redshift", po::value<double>()->default_value(0.0), "redshift")
      ("nH-cm2", po::value<double>()->default_value(3e20, "3e20"), "Galactic column [cm^-2]")
      ("band-keV", po::value<std::string>()->default_value("0.5,2"), "observed band lo,hi [keV]")
      ("instrument", po::value<std::string>()->default_value("flat"),
       "instrument file (e.g. config/instruments/vasta_la.yaml), or 'flat' for 1 cm^2 at all energies")
      ("flux-erg-cm2-s", po::value<double>(), "band flux of the source [erg cm^-2 s^-1] (absorbed unless --unabsorbed)")
      ("unabsorbed", "the flux given is the unabsorbed band flux")
      ("exposure-ks", po::value<double>(), "exposure [ks]: expected counts for the flux")
      ("abundances", po::value<std::string>()->default_value("anders_grevesse_1989"),
       "abundance set: anders_grevesse_1989 | asplund_2009")
      ("no-recombination", "free-free only (no recombination continuum)")
      ("json", "print JSON instead of the table");
  if (cmd.parse(args)) return 0;
  const auto& vm = cmd.vm();
  if (!vm.count("kT-keV")) throw core::ConfigError("--kT-keV is required (see icmscope rate --help)");
  pipeline::RateRequest q;
  q.kT_keV = vm["kT-keV"].as<double>();
  q.Z_solar = vm["Z-solar"].as<double>();
  q.redshift = vm["redshift"].as<double>();
  q.nH_cm2 = vm["nH-cm2"].as<double>();
  parse_band(vm["band-keV"].as<std::string>(), q.band_min_keV, q.band_max_keV);
  q.instrument = vm["instrument"].as<std::string>();
  q.abundances = vm["abundances"].as<std::string>();
  if (q.abundances != "anders_grevesse_1989" && q.abundances != "asplund_2009" && q.abundances != "ag89" &&
      q.abundances != "a09")
    throw core::ConfigError("--abundances '" + q.abundances + "': expected anders_grevesse_1989 or asplund_2009");
  q.recombination = vm.count("no-recombination") == 0;
  if (vm.count("flux-erg-cm2-s")) q.flux_erg_cm2_s = vm["flux-erg-cm2-s"].as<double>();
  q.flux_unabsorbed = vm.count("unabsorbed") > 0;
  if (q.flux_unabsorbed && !vm.count("flux-erg-cm2-s"))
    throw core::ConfigError("--unabsorbed needs --flux-erg-cm2-s");
  if (vm.count("exposure-ks")) {
    q.exposure_ks = vm["exposure-ks"].as<double>();
    if (!vm.count("flux-erg-cm2-s")) throw core::ConfigError("--exposure-ks needs --flux-erg-cm2-s");
  }
  const auto r = pipeline::compute_rate(q);
  std::cout << (vm.count("json") ? pipeline::rate_json(q, r) : pipeline::rate_table_text(q, r));
  return 0;
}

}  // namespace icmscope::cli
