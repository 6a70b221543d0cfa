#pragma once
// What a survey shows at the end: summary plots of the catalog (PLplot PNG)
// and a short text summary.
//
// Plots (written beside the catalog, <prefix>_*.png):
//   _c_w.png       c(100/500 kpc) vs w(500 kpc) with the Cassano et al. 2010
//                  cuts (c = 0.2, w = 0.012; from memory, unverified), points by
//                  class of the cassano2010 preset, error bars +-(p84 - p16)/2
//   _c_p3.png      c(100/500 kpc) vs P3/P0(500 kpc) with the cuts c = 0.2 and
//                  P3/P0 = 1.2e-7
//   _histograms.png  histograms of c, w and P3/P0 (simulated and observed) with the cuts
//   _los.png       the cluster with the most lines of sight: c(100/500 kpc),
//                  w(500 kpc), w(R500) and P3/P0(R500) per line of sight (error
//                  bars +-(p84 - p16)/2) with the cuts (w(R500) < 0.01: Pratt et
//                  al. 2009, Boehringer et al. 2010; P3/P0(R500) < 1e-7: Weissmann
//                  et al. 2013)
// Values at or below zero after the noise-bias correction are drawn at the
// axis floor of the logarithmic axes.
#include <string>
#include <vector>

#include "icmscope/pipeline/catalog.hpp"
#include "icmscope/pipeline/survey_run.hpp"

namespace icmscope::pipeline {

// Writes the plots; returns their paths (plots without data are skipped).
std::vector<std::string> write_survey_plots(const Catalog& c, const std::string& prefix);

// The text summary: counts of targets, one line per row (net counts, S/N,
// c, w, P3/P0, classes, flags), the failures and the output paths.
std::string survey_summary_text(const std::string& name, const Catalog& c, const SurveyRunResult& r);

}  // namespace icmscope::pipeline
