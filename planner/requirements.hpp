// Every target and limit a chain file can set, as one table: its check (name, unit, which side
// is met, the slack it is met within), the value it reads from a measured chain, and the scaled
// constraint the planner's search drives below zero. A new requirement is one row here, plus its
// key in the loader and the writer.
#pragma once

#include <optional>
#include <vector>

#include "models/frequency_response.hpp"
#include "models/step_response.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"

namespace peakplan {

// What the requirements read: the main output's metrics and, when measured, the chain's total
// gm, its input-referred noise current and its least stage gain.
struct Measured {
  const FrequencyMetrics& f;
  const StepMetrics& t;
  std::optional<double> total_gm;           // S
  std::optional<double> input_noise_rms_a;  // a chain driven by a photocurrent
  std::optional<double> min_stage_gain_db;  // a plan's stages on the main path
  // The main output's large-signal eye at [signal] swing (a limiting chain): its height, V, and
  // DDJ, s (NaN when the eye is closed).
  std::optional<double> eye_height_v = std::nullopt;
  std::optional<double> ddj_pp_s = std::nullopt;
  // With a [signal]: the differential rms output noise, V, and with its swing the BER of the
  // statistical eye (models/eye.hpp), as analyze reports them.
  std::optional<double> output_noise_rms_v = std::nullopt;
  std::optional<double> ber = std::nullopt;
};

// The checks of every requirement the spec sets whose value was measured, in table order.
std::vector<PlanCheck> requirement_checks(const ChainSpec& spec, const Measured& m);
// One constraint per requirement the spec sets (measured or not: a missing value is a large
// miss), each <= 0 when met and scaled so that 1 is a large miss; the search aims a little
// inside every limit, so that the final, finer measurement lands within it too.
std::vector<double> requirement_violations(const ChainSpec& spec, const Measured& m);

// The checks of an analysed chain (a report's budget): its main output's metrics, noise and BER
// (when the analysis has them), the chain's total gm and, for a receiver, its input noise.
std::vector<PlanCheck> analysis_checks(const ChainSpec& spec, const OutputSummary& main, double total_gm);

}  // namespace peakplan
