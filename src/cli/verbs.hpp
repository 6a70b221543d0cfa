#pragma once
// The verbs of the icmscope command line. Each verb lives in its own file,
// parses its options with Boost.Program_options and calls one pipeline function.
#include <string>
#include <vector>

namespace icmscope::cli {

struct Verb {
  const char* name;
  const char* summary;
  int (*run)(const std::vector<std::string>& args);  // args exclude the verb itself
};

// All verbs, in the order --help lists them.
const std::vector<Verb>& verbs();

}  // namespace icmscope::cli
