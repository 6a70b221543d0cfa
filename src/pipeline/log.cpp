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
  // A quiet log with a file (a survey target's) keeps its warnings in the file;
  // otherwise warnings reach stderr even when quiet.
  if (!quiet_ || !file_) std::cerr << "warning: " << line << "\n";
  if (file_) *file_ << "warning: " << line << "\n" << std::flush;
}

}  // namespace icmscope::pipeline
