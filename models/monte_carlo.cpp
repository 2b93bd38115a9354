#include "models/monte_carlo.hpp"

#include <algorithm>
#include <atomic>
#include <chrono>
#include <cmath>
#include <exception>
#include <limits>
#include <thread>

namespace peakplan {
namespace {

// The main output's cascade, block for block as analyze_chain builds it.
double quantile(const std::vector<double>& sorted, double p) {
  const double h = p * static_cast<double>(sorted.size() - 1);
  const auto lo = static_cast<size_t>(std::floor(h));
  const size_t hi = std::min(lo + 1, sorted.size() - 1);
  return sorted[lo] + (h - static_cast<double>(lo)) * (sorted[hi] - sorted[lo]);
}

const CaseMetric kMetrics[] = {
    {"dc_gain_db", "gain", "dB", false, false, [](const CaseMetrics& m) { return to_db(m.f.dc_gain); }},
    {"bandwidth_hz", "bandwidth", "Hz", false, false, [](const CaseMetrics& m) { return m.f.bandwidth_hz; }},
    {"peaking_db", "peaking", "dB", true, false, [](const CaseMetrics& m) { return m.f.peaking_db; }},
    {"group_delay_ripple_s", "gd ripple", "s", true, false,
     [](const CaseMetrics& m) { return m.f.group_delay_ripple_s; }},
    {"overshoot_pct", "overshoot", "%", true, false, [](const CaseMetrics& m) { return m.t.overshoot_pct; }},
    {"sag_db", "sag", "dB", false, false, [](const CaseMetrics& m) { return m.f.sag_db; }},
    {"prbs_height", "eye height", "", false, true, [](const CaseMetrics& m) { return m.eye_height; }},
    {"prbs_width_ui", "eye width", "UI", false, true, [](const CaseMetrics& m) { return m.eye_width_ui; }},
};

}  // namespace

std::span<const CaseMetric> case_metrics() { return kMetrics; }

CaseMetrics measure_case(const Chain& chain, const CaseOptions& options) {
  const Cascade cascade = output_cascade(chain, chain.outputs().back());
  CaseMetrics m;
  // A sample whose spread tips a feedback stage into oscillation has no response: it fails every
  // check, and its figures stay out of the statistics (not finite).
  if (first_unstable_pole(cascade.poles())) {
    constexpr double kInf = std::numeric_limits<double>::infinity();
    m.f.dc_gain = cascade.dc_value();
    m.f.peaking_db = m.f.group_delay_ripple_s = m.t.overshoot_pct = kInf;
    m.f.sag_db = -kInf;
    if (options.signal) m.eye_height = m.eye_width_ui = 0.0;
    return m;
  }
  m.f = frequency_metrics(cascade, options.ripple_band_hz);
  const auto axis = options.short_step ? short_time_axis(cascade, m.f.bandwidth_hz)
                                       : choose_time_axis(cascade, m.f.bandwidth_hz);
  m.t = step_metrics(step_response(cascade, axis));
  if (options.signal) {
    const auto eye = estimate_eye(cascade, *options.signal);
    m.eye_height = eye.prbs.eye.height;
    m.eye_width_ui = eye.prbs.eye.width_ui;
  }
  return m;
}

std::vector<CaseMetrics> run_monte_carlo(const Chain& nominal, const Variation& variation,
                                         const CaseOptions& case_options, const MonteCarloOptions& options) {
  const int total = std::max(0, options.samples);
  std::vector<CaseMetrics> results(static_cast<size_t>(total));
  std::atomic<int> done{0}, next{0};
  std::exception_ptr failure;
  std::atomic<bool> failed{false};
  // Each worker takes the next sample as it finishes one (a busy machine then costs no thread
  // an idle wait); sample i's result depends only on i, whoever measures it.
  auto work = [&] {
    try {
      for (int i = next++; i < total && !failed.load(std::memory_order_relaxed); i = next++) {
        const auto draw = draw_sample(variation, options.seed, static_cast<std::uint64_t>(i), nominal.stages.size());
        results[static_cast<size_t>(i)] = measure_case(apply_variation(nominal, draw), case_options);
        done.fetch_add(1, std::memory_order_relaxed);
      }
    } catch (...) {
      if (!failed.exchange(true)) failure = std::current_exception();
    }
  };
  const int threads = std::clamp(options.threads, 1, std::max(1, total));
  {
    std::vector<std::jthread> pool;
    for (int t = 0; t < threads; ++t) pool.emplace_back(work);
    if (options.progress) {
      while (done.load() < total && !failed.load()) {
        std::this_thread::sleep_for(std::chrono::milliseconds(100));
        options.progress(done.load(), total);
      }
    }
  }  // jthreads join here
  if (failure) std::rethrow_exception(failure);
  return results;
}

MetricStats metric_stats(std::vector<double> values) {
  std::erase_if(values, [](double v) { return !std::isfinite(v); });
  MetricStats s;
  s.count = values.size();
  if (values.empty()) return s;
  std::sort(values.begin(), values.end());
  double sum = 0.0;
  for (double v : values) sum += v;
  s.mean = sum / static_cast<double>(values.size());
  double squares = 0.0;
  for (double v : values) squares += (v - s.mean) * (v - s.mean);
  s.std = values.size() > 1 ? std::sqrt(squares / static_cast<double>(values.size() - 1)) : 0.0;
  s.min = values.front();
  s.max = values.back();
  s.p0_135 = quantile(values, 0.00135);
  s.p50 = quantile(values, 0.5);
  s.p99_865 = quantile(values, 0.99865);
  return s;
}

Interval wilson_interval(size_t successes, size_t trials, double z) {
  if (trials == 0) return {0.0, 1.0};
  const double n = static_cast<double>(trials);
  const double p = static_cast<double>(successes) / n;
  const double z2 = z * z;
  const double centre = (p + z2 / (2.0 * n)) / (1.0 + z2 / n);
  const double half = z / (1.0 + z2 / n) * std::sqrt(p * (1.0 - p) / n + z2 / (4.0 * n * n));
  return {std::max(0.0, centre - half), std::min(1.0, centre + half)};
}

}  // namespace peakplan
