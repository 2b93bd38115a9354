// A new user's first plan (invented, as every test chain): 20 dB at 40 GHz from shunt or T-coil
// stages, the count and the devices open, an overshoot limit alone, the default objective. As
// first written it had no c_out_ratio and no c_load, and planned nonsense (tests in
// test_plan_bounds.cpp and test_planning_suite.cpp say what, and what it plans now).
#pragma once

#include <string>

namespace peakplan::test {

// The chain with `technology` appended to its [technology] table and `stage` to its [[stage]]
// (each a line or lines ending in a newline). Without the first, [[stage]] is line 10.
inline std::string first_plan_chain(const std::string& technology = "", const std::string& stage = "") {
  return R"([chain]
name = "first plan"
[target]
gain = "20 dB"
bandwidth = "40 GHz"
[limits]
overshoot = "5 %"
[technology]
ft = "200 GHz"
)" + technology + R"([[stage]]
id = "a"
kind = ["shunt", "tcoil"]
count = "auto"
gm = "auto"
rd = "auto"
)" + stage;
}

}  // namespace peakplan::test
