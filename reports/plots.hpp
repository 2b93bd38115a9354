// The SVG plots of an analysed chain: magnitude, group delay, step, eye and pole-zero map.
// They read the analysis only; nothing here recomputes a response.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"

namespace peakplan {

struct PlotFile {
  std::string name;   // "magnitude.svg", "group_delay.svg", "step.svg", "eye.svg", "pole_zero.svg"
  std::string title;  // a human caption, e.g. "Magnitude of every stage alone and of the cascade"
  std::string svg;    // a complete standalone SVG document
};

// The frequency axis of the magnitude and group-delay plots: the union of every sampled grid,
// cut at the decade above five times the widest bandwidth (beyond it there is only roll-off).
// Any other plot over frequency of the same chain uses it too, so that they line up.
std::pair<double, double> plotted_frequency_span(const ChainAnalysis& analysis);

// Every plot of an analysed chain, in the order above; eye.svg only when the main output
// (analysis.outputs.back()) has an eye. When it also has a large-signal eye with traces, the
// clipped eye in volts (eye_clipped.svg) follows eye.svg, and the pole-zero map goes ahead of
// the two so that they sit side by side. Deterministic: the same input gives the same bytes.
std::vector<PlotFile> chain_plots(const Chain& chain, const ChainAnalysis& analysis);

}  // namespace peakplan
