// The plan, shown: the analysis of the planned chain plus the status, every target and limit
// with its margin, and the optimiser's effort.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "planner/planner.hpp"

namespace peakplan {

nlohmann::json plan_json(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis);
std::string plan_text(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis);

}  // namespace peakplan
