#include "verb_common.hpp"

#include <iostream>
#include <utility>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "icmscope/core/errors.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

VerbCommand::VerbCommand(std::string verb, const std::string& usage, std::string positional)
    : verb_(std::move(verb)), positional_(std::move(positional)), visible_(usage) {
  visible_.add_options()("help,h", "this text");
}

void VerbCommand::add_printer(const char* option, const char* help, std::function<std::string()> text) {
  visible_.add_options()(option, help);
  printers_.emplace_back(option, std::move(text));
}

void VerbCommand::add_threads_and_quiet(const char* quiet_help) {
  visible_.add_options()("threads", po::value<int>()->default_value(0),
                         "OpenMP threads (0 = OMP_NUM_THREADS or all cores)")("quiet,q", quiet_help);
}

bool VerbCommand::parse(const std::vector<std::string>& args) {
  po::options_description all;
  all.add(visible_);
  po::positional_options_description pos;
  if (!positional_.empty()) {
    po::options_description hidden;
    hidden.add_options()(positional_.c_str(), po::value<std::string>());
    all.add(hidden);
    pos.add(positional_.c_str(), 1);
  }
  po::store(po::command_line_parser(args).options(all).positional(pos).run(), vm_);
  po::notify(vm_);
  if (has("help")) {
    std::cout << visible_ << "\n";
    return true;
  }
  for (const auto& [option, text] : printers_)
    if (has(option.c_str())) {
      std::cout << text();
      return true;
    }
  return false;
}

std::string VerbCommand::positional(const std::string& what) const {
  if (positional_.empty() || !has(positional_.c_str()))
    throw core::ConfigError("missing " + what + " (see icmscope " + verb_ + " --help)");
  return text(positional_.c_str());
}

void VerbCommand::apply_threads() const { set_threads(vm_["threads"].as<int>()); }

std::optional<std::uint64_t> VerbCommand::seed(const char* option) const {
  if (!has(option)) return std::nullopt;
  const long long v = vm_[option].as<long long>();
  if (v < 0) throw core::ConfigError(std::string("--") + option + ": expected >= 0, got " + std::to_string(v));
  return static_cast<std::uint64_t>(v);
}

void note_override(std::string& resolved_yaml, const std::string& key, const std::string& value) {
  resolved_yaml += "# " + key + " overridden on the command line: " + value + "\n";
}

void set_threads(int n) {
  if (n < 0) throw core::ConfigError("--threads: expected >= 0, got " + std::to_string(n));
#ifdef _OPENMP
  if (n > 0) omp_set_num_threads(n);
#endif
}

}  // namespace icmscope::cli
