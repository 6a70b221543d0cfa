#include "icmscope/pipeline/log.hpp"

#include <iostream>

namespace icmscope::pipeline {

void Log::open_file(const std::string& path) {
  file_ = std::make_shared<std::ofstream>(path, std::ios::app);
  if (!*file_) file_.reset();
}

void Log::info(const std::string& line) {
  if (!quiet_) std::cerr << line << "\n";
  if (file_) *file_ << line << "\n" << std::flush;
}

void Log::warn(const std::string& line) {
  std::cerr << "warning: " << line << "\n";
  if (file_) *file_ << "warning: " << line << "\n" << std::flush;
}

}  // namespace icmscope::pipeline
