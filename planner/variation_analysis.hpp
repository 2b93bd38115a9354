// A chain file's [variation] analysed (docs/physics.md (process variation)): every corner with the main
// output's metrics and every target and limit checked there, the worst corner per metric, and
// the Monte Carlo statistics and yields. Physics is in models/variation and models/monte_carlo;
// this puts it together with the file's targets and limits.
#pragma once

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "models/monte_carlo.hpp"
#include "models/variation.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"

namespace peakplan {

struct CornerResult {
  Corner corner;
  CaseMetrics metrics;
  std::vector<PlanCheck> checks;  // the file's targets and limits at this corner
  bool met = true;                // every check met
};

struct MetricSummary {
  std::string key;  // CaseMetric::key
  MetricStats stats;
  // Every sample's value in sample order (NaN where the metric does not exist), so a report can
  // draw the distribution; gathered by index, so it is the same for every thread count.
  std::vector<double> values;
};

struct CheckYield {
  std::string name;  // PlanCheck::name
  size_t met = 0;    // samples that meet it
  double fraction = 0.0;
};

struct MonteCarloSummary {
  int samples = 0;
  std::uint64_t seed = 0;
  Distribution distribution = Distribution::gaussian;
  std::vector<MetricSummary> stats;
  std::vector<CheckYield> yield;  // in check order; empty when the file has no targets or limits
  size_t passed = 0;              // samples that meet every check
  double overall_yield = 1.0;
  Interval ci95;                  // Wilson score interval of overall_yield
};

struct VariationResult {
  VariationSpec spec;
  bool with_eye = false;                 // the file has a [signal]: eye metrics are included
  std::vector<const CaseMetric*> metrics;  // reported metrics, in case_metrics() order
  std::vector<CornerResult> corners;     // nominal, then the extremes, then the named corners
  // metric key -> the corner where it is worst (the first of equals); empty when every corner
  // gives the same value (to 1e-12 relative), so that no corner is worse than nominal.
  std::vector<std::pair<std::string, std::string>> worst;
  std::optional<MonteCarloSummary> monte_carlo;
};

struct VariationRunOptions {
  std::optional<int> samples;          // overrides [variation] samples
  std::optional<std::uint64_t> seed;   // overrides [variation] seed
  int threads = 1;                     // the results do not depend on it
  std::function<void(int done, int total)> progress;  // Monte Carlo progress; may be empty
};

// `spec.variation` must be set; `nominal` is resolve_chain(spec).
VariationResult analyze_variation(const ChainSpec& spec, const Chain& nominal, const VariationRunOptions& options = {});

// The checks of the file's targets and limits for one case (the supply-current check uses the
// nominal gm: the bias current is set, not the device's transconductance).
std::vector<PlanCheck> case_checks(const ChainSpec& spec, const CaseMetrics& metrics, double nominal_total_gm);

// The thread count a run uses: PEAKPLAN_THREADS when set to a whole number >= 1, else every
// core (std::thread::hardware_concurrency, at least 1).
int default_thread_count();

}  // namespace peakplan
