#pragma once
// Running a Python cross-check script with Debian's /usr/bin/python3 (numpy,
// astropy, h5py) from an io test.
#include <filesystem>
#include <fstream>
#include <string>

#include "test_support.hpp"

namespace icmscope::testing {

struct PyResult {
  int status = -1;
  std::string out;  // stdout and stderr
};

// Writes `code` to <dir>/<name>.py and runs it with `args`; the script's
// stdout + stderr is returned. Scripts print "key value ..." lines.
inline PyResult run_python(const std::filesystem::path& dir, const std::string& name, const std::string& code,
                           const std::string& args = "") {
  const auto script = dir / (name + ".py");
  {
    std::ofstream f(script);
    f << code;
  }
  PyResult r;
  r.out = run_capture(python() + " '" + script.string() + "' " + args + " 2>&1", &r.status);
  return r;
}

}  // namespace icmscope::testing
