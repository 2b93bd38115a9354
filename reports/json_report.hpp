// The machine-readable analysis document of docs/output.md (keys in SI base units;
// a quantity that does not exist, such as the bandwidth of a response that never falls
// 3 dB inside the analysed span, is null).
#pragma once

#include <nlohmann/json.hpp>

#include "models/analysis.hpp"
#include "models/chain.hpp"

namespace peakplan {

struct JsonOptions {
  bool include_response = true;  // sampled frequency response per output
};

nlohmann::json stage_values_json(const ChainStage& stage);
nlohmann::json analysis_json(const Chain& chain, const ChainAnalysis& analysis,
                             const JsonOptions& options = {});

}  // namespace peakplan
