#pragma once
// One number through a printf format, for log lines and messages ("%.4g" by
// default: four significant digits).
#include <cstdio>
#include <string>

namespace icmscope::core {

inline std::string format_number(double v, const char* printf_format = "%.4g") {
  char b[64];
  std::snprintf(b, sizeof b, printf_format, v);
  return b;
}

}  // namespace icmscope::core
