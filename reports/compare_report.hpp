// Two chains side by side: the main output's metrics and the per-stage values (stages matched
// by id, the copies of a counted stage by their copy ids), with deltas B - A, and relative
// changes where a ratio means something (not for dB, percentages or eye fractions). Reports
// read the two analyses; they compute nothing but differences.
#pragma once

#include <nlohmann/json.hpp>
#include <optional>
#include <string>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "planner/input/chain_settings.hpp"
#include "planner/planner.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {

struct CompareSide {
  std::string file;
  const Chain& chain;
  const ChainAnalysis& analysis;
  // Set when the file left values open and was planned first: that plan's status.
  std::optional<Plan::Termination> planned;
  // Set when the file has [variation]: its corners and Monte Carlo run (as analyze runs them).
  const VariationResult* variation = nullptr;
};

// {"a": {file, chain, planned, status}, "b": ..., "main_output": {"a": node, "b": node},
//  "metrics": {KEY: {"a", "b", "delta", "relative_pct"}}, with KEY as in `analyze --json`
//  (dc_gain_db, bandwidth_hz, ..., and pda_height, prbs_height, prbs_width_ui from the eye),
//  "stages": [{"id", "in": "both" | "a_only" | "b_only", "a": {...} | null, "b": ...,
//  "delta": {KEY: {"delta", "relative_pct"}}}],
//  "settings": [{"key", "a", "b"}] (every setting the files differ in, TOML text as written,
//  null where a file leaves the key out), "signals_differ": bool, and when either file has
//  [variation] "variation": {"worst": {KEY: {"a", "b", "delta", "a_corner", "b_corner"}},
//  "overall_yield": {"a", "b", "delta"}} (a side without [variation]: null)}. Values SI; null
//  where a value does not exist.
nlohmann::json compare_json(const CompareSide& a, const CompareSide& b, const std::vector<SettingDifference>& settings);
std::string compare_text(const CompareSide& a, const CompareSide& b, const std::vector<SettingDifference>& settings);

}  // namespace peakplan
