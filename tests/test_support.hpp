#pragma once
// Helpers shared by the Catch2 tests: paths to the source tree, a scratch
// directory per test, and running /usr/bin/python3 for reference values.
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

namespace icmscope::testing {

inline std::filesystem::path source_dir() { return ICMSCOPE_SOURCE_DIR; }
inline std::filesystem::path binary_dir() { return ICMSCOPE_BINARY_DIR; }

// A fresh, empty scratch directory under the build tree.
inline std::filesystem::path scratch_dir(const std::string& name) {
  auto p = binary_dir() / "test_scratch" / name;
  std::filesystem::remove_all(p);
  std::filesystem::create_directories(p);
  return p;
}

// Run a shell command and return its standard output (empty on failure).
inline std::string run_capture(const std::string& cmd, int* status = nullptr) {
  std::string out;
  FILE* f = popen(cmd.c_str(), "r");
  if (!f) return out;
  char buf[4096];
  size_t n;
  while ((n = fread(buf, 1, sizeof buf, f)) > 0) out.append(buf, n);
  int st = pclose(f);
  if (status) *status = st;
  return out;
}

inline std::string python() { return "/usr/bin/python3"; }

}  // namespace icmscope::testing
