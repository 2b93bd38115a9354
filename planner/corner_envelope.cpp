#include "planner/corner_envelope.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <utility>

namespace peakplan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Linear interpolation of y(x) at `at` over increasing x; NaN before x.front(), and y.back()
// after x.back(): a step record stops once the response has settled (12 of its slowest time
// constants, models/step_response.cpp: within e^-12 of its final value), so a corner whose
// record is shorter than the nominal one holds its last value there.
double interpolate(const std::vector<double>& x, const std::vector<double>& y, double at) {
  if (x.empty() || at < x.front()) return kNaN;
  if (at >= x.back()) return y.back();
  const auto hi = std::lower_bound(x.begin(), x.end(), at);
  const auto i = static_cast<size_t>(hi - x.begin());
  if (i == 0 || x[i] == at) return y[i];
  const double t = (at - x[i - 1]) / (x[i] - x[i - 1]);
  return y[i - 1] + t * (y[i] - y[i - 1]);
}

void widen(std::vector<double>& lo, std::vector<double>& hi, size_t k, double v) {
  if (!std::isfinite(v)) return;
  lo[k] = std::isfinite(lo[k]) ? std::min(lo[k], v) : v;
  hi[k] = std::isfinite(hi[k]) ? std::max(hi[k], v) : v;
}

}  // namespace

CornerEnvelope corner_envelope(const VariationResult& result, const Chain& nominal,
                               const ChainAnalysis& nominal_analysis, AnalysisOptions options) {
  options.signal.reset();
  options.swing_given = false;
  options.large_signal = false;
  options.keep_waveforms = true;
  CornerEnvelope e;
  const auto& main = nominal_analysis.outputs.back().response;
  e.frequency_hz = main.sampled.frequency_hz;
  e.magnitude_db = main.sampled.magnitude_db();
  if (e.frequency_hz.size() < 2) return e;
  // Every corner sampled on the nominal grid itself: its own natural span would start higher or
  // lower as its poles move (a C- corner's above the nominal's first point), and no
  // interpolation could give it a value outside its span. FrequencyGrid::log of the same ends
  // and count gives the same doubles.
  options.frequency_span = std::pair{e.frequency_hz.front(), e.frequency_hz.back()};
  options.points = static_cast<int>(e.frequency_hz.size());
  // About 600 time points are all a plot can show.
  const auto& wave = main.step_wave;
  const size_t stride = std::max<size_t>(1, wave.y.size() / 600);
  for (size_t k = 0; k < wave.y.size(); k += stride) {
    e.time_s.push_back(wave.time(k));
    e.step.push_back(wave.y[k]);
  }
  e.magnitude_lo_db.assign(e.frequency_hz.size(), kNaN);
  e.magnitude_hi_db = e.magnitude_lo_db;
  e.step_lo.assign(e.time_s.size(), kNaN);
  e.step_hi = e.step_lo;
  for (const auto& corner : result.corners) {
    const auto analysis = analyze_chain(apply_variation(nominal, corner.corner.draw()), options);
    const auto& r = analysis.outputs.back().response;
    if (r.sampled.frequency_hz != e.frequency_hz)
      throw std::logic_error("corner_envelope: a corner was not sampled on the nominal grid");
    const auto db = r.sampled.magnitude_db();
    for (size_t k = 0; k < e.frequency_hz.size(); ++k) widen(e.magnitude_lo_db, e.magnitude_hi_db, k, db[k]);
    std::vector<double> t(r.step_wave.y.size());
    for (size_t k = 0; k < t.size(); ++k) t[k] = r.step_wave.time(k);
    for (size_t k = 0; k < e.time_s.size(); ++k)
      widen(e.step_lo, e.step_hi, k, interpolate(t, r.step_wave.y, e.time_s[k]));
    ++e.corners;
  }
  return e;
}

}  // namespace peakplan
