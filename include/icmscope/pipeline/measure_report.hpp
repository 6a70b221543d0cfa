#pragma once
// The three renderings of a measurement (pipeline/measure_run.hpp):
//  - a readable table for people (numbers to 6 significant digits);
//  - JSON for machines (every number at full precision, NaN -> null);
//  - CSV for machines, one row per record, a `kind` column telling what the row
//    holds (meta, aperture, centre, indicator, flag, class, class_probability).
// Apertures are given in pixels, arcsec, kpc and R500 (the last two when known).
#include <string>

#include "icmscope/pipeline/measure_run.hpp"

namespace icmscope::pipeline {

std::string measure_table(const MeasureReport& r);
std::string measure_json(const MeasureReport& r);
std::string measure_csv(const MeasureReport& r);

}  // namespace icmscope::pipeline
