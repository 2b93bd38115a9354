#include "planner/variation_analysis.hpp"

#include "planner/input/chain_graph.hpp"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <thread>

namespace peakplan {

std::vector<PlanCheck> case_checks(const ChainSpec& spec, const CaseMetrics& metrics, double nominal_total_gm) {
  return check_targets(spec, metrics.f, metrics.t, nominal_total_gm);
}

int default_thread_count() {
  if (const char* text = std::getenv("PEAKPLAN_THREADS")) {
    char* end = nullptr;
    const long n = std::strtol(text, &end, 10);
    if (end != text && *end == '\0' && n >= 1 && n <= 1024) return static_cast<int>(n);
  }
  return std::max(1u, std::thread::hardware_concurrency());
}

VariationResult analyze_variation(const ChainSpec& spec, const Chain& nominal, const VariationRunOptions& options) {
  VariationResult result;
  result.spec = *spec.variation;
  const auto& vspec = result.spec;
  const auto analysis = analysis_options(spec);
  const CaseOptions case_options{analysis.ripple_band_hz, analysis.signal};
  result.with_eye = analysis.signal.has_value();
  for (const auto& m : case_metrics())
    if (!m.needs_signal || result.with_eye) result.metrics.push_back(&m);
  const double gm_total = total_gm(nominal);

  std::vector<Corner> corners{nominal_corner()};
  if (vspec.extremes)
    for (auto& c : extreme_corners(vspec.variation)) corners.push_back(std::move(c));
  for (const auto& named : vspec.corners) corners.push_back(named.corner);
  for (auto& corner : corners) {
    CornerResult r;
    r.metrics = measure_case(apply_variation(nominal, corner.draw()), case_options);
    r.checks = case_checks(spec, r.metrics, gm_total);
    r.met = std::all_of(r.checks.begin(), r.checks.end(), [](const PlanCheck& c) { return c.met; });
    r.corner = std::move(corner);
    result.corners.push_back(std::move(r));
  }
  for (const auto* m : result.metrics) {
    const CornerResult* worst = nullptr;
    double worst_value = 0.0, lo = INFINITY, hi = -INFINITY;
    for (const auto& r : result.corners) {
      const double v = m->get(r.metrics);
      if (!std::isfinite(v)) continue;
      lo = std::min(lo, v);
      hi = std::max(hi, v);
      if (!worst || (m->higher_is_worse ? v > worst_value : v < worst_value)) {
        worst = &r;
        worst_value = v;
      }
    }
    const bool all_equal = hi - lo <= 1e-12 * std::max(std::fabs(lo), std::fabs(hi));
    result.worst.emplace_back(std::string(m->key), worst && !all_equal ? worst->corner.name : std::string());
  }

  MonteCarloOptions mc;
  mc.samples = options.samples.value_or(vspec.samples);
  mc.seed = options.seed.value_or(vspec.seed);
  mc.threads = options.threads;
  mc.progress = options.progress;
  if (mc.samples < 1) return result;
  CaseOptions sample_options = case_options;
  sample_options.short_step = true;
  const auto samples = run_monte_carlo(nominal, vspec.variation, sample_options, mc);
  MonteCarloSummary summary;
  summary.samples = mc.samples;
  summary.seed = mc.seed;
  summary.distribution = vspec.variation.distribution;
  for (const auto* m : result.metrics) {
    std::vector<double> values;
    values.reserve(samples.size());
    for (const auto& s : samples) values.push_back(m->get(s));
    summary.stats.push_back({std::string(m->key), metric_stats(values), std::move(values)});
  }
  for (const auto& s : samples) {
    const auto checks = case_checks(spec, s, gm_total);
    if (summary.yield.empty())
      for (const auto& c : checks) summary.yield.push_back({c.name, 0, 0.0});
    bool all = true;
    for (size_t i = 0; i < checks.size(); ++i) {
      if (checks[i].met) ++summary.yield[i].met;
      all = all && checks[i].met;
    }
    if (all) ++summary.passed;
  }
  const auto n = static_cast<double>(samples.size());
  for (auto& y : summary.yield) y.fraction = static_cast<double>(y.met) / n;
  summary.overall_yield = static_cast<double>(summary.passed) / n;
  summary.ci95 = wilson_interval(summary.passed, samples.size());
  result.monte_carlo = std::move(summary);
  return result;
}

}  // namespace peakplan
