// The CLI's JSON documents in tests: run the executable expecting an exit status and parse its
// stdout, and compare two of its numbers relatively (doctest's Approx adds an absolute 1 to its
// scale, which would pass any two values as small as a BER or a capacitance).
#pragma once

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace peakplan::test {

inline nlohmann::json run_json(const std::vector<std::string>& args, int expected_status = 0) {
  const auto r = run_cli(args);
  INFO("stderr: " << r.err);
  REQUIRE(r.status == expected_status);
  return nlohmann::json::parse(r.out);
}

// Relative closeness, with an absolute floor for values that are zero (peaking, overshoot).
inline bool close(double a, double b, double relative) {
  return std::fabs(a - b) <= relative * std::max({std::fabs(a), std::fabs(b), 1e-30});
}

}  // namespace peakplan::test
