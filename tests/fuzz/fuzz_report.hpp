// What both fuzz targets do with one input's outcome: an exception (exit 3 in the CLI) aborts,
// so libFuzzer records the input as a crash; a bad-input result must carry diagnostics (exit 2
// with nothing said would be a bug of its own).
#pragma once

#include <cstdio>
#include <cstdlib>
#include <exception>
#include <string>
#include <vector>

#include "chain_path.hpp"

namespace peakplan::fuzz {

template <class Run>
void run_or_abort(Run&& run) {
  PathResult result;
  try {
    result = run();
  } catch (const std::exception& e) {
    std::fprintf(stderr, "fuzz: internal error (exit 3 in the CLI): %s\n", e.what());
    std::abort();
  } catch (...) {
    std::fprintf(stderr, "fuzz: internal error (exit 3 in the CLI): an exception that is not a std::exception\n");
    std::abort();
  }
  if (!result.analysed && result.errors.empty()) {
    std::fprintf(stderr, "fuzz: bad input reported with no diagnostic\n");
    std::abort();
  }
}

}  // namespace peakplan::fuzz
