#pragma once
// One error policy: typed exceptions per layer, all deriving from Error
// (a std::runtime_error). Every message names the file, key or field and what
// was expected, on one line. The CLI maps them to exit codes.
#include <stdexcept>
#include <string>

namespace icmscope::core {

class Error : public std::runtime_error {
 public:
  using std::runtime_error::runtime_error;
  virtual int exit_code() const { return 1; }
};

// A YAML or command-line setting is wrong: unknown key, wrong type, out of range.
class ConfigError : public Error {
 public:
  using Error::Error;
  int exit_code() const override { return 2; }
};

// An input file is unreadable, malformed, or holds unusable data (NaN cells ...).
class InputError : public Error {
 public:
  using Error::Error;
  int exit_code() const override { return 3; }
};

// Writing an output failed (permissions, disk full, CFITSIO status ...).
class OutputError : public Error {
 public:
  using Error::Error;
  int exit_code() const override { return 4; }
};

// A physics or numerics routine was called outside its domain.
class DomainError : public Error {
 public:
  using Error::Error;
  int exit_code() const override { return 5; }
};

}  // namespace icmscope::core
