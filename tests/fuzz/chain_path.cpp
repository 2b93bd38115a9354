#include "chain_path.hpp"

#include <algorithm>

#include "planner/input/chain_file.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/chain_input.hpp"
#include "planner/input/overrides.hpp"
#include "planner/variation_analysis.hpp"
#include "reports/json_report.hpp"
#include "reports/variation_report.hpp"

namespace peakplan::fuzz {

PathResult analyze_chain_text(std::string_view text, const std::vector<std::string>& sets, const std::string& name) {
  PathResult result;
  Diagnostics diagnostics(name);
  // The order of load_what_if (planner/what_if.cpp): overrides first, then the text.
  const auto overrides = parse_overrides(sets, diagnostics);
  const bool text_ok = check_chain_text(text, diagnostics);
  std::optional<ChainSpec> spec;
  if (overrides && text_ok) spec = parse_chain_spec(text, *overrides, diagnostics);
  const auto chain = spec ? resolve_chain(*spec, diagnostics) : std::nullopt;
  if (!chain || !diagnostics.empty()) {
    result.errors = diagnostics.list();
    return result;
  }
  // As command_analyze.cpp does it, 201 points.
  auto options = analysis_options(*spec, 201);
  options.threads = 1;  // the results are the same for any thread count; a fuzz run has one
  const auto analysis = analyze_chain(*chain, options);
  auto doc = analysis_json(*chain, analysis);
  if (spec->variation) {
    VariationRunOptions run;
    run.samples = std::min(spec->variation->samples, kFuzzSamples);
    run.threads = 1;
    doc["variation"] = variation_json(analyze_variation(*spec, *chain, run));
  }
  result.json = doc.dump(2);
  result.analysed = true;
  return result;
}

std::string_view fixed_chain() {
  return R"(# Invented scenario, for the --set fuzz target only: one stage of every kind.
[chain]
name = "fuzz fixed chain"

[input]
r_source = "50 ohm"

[signal]
bit_rate = "56 Gb/s"
modulation = "nrz"
pattern = "prbs7"
swing = "20 mV"

[target]
gain = "20 dB"
bandwidth = "30 GHz"

[limits]
overshoot = "5 %"
peaking = "1 dB"
group_delay_ripple = "2 ps"

[technology]
inductor_q = 12

[[stage]]
id = "t1"
kind = "tcoil"
gm = "40 mS"
rd = "90 ohm"
c_in = "45 fF"
c_out = "6 fF"
zeta = 0.8
c_load = "25 fF"

[[stage]]
id = "s2"
kind = "shunt"
gm = "40 mS"
rd = "95 ohm"
c_in = "22 fF"
c_out = "14 fF"
m = 0.38

[[stage]]
id = "r3"
kind = "series"
gm = "35 mS"
rd = "100 ohm"
c_in = "20 fF"
c_out = "12 fF"
l = "150 pH"

[[stage]]
id = "p4"
kind = "plain"
gm = "45 mS"
rd = "55 ohm"
c_in = "22 fF"
c_out = "16 fF"
c_load = "20 fF"
)";
}

std::vector<std::string> sets_from_input(std::string_view data) {
  std::vector<std::string> sets;
  while (!data.empty() && sets.size() < kMaxSets) {
    const size_t end = data.find('\n');
    sets.emplace_back(data.substr(0, end));
    if (end == std::string_view::npos) break;
    data.remove_prefix(end + 1);
  }
  return sets;
}

}  // namespace peakplan::fuzz
