// The stage graph of a chain file: counted stages expanded into copies, `feeds` edges
// (default: the next [[stage]] in file order), checked for one input, no cycles, known ids,
// one driver per stage and every stage reachable; then resolved into a models Chain.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "planner/input/chain_file.hpp"

namespace peakplan {

struct GraphStage {
  std::string id;       // "a1", or "g.2" for the second copy of a counted stage "g"
  size_t table = 0;     // the [[stage]] table it copies: an index into ChainSpec::stages
  int copy = 0;         // 1-based copy number; 0 when the stage is not counted
  int driver = -1;      // index of the driving GraphStage; -1 = the chain input
};

// The rules of a chain that starts with a transimpedance stage (docs/chain-format.md): a tia is
// the first stage and one stage, a photodiode needs one, and r_source, noise_density and a swing
// (all of a voltage input) cannot go with it. Errors at their keys.
void check_current_input(const ChainSpec& spec, const std::vector<GraphStage>& graph, Diagnostics& diagnostics);

// Stages in file order (copies in sequence). `counts` overrides each spec stage's count (the
// planner's choice); without it every count must be fixed.
std::optional<std::vector<GraphStage>> build_stage_graph(const ChainSpec& spec, Diagnostics& diagnostics,
                                                         const std::vector<int>* counts = nullptr);

// Plausible range of one stage's own gain gm (Rd || r_load) (docs/chain-format.md): -80 .. +80 dB.
inline constexpr double kMinStageGain = 1e-4, kMaxStageGain = 1e4;

// The chain exactly as written: every value must be fixed (no "auto", ranges or kind lists).
// Normalised designs (m, zeta, response) are resolved against the stage's actual load, and
// inductor losses derived from [technology] inductor_q where not given.
std::optional<Chain> resolve_chain(const ChainSpec& spec, Diagnostics& diagnostics);

// The one way from a chain file to a models Chain: read_chain_spec (the text, the overrides,
// every key checked at its position), then resolve_chain. nullopt with diagnostics on any error.
std::optional<Chain> read_chain(const std::string& path, const std::vector<Override>& overrides,
                                Diagnostics& diagnostics);
std::optional<Chain> read_chain(const std::string& path, Diagnostics& diagnostics);

// The models chain for a graph, from per-[[stage]] circuits and capacitances (indexed like
// ChainSpec::stages), with node capacitances filled.
Chain assemble_chain(const ChainSpec& spec, const std::vector<GraphStage>& graph,
                     const std::vector<StageCircuit>& circuits, const std::vector<double>& c_in,
                     const std::vector<double>& c_load);

// Resolves the normalised designs and Q-derived losses of a chain whose element values and
// node capacitances are otherwise set (shared by resolve_chain and the planner).
// `scan` is how finely a stage's own bandwidth (for Q-derived losses) is found; a planner's
// search may pass a coarser one.
void apply_designs(Chain& chain, const ChainSpec& spec, const std::vector<GraphStage>& graph,
                   const ScanResolution& scan = {});

// The normalised design the file gives a stage for a kind (m, or zeta or a named response),
// when the kind has that design; nullopt otherwise.
std::optional<double> design_factor(const StageSpec& stage, const LoadKindInfo& kind);
// Whether the file gave the stage any normalised design (m, zeta or response).
bool gives_design(const StageSpec& stage);
// The element values of a kind from `value(key, fallback)`, in table order.
void read_kind_values(StageCircuit& circuit, const std::function<double(std::string_view, double)>& value);

}  // namespace peakplan

namespace peakplan {
// How the chain file asks to be analysed: ripple band, signal and noise settings.
AnalysisOptions analysis_options(const ChainSpec& spec, int points = 201);
}  // namespace peakplan
