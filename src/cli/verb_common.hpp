#pragma once
// Shared helpers for the verb files: the frame every verb has (usage text,
// -h/--help, options that print an example file and exit, one positional
// file, --threads, --quiet) and the record of command-line overrides in a
// resolved configuration.
#include <cstdint>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include <boost/program_options.hpp>

namespace icmscope::cli {

class VerbCommand {
 public:
  // verb: the verb's name (for "see icmscope VERB --help"); usage: the help
  // text above the options; positional: the hidden option holding the one
  // positional argument ("" = none).
  VerbCommand(std::string verb, const std::string& usage, std::string positional = "");

  // An option that prints text() and exits 0 (--example and the like).
  void add_printer(const char* option, const char* help, std::function<std::string()> text);
  // The verb's own options, shown after -h/--help and the printers.
  boost::program_options::options_description_easy_init options() { return visible_.add_options(); }
  // --threads (OpenMP threads; 0 = the default) and -q/--quiet, shown last.
  void add_threads_and_quiet(const char* quiet_help = "print only warnings and errors");

  // Parses args (without the verb); unknown options are errors. True when
  // --help or a printer ran: the verb then returns 0.
  bool parse(const std::vector<std::string>& args);

  const boost::program_options::variables_map& vm() const { return vm_; }
  bool has(const char* option) const { return vm_.count(option) > 0; }
  std::string text(const char* option) const { return vm_[option].as<std::string>(); }
  bool quiet() const { return has("quiet"); }
  // The positional file, or a ConfigError "missing WHAT (see icmscope VERB --help)".
  std::string positional(const std::string& what) const;
  // Sets the OpenMP thread count from --threads (ConfigError if negative).
  void apply_threads() const;
  // A seed option's value, checked >= 0 (nullopt when not given).
  std::optional<std::uint64_t> seed(const char* option = "seed") const;
  const std::string& verb() const { return verb_; }

 private:
  std::string verb_, positional_;
  boost::program_options::options_description visible_;
  std::vector<std::pair<std::string, std::function<std::string()>>> printers_;
  boost::program_options::variables_map vm_;
};

// Appends "# KEY overridden on the command line: VALUE" to a resolved YAML text.
void note_override(std::string& resolved_yaml, const std::string& key, const std::string& value);

// Set the OpenMP thread count (0 = leave the default).
void set_threads(int n);

}  // namespace icmscope::cli
