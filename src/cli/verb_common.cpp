#include "verb_common.hpp"

#ifdef _OPENMP
#include <omp.h>
#endif

#include "icmscope/core/errors.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

void parse_args(const std::vector<std::string>& args, const po::options_description& visible,
                const po::options_description& hidden, const po::positional_options_description& pos,
                po::variables_map& vm) {
  po::options_description all;
  all.add(visible).add(hidden);
  po::store(po::command_line_parser(args).options(all).positional(pos).run(), vm);
  po::notify(vm);
}

void set_threads(int n) {
  if (n < 0) throw core::ConfigError("--threads: expected >= 0, got " + std::to_string(n));
#ifdef _OPENMP
  if (n > 0) omp_set_num_threads(n);
#endif
}

}  // namespace icmscope::cli
