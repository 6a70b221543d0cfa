#pragma once
// Write-then-rename: an output is written under a temporary name in the
// directory of its final path and renamed over it only when complete, so no
// half-written file is ever left under the final name.
#include <atomic>
#include <filesystem>
#include <string>
#include <system_error>

#include <unistd.h>

#include "icmscope/core/errors.hpp"

namespace icmscope::io::detail {

class TempOutput {
 public:
  explicit TempOutput(const std::string& final_path) : final_(final_path) {
    namespace fs = std::filesystem;
    if (final_path.empty()) throw core::OutputError("output path is empty");
    const fs::path p(final_path);
    if (p.filename().empty()) throw core::OutputError(final_path + ": output path names a directory");
    fs::path dir = p.parent_path();
    if (dir.empty()) dir = ".";
    std::error_code ec;
    if (!fs::is_directory(dir, ec))
      throw core::OutputError(final_path + ": directory '" + dir.string() + "' does not exist");
    if (fs::is_directory(p, ec)) throw core::OutputError(final_path + ": is a directory");
    static std::atomic<unsigned> counter{0};
    temp_ = (dir / ("." + p.filename().string() + ".tmp-" + std::to_string(::getpid()) + "-" +
                    std::to_string(counter++)))
                .string();
  }
  TempOutput(const TempOutput&) = delete;
  TempOutput& operator=(const TempOutput&) = delete;
  ~TempOutput() {
    if (!committed_) {
      std::error_code ec;
      std::filesystem::remove(temp_, ec);
    }
  }

  const std::string& temp_path() const { return temp_; }
  const std::string& final_path() const { return final_; }

  // Renames the finished temporary file to the final path.
  void commit() {
    std::error_code ec;
    std::filesystem::rename(temp_, final_, ec);
    if (ec) throw core::OutputError(final_ + ": cannot rename the finished temporary file: " + ec.message());
    committed_ = true;
  }

 private:
  std::string final_;
  std::string temp_;
  bool committed_ = false;
};

}  // namespace icmscope::io::detail
