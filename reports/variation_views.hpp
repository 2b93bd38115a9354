// A [variation] result as a report shows it: the corner table and the Monte Carlo yield table
// (TableViews for budget.md and the page), corners.csv, and the Monte Carlo histograms. The
// numbers come from planner/variation_analysis; nothing here measures a chain.
#pragma once

#include <string>
#include <utility>
#include <vector>

#include "planner/corner_envelope.hpp"
#include "planner/variation_analysis.hpp"
#include "reports/budget.hpp"
#include "reports/plots.hpp"

namespace peakplan {

// "corners": one row per corner (offsets, every metric, pass/FAIL per check), the worst corner
// per metric in the notes; "yield" (with a Monte Carlo run): each check's yield and the overall
// yield with its 95 % Wilson interval.
std::vector<TableView> variation_views(const VariationResult& result);

// corners.csv: one header row; "corner" rows (name, offsets as fractions, metrics in SI as
// result.json's keys, met_<check> 1/0, met), then "worst" rows (metric, corner name), then with
// Monte Carlo "yield" rows (check, limit, met samples, samples, fraction) and one "overall" row
// with the Wilson interval. Numbers with 9 significant digits, CRLF records (RFC 4180).
std::string corners_csv(const VariationResult& result);

// Equal-width bins over [lo, hi] of the finite values; counts sum to the finite values.
struct Histogram {
  double lo = 0.0, hi = 0.0;
  std::vector<size_t> counts;
};
Histogram histogram(const std::vector<double>& values, int bins);

// mc_bandwidth.svg, mc_overshoot.svg and (with a signal) mc_eye_height.svg: the Monte Carlo
// distribution of the metric with the file's target or limit drawn as a labelled vertical line
// (when it sets one). Empty without a Monte Carlo run.
std::vector<PlotFile> variation_plots(const std::string& chain_name, const VariationResult& result);

// corners_magnitude.svg and corners_step.svg: the least-to-greatest band over the corners with
// the nominal curve on top. The magnitude is drawn over `frequency_span` (Hz), the span of the
// chain's other magnitude plot (plotted_frequency_span of the nominal analysis).
std::vector<PlotFile> envelope_plots(const std::string& chain_name, const CornerEnvelope& envelope,
                                     std::pair<double, double> frequency_span);

}  // namespace peakplan
