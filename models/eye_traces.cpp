#include "models/eye_traces.hpp"

#include <algorithm>
#include <cmath>
#include <set>
#include <stdexcept>

#include "models/eye_overlay.hpp"

namespace peakplan {

EyeTraces eye_traces(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                     const EyeTraceLimits& limits) {
  return eye_traces(pulse, prbs, signal, EyeOverlay(pulse, signal), limits);
}

EyeTraces eye_traces(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                     const EyeOverlay& built, const EyeTraceLimits& limits) {
  if (limits.max_traces < 1 || limits.points_per_ui < 1)
    throw std::invalid_argument("eye_traces: max_traces and points_per_ui must be at least 1");
  if (prbs.modulation != signal.modulation)
    throw std::invalid_argument("eye_traces: the eye was computed for another modulation");
  const auto& pda = built.pda;
  const double dt = pulse.dt();
  if (std::fabs(prbs.sample_time_s - prbs.eye.best_offset_s - pda.sample_time_s) > 1e-3 * dt)
    throw std::invalid_argument("eye_traces: the eye does not belong to this pulse response");
  const int eyes = signal.modulation == Modulation::pam4 ? 3 : 1;
  if (prbs.eyes.size() != static_cast<size_t>(eyes))
    throw std::invalid_argument("eye_traces: the eye has the wrong number of openings");

  const long n = pulse.steps_per_ui;
  const auto& overlay = built.overlay;
  const auto& envelope = built.envelope;
  auto samples = [&](double offset_s) { return std::lround(offset_s / dt); };

  EyeTraces r;
  r.modulation = signal.modulation;
  r.pattern = signal.pattern;
  r.ui_s = pulse.ui;
  r.reference_time_s = pda.sample_time_s;
  r.symbols_overlaid = static_cast<std::uint64_t>(overlay.count());

  std::set<long> keep;
  auto edges_at = [&](int e, long o) {
    const size_t lower = envelope.slot(e, o), upper = envelope.slot(e + 1, o);
    keep.insert(envelope.hi_at[lower]);
    keep.insert(envelope.lo_at[upper]);
    return EyeInnerEdges{static_cast<double>(o) * dt, envelope.hi[lower], envelope.lo[upper]};
  };
  const long common = samples(prbs.eye.best_offset_s);
  for (int e = 0; e < eyes; ++e) r.common_edges.push_back(edges_at(e, common));
  for (int e = 0; e < eyes; ++e) {
    const long own = samples(prbs.eyes[static_cast<size_t>(e)].best_offset_s);
    EyeMarkers marker;
    marker.edges = edges_at(e, own);
    const auto [left, right] = open_ends([&](long o) { return envelope.margin(e, o); }, own, -n, n);
    marker.width_left_s = left * dt;
    marker.width_right_s = right * dt;
    r.eyes.push_back(marker);
  }
  keep.erase(-1);  // a level no symbol has (not expected for a PRBS)

  // The rest spread evenly over the pattern, so the overlay keeps its look when thinned.
  const long extra = std::max<long>(0, limits.max_traces - static_cast<long>(keep.size()));
  if (overlay.count() <= extra + static_cast<long>(keep.size())) {
    for (long i = 0; i < overlay.count(); ++i) keep.insert(i);
  } else {
    for (long i = 0; i < extra; ++i) keep.insert((2 * i + 1) * overlay.count() / (2 * extra));
  }

  // Offsets on a grid through the common best offset, so the measured edges are among the samples.
  const long step = std::max<long>(1, (n + limits.points_per_ui - 1) / limits.points_per_ui);
  std::vector<long> offsets;
  for (long o = common - ((common + n) / step) * step; o <= n; o += step) offsets.push_back(o);
  for (long o : offsets) r.offset_s.push_back(static_cast<double>(o) * dt);

  for (long i : keep) {
    EyeTrace t;
    t.symbol = static_cast<std::uint64_t>(i);
    t.level = overlay.level(i);
    t.y.reserve(offsets.size());
    for (long o : offsets) t.y.push_back(overlay.at(i, o));
    r.traces.push_back(std::move(t));
  }
  return r;
}

}  // namespace peakplan
