// What-if loading for analyze and plan: a chain file with --set overrides and --lock stages.
//
// --lock ID,... fixes the named [[stage]]s at their current values so that a plan only moves
// the others. A locked stage whose values are all fixed in the file keeps them (the file
// already fixes it). A locked stage with open values ("auto", ranges, kind lists, counts) is
// fixed at what the plan of the file as written (without --set) chooses for it: that plan is
// made first and the stage's table replaced by the one the planner writes (planned_chain_toml),
// so the fixed values are exactly the plan's. --set is applied after the locks, so a --set on
// a locked stage wins over the lock for that key.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"

namespace peakplan {

struct WhatIf {
  std::vector<std::string> sets;   // "ID.KEY=VALUE", as given after --set
  std::vector<std::string> locks;  // [[stage]] ids, as given after --lock
};

struct WhatIfSpec {
  ChainSpec spec;
  // The plan of the file as written, when a locked stage needed one; its status is worth
  // telling the user, since the locked values come from it.
  std::optional<Plan::Termination> baseline;
  std::vector<std::string> locked_from_plan;  // ids fixed at the baseline plan's values
};

// Loads `path` with the what-if applied; nullopt with diagnostics on any input error (a
// malformed --set, an unknown id: each named by its option, with the closest valid id).
std::optional<WhatIfSpec> load_what_if(const std::string& path, const WhatIf& what_if, Diagnostics& diagnostics,
                                       const PlanOptions& options = {});

// True when the stage leaves anything to the planner: a value, its kind or its count.
bool has_open_values(const StageSpec& stage);

}  // namespace peakplan
