#include "verbs.hpp"

namespace icmscope::cli {

const std::vector<Verb>& verbs() {
  static const std::vector<Verb> all = {};
  return all;
}

}  // namespace icmscope::cli
