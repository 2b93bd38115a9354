#include "models/eye_traces.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <set>
#include <stdexcept>

namespace peakplan {
namespace {

// The overlay prbs_eye builds, with the same symbols at the same positions and the same sums in
// the same order (blocks of one UI, cursors j ascending, zero symbols skipped), so every sample
// here equals the one prbs_eye measured.
class Overlay {
 public:
  Overlay(const PulseResponse& pulse, const Signal& signal, const PeakDistortion& pda)
      : n_(pulse.steps_per_ui), m_(pda.main_index), ref_(pda.phase_index) {
    const bool pam4 = signal.modulation == Modulation::pam4;
    eyes_ = pam4 ? 3 : 1;
    const long span = pulse.ui_count;
    const std::uint64_t period = prbs_period(signal.pattern);
    truncated_ = period > max_overlay_symbols;
    count_ = static_cast<long>(truncated_ ? max_overlay_symbols : period);
    // Truncated patterns start from the register's seed after `span` symbols of history;
    // periodic ones wrap, which is their exact periodic steady state.
    first_ = truncated_ ? span + 2 : 0;
    const long generated = truncated_ ? first_ + count_ + m_ + 3 : count_;
    const auto bits = prbs_bits(signal.pattern, static_cast<size_t>(pam4 ? 2 * generated : generated));
    symbol_ = pam4 ? pam4_levels(bits) : nrz_levels(bits);

    // Block b holds t in [b*UI, (b+1)*UI); symbol k's sampling instant is in block k + m and its
    // trace spans the block either side.
    b0_ = first_ + m_ - 1;
    const long b1 = first_ + count_ + m_ + 2;
    w_.assign(static_cast<size_t>((b1 - b0_) * n_), 0.0);
    for (long b = b0_; b < b1; ++b) {
      double* out = w_.data() + (b - b0_) * n_;
      for (long j = 0; j < span; ++j) {
        const double a = symbol_[index(b - j)];
        if (a == 0.0) continue;
        const double* pj = pulse.p.data() + j * n_;
        for (long k = 0; k < n_; ++k) out[k] += a * pj[k];
      }
    }
  }

  long count() const { return count_; }
  // The i-th overlaid symbol (0 .. count-1): its level and its trace at offset o in [-n, n].
  int level(long i) const { return static_cast<int>(std::lround(symbol_[index(first_ + i)] * eyes_)); }
  double at(long i, long o) const { return w_[static_cast<size_t>((first_ + i + m_ - b0_) * n_ + ref_ + o)]; }

 private:
  size_t index(long i) const {
    return static_cast<size_t>(truncated_ ? i : ((i % count_) + count_) % count_);
  }
  long n_, m_, ref_;
  int eyes_ = 1;
  bool truncated_ = false;
  long count_ = 0, first_ = 0, b0_ = 0;
  std::vector<double> symbol_;
  std::vector<double> w_;
};

// Per level, the lowest and highest trace at every offset in [-n, n], and which symbol set them
// (the earliest on ties).
struct Envelope {
  long n = 0;
  int levels = 0;
  std::vector<double> lo, hi;
  std::vector<long> lo_at, hi_at;

  Envelope(const Overlay& overlay, long steps, int level_count) : n(steps), levels(level_count) {
    const auto size = static_cast<size_t>(levels * (2 * n + 1));
    lo.assign(size, std::numeric_limits<double>::infinity());
    hi.assign(size, -std::numeric_limits<double>::infinity());
    lo_at.assign(size, -1);
    hi_at.assign(size, -1);
    for (long i = 0; i < overlay.count(); ++i) {
      const int l = overlay.level(i);
      for (long o = -n; o <= n; ++o) {
        const size_t c = slot(l, o);
        const double v = overlay.at(i, o);
        if (v < lo[c]) lo[c] = v, lo_at[c] = i;
        if (v > hi[c]) hi[c] = v, hi_at[c] = i;
      }
    }
  }
  size_t slot(int level, long o) const { return static_cast<size_t>(level * (2 * n + 1) + o + n); }
  // Eye e's margin to its threshold in prbs_eye's units (a fraction of the ideal eye).
  double margin(int e, long o) const {
    const int eyes = levels - 1;
    const double threshold = (2.0 * e + 1.0) / (2.0 * eyes);
    return eyes * std::min(lo[slot(e + 1, o)] - threshold, threshold - hi[slot(e, o)]);
  }
};

// The ends (in samples) of the contiguous region around `centre` where f > 0 within [-n, n],
// interpolated as prbs_eye's open_span does; both at centre when f(centre) <= 0.
template <class F>
std::pair<double, double> open_ends(F&& f, long centre, long n) {
  if (!(f(centre) > 0.0)) return {static_cast<double>(centre), static_cast<double>(centre)};
  long l = centre;
  while (l - 1 >= -n && f(l - 1) > 0.0) --l;
  long r = centre;
  while (r + 1 <= n && f(r + 1) > 0.0) ++r;
  const double left = l - 1 >= -n ? (l - 1) + (-f(l - 1)) / (f(l) - f(l - 1)) : static_cast<double>(-n);
  const double right = r + 1 <= n ? r + f(r) / (f(r) - f(r + 1)) : static_cast<double>(n);
  return {left, right};
}

}  // namespace

EyeTraces eye_traces(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                     const EyeTraceLimits& limits) {
  if (limits.max_traces < 1 || limits.points_per_ui < 1)
    throw std::invalid_argument("eye_traces: max_traces and points_per_ui must be at least 1");
  if (prbs.modulation != signal.modulation)
    throw std::invalid_argument("eye_traces: the eye was computed for another modulation");
  const auto pda = peak_distortion(pulse, signal.modulation);
  const double dt = pulse.dt();
  if (std::fabs(prbs.sample_time_s - prbs.eye.best_offset_s - pda.sample_time_s) > 1e-3 * dt)
    throw std::invalid_argument("eye_traces: the eye does not belong to this pulse response");
  const int eyes = signal.modulation == Modulation::pam4 ? 3 : 1;
  if (prbs.eyes.size() != static_cast<size_t>(eyes))
    throw std::invalid_argument("eye_traces: the eye has the wrong number of openings");

  const long n = pulse.steps_per_ui;
  const Overlay overlay(pulse, signal, pda);
  const Envelope envelope(overlay, n, eyes + 1);
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
    const auto [left, right] = open_ends([&](long o) { return envelope.margin(e, o); }, own, n);
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
