// Reading a chain-file key back out of a resolved stage, shared by the sweep's table of chosen
// values (planner/sweep.cpp) and the report's planned-value table (reports/budget.cpp).
#pragma once

#include <string_view>

#include "models/chain.hpp"

namespace peakplan {

// The SI value that `key` (a [[stage]] key: gm, rd, c_in, c_out, c_load, r_load or one of the
// stage kind's parameters, or tail_current) has in `stage`. For a T-coil, r_l (which sets both halves) reads
// r_l1. NaN for a key the stage's kind does not have.
double stage_value(const ChainStage& stage, std::string_view key);

}  // namespace peakplan
