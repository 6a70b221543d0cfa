// icmscope: thin main. Parse the verb, run it, map exceptions to exit codes
// and one-line messages.
#include <cstdio>
#include <exception>
#include <iostream>
#include <string>
#include <vector>

#include <boost/program_options/errors.hpp>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "verbs.hpp"

namespace {

void print_usage() {
  std::cout << "icmscope " << icmscope::core::kVersion
            << ": X-ray views of galaxy clusters, from gas cells to dynamical state\n\n"
               "usage: icmscope <verb> [options]   (icmscope <verb> --help for its options)\n\n"
               "verbs:\n";
  for (const auto& v : icmscope::cli::verbs()) {
    std::printf("  %-9s %s\n", v.name, v.summary);
  }
  std::cout << "\n  --version  print the version\n  --help     this text\n";
}

}  // namespace

int main(int argc, char** argv) {
  std::vector<std::string> args(argv + 1, argv + argc);
  if (args.empty() || args[0] == "--help" || args[0] == "-h" || args[0] == "help") {
    print_usage();
    return args.empty() ? 1 : 0;
  }
  if (args[0] == "--version") {
    std::cout << icmscope::core::kProgram << " " << icmscope::core::kVersion << "\n";
    return 0;
  }
  const std::string verb = args[0];
  args.erase(args.begin());
  for (const auto& v : icmscope::cli::verbs()) {
    if (verb != v.name) continue;
    try {
      return v.run(args);
    } catch (const icmscope::core::Error& e) {
      std::cerr << "icmscope " << verb << ": error: " << e.what() << "\n";
      return e.exit_code();
    } catch (const boost::program_options::error& e) {
      std::cerr << "icmscope " << verb << ": error: " << e.what() << " (see icmscope " << verb << " --help)\n";
      return 2;
    } catch (const std::bad_alloc&) {
      std::cerr << "icmscope " << verb << ": error: out of memory\n";
      return 6;
    } catch (const std::exception& e) {
      std::cerr << "icmscope " << verb << ": error: " << e.what() << "\n";
      return 1;
    }
  }
  std::cerr << "icmscope: error: unknown verb '" << verb << "' (see icmscope --help)\n";
  return 2;
}
