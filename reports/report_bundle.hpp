// Every file of a report, built in memory before anything is written, so that a report is
// written completely or not at all:
//   budget.md, budget.csv   the per-stage budget, totals and spec block (reports/budget.hpp)
//   result.json             analysis_json, or plan_json for a planned chain
//   *.svg                   the plots of reports/plots.hpp
//   index.html              the self-contained page (reports/html_report.hpp)
//   chain.cir               the SPICE netlist of the chain reported
// With a [variation] result: corners.csv, the corner and yield tables in budget.md and on the
// page, result.json's `variation` object (as analyze --json gives it) and the Monte Carlo
// histograms (reports/variation_views.hpp). With a swing sweep of a limiting chain: its
// dynamic-range plots (reports/dynamic_range_plot.hpp).
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"
#include "planner/corner_envelope.hpp"
#include "planner/sweep.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {

struct ReportFile {
  std::string name;      // a plain file name, no directory
  std::string contents;
};

struct ReportSource {
  const ChainSpec* spec = nullptr;
  std::string file_name;  // the chain file as the user named it
  std::string file_text;  // its contents, echoed in the page
};

// With a plan: the plan, and the file as written resolved and analysed when it can be (every
// value fixed), for the before/after comparison.
struct ReportPlan {
  const Plan* plan = nullptr;
  const Chain* before_chain = nullptr;
  const ChainAnalysis* before_analysis = nullptr;
};

// `chain` and `analysis` are what the report shows: the planned chain when `plan` is given.
std::vector<ReportFile> build_report(const ReportSource& source, const Chain& chain, const ChainAnalysis& analysis,
                                     const std::optional<ReportPlan>& plan = std::nullopt,
                                     const VariationResult* variation = nullptr,
                                     const CornerEnvelope* envelope = nullptr,
                                     const SweepResult* dynamic_range = nullptr);

}  // namespace peakplan
