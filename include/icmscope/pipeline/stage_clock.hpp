#pragma once
// Wall-clock timing of pipeline stages (the seconds_* figures of run results
// and log lines): a monotonic clock and the seconds elapsed since a start.
#include <chrono>

namespace icmscope::pipeline {

using clock_type = std::chrono::steady_clock;

inline double seconds_since(clock_type::time_point t0) {
  return std::chrono::duration<double>(clock_type::now() - t0).count();
}

}  // namespace icmscope::pipeline
