// The path `peakplan analyze --json` takes, in-process and without files, for the fuzz targets
// (tests/fuzz/fuzz_*.cpp) and for the ordinary suite's run of the regression corpus
// (tests/test_fuzz_regressions.cpp): chain text -> the text checks -> --set overrides -> parse
// -> stage graph -> resolve -> analysis (and [variation], with few samples) -> the JSON document.
//
// Contract: every input ends either in diagnostics (what the CLI prints before exit 2) or in a
// clean analysis (exit 0). An exception escaping analyze_chain_text is what main.cpp turns
// into exit 3, an internal error: a bug. Nothing here catches it; the callers decide.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "planner/input/diagnostics.hpp"

namespace peakplan::fuzz {

// Monte Carlo samples of a [variation] table in the fuzz path (the file's own number could be
// up to a million): the samples all take the path the first one takes, so a few find the same faults.
inline constexpr int kFuzzSamples = 8;

struct PathResult {
  bool analysed = false;            // a clean analysis (exit 0 in the CLI)
  std::vector<Diagnostic> errors;   // when not analysed (exit 2 in the CLI); never empty then
  std::string json;                 // the --json document when analysed
};

// `name` is the file name diagnostics carry; `sets` are --set texts (ID.KEY=VALUE).
PathResult analyze_chain_text(std::string_view text, const std::vector<std::string>& sets = {},
                              const std::string& name = "fuzz.toml");

// A valid chain the --set target overrides: one stage of every kind, two of them given by
// normalised designs, a driver resistance, inductor Q and a [signal] with a swing, so that
// overrides reach every resolver and the eye and noise models. An invented scenario.
std::string_view fixed_chain();

// The --set texts held in one fuzz input: one per line (at most kMaxSets, the rest ignored).
inline constexpr size_t kMaxSets = 8;
std::vector<std::string> sets_from_input(std::string_view data);

}  // namespace peakplan::fuzz
