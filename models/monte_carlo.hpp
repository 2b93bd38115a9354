// Measuring many varied copies of a chain: one case's metrics of the main output, a parallel
// Monte Carlo run whose results do not depend on the thread count, and the statistics and
// binomial interval a yield is reported with.
#pragma once

#include <cstdint>
#include <functional>
#include <optional>
#include <span>
#include <string_view>
#include <vector>

#include "models/chain.hpp"
#include "models/eye.hpp"
#include "models/frequency_response.hpp"
#include "models/step_response.hpp"
#include "models/variation.hpp"

namespace peakplan {

struct CaseOptions {
  double ripple_band_hz = not_found;  // NaN: up to the bandwidth
  std::optional<Signal> signal;       // with a signal, the PRBS eye is measured too
  // Overshoot on short_time_axis (the planner's search record) instead of analyze's full
  // record: what Monte Carlo samples use, for speed; corners use the full record.
  bool short_step = false;
};

// The main output of one case, measured as analyze measures it (the same scan, time axis and
// PRBS overlay), so a corner equals an analysis of the same values; with short_step the step
// record is the short one (overshoot within about 0.002 percentage points of the full record's
// in the shipped chains).
struct CaseMetrics {
  FrequencyMetrics f;
  StepMetrics t;
  double eye_height = not_found;  // prbs_height, fraction of the ideal eye
  double eye_width_ui = not_found;
};

CaseMetrics measure_case(const Chain& chain, const CaseOptions& options);

// The metrics a variation run reports, with the JSON key and unit of an output's metric.
struct CaseMetric {
  std::string_view key;    // "dc_gain_db", "bandwidth_hz", ...
  std::string_view label;  // column heading
  std::string_view unit;   // "dB", "Hz", "s", "%", "UI", "" (fraction of the ideal eye)
  bool higher_is_worse;    // overshoot, peaking, ripple; gain, bandwidth and eye lower is worse
  bool needs_signal;
  double (*get)(const CaseMetrics&);
};
// dc_gain_db, bandwidth_hz, peaking_db, group_delay_ripple_s, overshoot_pct, sag_db, then
// (with a signal) prbs_height and prbs_width_ui. sag_db is negative for a dip: lower is worse.
std::span<const CaseMetric> case_metrics();

struct MonteCarloOptions {
  int samples = 1000;
  std::uint64_t seed = 1;
  int threads = 1;  // >= 1; the results are the same for every value
  // Called on the calling thread about every 0.1 s with the samples done; may be empty.
  std::function<void(int done, int total)> progress;
};

// Sample i is apply_variation(nominal, draw_sample(variation, seed, i, stages)), measured;
// results[i] is written by whichever thread measures it (each takes the next sample in turn).
std::vector<CaseMetrics> run_monte_carlo(const Chain& nominal, const Variation& variation,
                                         const CaseOptions& case_options, const MonteCarloOptions& options);

struct MetricStats {
  size_t count = 0;  // finite values (a bandwidth never reached is left out)
  double mean = not_found, std = not_found, min = not_found, max = not_found;
  double p0_135 = not_found, p50 = not_found, p99_865 = not_found;  // the +-3 sigma percentiles
};
// Sample standard deviation (n - 1); percentiles by linear interpolation between order
// statistics (Hyndman and Fan type 7). Non-finite values are ignored.
MetricStats metric_stats(std::vector<double> values);

// The 95 % Wilson score interval of a binomial proportion (E. B. Wilson, JASA 22, 1927).
struct Interval {
  double lo = 0.0, hi = 1.0;
};
Interval wilson_interval(size_t successes, size_t trials, double z = 1.959963984540054);

}  // namespace peakplan
