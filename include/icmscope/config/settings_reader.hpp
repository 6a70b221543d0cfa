#pragma once
// Strict YAML reading for every verb. Only the config layer touches yaml-cpp;
// this header hides it behind a small interface.
//
// A SettingsFile loads one YAML file. Sections hand out typed values by key,
// each with an optional default and a range; every value read is recorded
// (path, value, whether it was a default) for the resolved-configuration echo.
// finish() then rejects every key that no reader asked for, with
// file:line:column and the nearest valid key. Duplicate keys are rejected at
// load time (yaml-cpp accepts them silently).
#include <cstdint>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <vector>

namespace icmscope::config {

// Numeric range with open/closed ends, named in error messages.
struct Range {
  double lo = -std::numeric_limits<double>::infinity();
  double hi = std::numeric_limits<double>::infinity();
  bool lo_open = false;
  bool hi_open = false;
  bool allow_infinite = false;  // accept .inf (YAML) as "no limit"
  static Range any() { return {}; }
  static Range positive() { return {0.0, std::numeric_limits<double>::infinity(), true, false}; }
  static Range non_negative() { return {0.0, std::numeric_limits<double>::infinity(), false, false}; }
  static Range closed(double a, double b) { return {a, b, false, false}; }
  static Range at_least(double a) { return {a, std::numeric_limits<double>::infinity(), false, false}; }
  // > 0, and .inf accepted (e.g. an unlimited depth or radius).
  static Range positive_or_unlimited() {
    Range r = positive();
    r.allow_infinite = true;
    return r;
  }
  bool contains(double v) const;
  std::string describe() const;  // e.g. "> 0", "in [0, 90]"
};

// One resolved setting, for the echo written beside outputs and into headers.
struct ResolvedEntry {
  std::string path;   // dotted key path, e.g. "projection.pixels"
  std::string value;  // YAML flow text
  bool is_default = false;
};

class SettingsFile;

class Section {
 public:
  // Dotted path of this section ("" for the top level).
  const std::string& path() const;
  const std::string& file() const;
  bool has(const std::string& key) const;
  bool is_map(const std::string& key) const;
  bool is_sequence(const std::string& key) const;
  bool is_scalar(const std::string& key) const;
  // "file:line:col" of a key (or of the section when key is empty).
  std::string where(const std::string& key = "") const;
  // Throw a ConfigError "file:line:col: path.key: message".
  [[noreturn]] void fail(const std::string& key, const std::string& message) const;

  double number(const std::string& key, std::optional<double> def = std::nullopt,
                Range range = Range::any()) const;
  std::int64_t integer(const std::string& key, std::optional<std::int64_t> def = std::nullopt,
                       Range range = Range::any()) const;
  bool flag(const std::string& key, std::optional<bool> def = std::nullopt) const;
  std::string text(const std::string& key, std::optional<std::string> def = std::nullopt) const;
  // A string from a fixed set of choices (error lists them and the nearest).
  std::string choice(const std::string& key, const std::vector<std::string>& choices,
                     std::optional<std::string> def = std::nullopt) const;
  // A file path; relative paths resolve against the YAML file's folder.
  std::string path_value(const std::string& key, std::optional<std::string> def = std::nullopt) const;
  std::vector<double> numbers(const std::string& key, std::optional<std::vector<double>> def = std::nullopt,
                              Range range = Range::any(), std::size_t min_len = 0,
                              std::size_t max_len = std::numeric_limits<std::size_t>::max()) const;
  std::vector<std::string> texts(const std::string& key,
                                 std::optional<std::vector<std::string>> def = std::nullopt) const;

  // A nested map (error if absent or not a map).
  Section child(const std::string& key) const;
  // A nested map if present (absent -> nullopt; present but not a map -> error).
  std::optional<Section> maybe_child(const std::string& key) const;
  // A list of maps (absent -> empty when allow_missing).
  std::vector<Section> children(const std::string& key, bool allow_missing = false) const;
  // Keys present in this map, in file order.
  std::vector<std::string> keys() const;

  // Mark a key as known without reading it (e.g. read by another layer).
  void accept(const std::string& key) const;

 public:
  struct Impl;  // opaque
 private:
  friend class SettingsFile;
  std::shared_ptr<Impl> impl_;
};

class SettingsFile {
 public:
  // Load a file; parse errors, duplicate keys and unreadable files throw
  // ConfigError with file:line:column.
  static SettingsFile load(const std::string& path);
  // Parse YAML text (name is used in messages, folder for relative paths).
  static SettingsFile parse(const std::string& text, const std::string& name,
                            const std::string& folder = ".");

  Section root() const;
  const std::string& file() const;
  // Reject keys nobody asked for, anywhere in the file. Call after reading.
  void finish() const;
  // Every value read, in reading order.
  std::vector<ResolvedEntry> resolved() const;
  // The resolved configuration as commented YAML (defaults marked).
  std::string resolved_yaml() const;
  // A short stable hash (hex, 16 digits) of the resolved configuration.
  std::string resolved_hash() const;

 public:
  struct State;  // opaque
 private:
  std::shared_ptr<State> state_;
};

// Levenshtein distance (for "did you mean").
std::size_t edit_distance(const std::string& a, const std::string& b);
// The nearest candidate, or "" when none is reasonably close.
std::string nearest(const std::string& word, const std::vector<std::string>& candidates);

}  // namespace icmscope::config
