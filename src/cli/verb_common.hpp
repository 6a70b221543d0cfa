#pragma once
// Shared helpers for the verb files.
#include <string>
#include <vector>

#include <boost/program_options.hpp>

namespace icmscope::cli {

// Parse args (without the verb) into vm; unknown options are errors.
void parse_args(const std::vector<std::string>& args, const boost::program_options::options_description& visible,
                const boost::program_options::options_description& hidden,
                const boost::program_options::positional_options_description& pos,
                boost::program_options::variables_map& vm);

// Set the OpenMP thread count (0 = leave the default).
void set_threads(int n);

}  // namespace icmscope::cli
