#pragma once
// Run log: lines to stderr (unless quiet) and optionally to a log file.
// Warnings go to stderr even when quiet, except for a quiet log with a file
// (a survey target's log): there they stay in the file, so the progress
// display of a parallel survey is not interleaved with them.
#include <fstream>
#include <memory>
#include <string>

namespace icmscope::pipeline {

class Log {
 public:
  explicit Log(bool quiet = false) : quiet_(quiet) {}
  void open_file(const std::string& path);
  void info(const std::string& line);
  void warn(const std::string& line);
  bool quiet() const { return quiet_; }

 private:
  bool quiet_;
  std::shared_ptr<std::ofstream> file_;
};

}  // namespace icmscope::pipeline
