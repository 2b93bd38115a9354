// The terminal view of an analysis: a per-stage table and a per-output table in engineering units.
#pragma once

#include <string>

#include "models/analysis.hpp"
#include "models/chain.hpp"

namespace peakplan {

std::string analysis_text(const Chain& chain, const ChainAnalysis& analysis);
// The receiver section (models/receiver.hpp), empty unless the chain takes a photocurrent.
std::string receiver_text(const Chain& chain, const ChainAnalysis& analysis);
// The large-signal section (docs/physics.md (large signals)), empty when no output has one.
std::string large_signal_text(const Chain& chain, const ChainAnalysis& analysis);
// "L 180 pH" / "L1 200 pH, L2 200 pH, k 0.333, Cb 6.3 fF": the load elements of one stage.
std::string load_elements_text(const StageCircuit& circuit);

}  // namespace peakplan
