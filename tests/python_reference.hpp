#pragma once
// Reference values from a /usr/bin/python3 script (astropy, scipy, numpy):
// the script prints rows of numbers, one row a line. Catch2 tests only.
#include <catch2/catch.hpp>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "test_support.hpp"

namespace icmscope::testing {

// Runs `script` (written to a scratch folder `name`) and returns its stdout
// lines as numbers; the test fails when the script fails or prints nothing.
inline std::vector<std::vector<double>> python_rows(const std::string& name, const std::string& script) {
  const auto dir = scratch_dir(name);
  const auto path = dir / "ref.py";
  std::ofstream(path) << script;
  int status = -1;
  const std::string out = run_capture(python() + " " + path.string() + " 2>&1", &status);
  INFO("python output: " << out);
  REQUIRE(status == 0);
  std::vector<std::vector<double>> rows;
  std::istringstream is(out);
  std::string line;
  while (std::getline(is, line)) {
    std::istringstream ls(line);
    std::vector<double> r;
    double v;
    while (ls >> v) r.push_back(v);
    if (!r.empty()) rows.push_back(r);
  }
  REQUIRE(!rows.empty());
  return rows;
}

}  // namespace icmscope::testing
