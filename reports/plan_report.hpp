// The plan, shown: the analysis of the planned chain plus the status, every target and limit
// with its margin, and the optimiser's effort.
#pragma once

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "planner/planner.hpp"

namespace peakplan {

nlohmann::json plan_json(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis);
std::string plan_text(const ChainSpec& spec, const Plan& plan, const ChainAnalysis& analysis);
// An analysed chain's targets and limits as the file sets them, each with its margin (analyze's
// text); empty when the file sets none.
std::string checks_text(const std::vector<PlanCheck>& checks);

}  // namespace peakplan
