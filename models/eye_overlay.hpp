// The overlay of a signal's pattern, built once for prbs_eye (models/eye.cpp), which measures
// it, and eye_traces (models/eye_traces.cpp), which draws it, so the two always see the same
// samples.
//
// The waveform is the superposition of the sampled pulse response over the pattern's symbols
// (exact for a linear chain), summed in blocks of one UI with cursors j ascending and zero
// symbols skipped. Patterns whose period fits max_overlay_symbols are their exact periodic
// steady state (circular superposition); longer ones are truncated to max_overlay_symbols
// symbols, started half a period into the sequence (prbs_typical_start), after pulse.ui_count + 2
// symbols of history.
//
// Sample positions: symbol i (0 .. count-1) is the i-th overlaid symbol; its sampling instant is
// pda.sample_time_s after the start of its pulse, and its trace spans offsets o = -n .. n
// samples (n = steps per UI) around that instant.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <utility>
#include <vector>

#include "models/eye.hpp"

namespace peakplan {

class PatternOverlay {
 public:
  // pda must be peak_distortion(pulse, signal.modulation): it fixes the sampling reference.
  PatternOverlay(const PulseResponse& pulse, const Signal& signal, const PeakDistortion& pda);
  // The same layout over a waveform computed elsewhere (the large-signal simulation,
  // models/large_signal.hpp), with `pda` of the linear pulse response as the sampling reference
  // and `span` its length in UI. `simulate` receives the symbol levels of the blocks
  // b0 - warm .. b1 - 1 in time order (one level per UI; wrapped for a periodic pattern, from
  // half a period in when truncated) and the number `warm` of leading blocks to discard, and
  // returns the waveform (levels 0..1) over blocks b0 .. b1 - 1, steps_per_ui samples each.
  // warm is span + 2 for a periodic pattern (the memory the pulse response spans), and every
  // block ahead of b0 when truncated.
  using Simulate = std::function<std::vector<double>(const std::vector<double>& levels, long warm)>;
  PatternOverlay(long steps_per_ui, long span, const Signal& signal, const PeakDistortion& pda,
                 const Simulate& simulate);

  long steps_per_ui() const { return n_; }
  int eye_count() const { return eyes_; }
  long count() const { return count_; }  // symbols overlaid
  bool truncated() const { return truncated_; }
  // History ahead of the overlaid symbols: the seed's warm-up when truncated, otherwise the
  // whole periods the pulse response reaches back (at least one), which the steady state equals.
  std::uint64_t settling_symbols() const;

  // The level index (0..eye_count) of symbol i; periodic patterns wrap, so i = count is symbol 0.
  int level(long i) const { return static_cast<int>(std::lround(symbol_[index(first_ + i)] * eyes_)); }
  // Symbol i's trace at offset o in [-n, n].
  double at(long i, long o) const { return w_[static_cast<size_t>((first_ + i + m_ - b0_) * n_ + ref_ + o)]; }
  // The same sample by its absolute grid index g (t = g*dt from the start of the pattern's
  // first symbol, history included); g = sampling_index(i) + o is symbol i's offset o.
  long sampling_index(long i) const { return (first_ + i + m_) * n_ + ref_; }
  double sample(long g) const { return w_[static_cast<size_t>(g - b0_ * n_)]; }

 private:
  void lay_out(const Signal& signal);  // everything but w_
  size_t index(long i) const { return static_cast<size_t>(truncated_ ? i : ((i % count_) + count_) % count_); }

  long n_, m_, ref_, span_;
  int eyes_ = 1;
  bool truncated_ = false;
  long count_ = 0, first_ = 0, b0_ = 0;
  std::vector<double> symbol_;  // levels 0..1 by pattern position
  std::vector<double> w_;       // the waveform over blocks b0 .. b1-1
};

// Per level, the lowest and highest trace at every offset in [-n, n] over every overlaid
// symbol, and the first symbol that reached each.
struct OverlayEnvelope {
  explicit OverlayEnvelope(const PatternOverlay& overlay);

  long n = 0;
  int eyes = 1;
  std::vector<double> lo, hi;
  std::vector<long> lo_at, hi_at;  // -1 for a level no symbol has

  size_t slot(int level, long o) const { return static_cast<size_t>(level * (2 * n + 1) + o + n); }
  // Eye e's inner opening and its margin to the eye's decision threshold (2e + 1) / (2 eyes),
  // both as fractions of the ideal eye (1/eyes of the swing), at offset o.
  double height(int e, long o) const { return eyes * (lo[slot(e + 1, o)] - hi[slot(e, o)]); }
  double margin(int e, long o) const { return margin_to(e, o, (2.0 * e + 1.0) / (2.0 * eyes)); }
  // The same margin to any threshold (levels 0..1).
  double margin_to(int e, long o, double threshold) const {
    return eyes * std::min(lo[slot(e + 1, o)] - threshold, threshold - hi[slot(e, o)]);
  }
  // The middle of eye e's opening at offset o: an adaptive slicer's threshold.
  double centre(int e, long o) const { return 0.5 * (lo[slot(e + 1, o)] + hi[slot(e, o)]); }
};

// The overlay of one pulse response and its envelope: what prbs_eye measures and eye_traces
// draws, built once when both are wanted (the overlay is most of an eye's cost).
struct EyeOverlay {
  EyeOverlay(const PulseResponse& pulse, const Signal& signal)
      : pda(peak_distortion(pulse, signal.modulation)), overlay(pulse, signal, pda), envelope(overlay) {}
  EyeOverlay(PeakDistortion reference, PatternOverlay built)
      : pda(std::move(reference)), overlay(std::move(built)), envelope(overlay) {}
  PeakDistortion pda;
  PatternOverlay overlay;
  OverlayEnvelope envelope;
};

// prbs_eye on an overlay already built for `pulse` and `signal`.
PrbsEye prbs_eye(const PulseResponse& pulse, const Signal& signal, const EyeOverlay& built);

// The ends (in samples) of the contiguous region around `centre` where f > 0 within
// [first, last], each interpolated linearly between the last open and the first closed sample
// (or at the bound when the region reaches it); both at centre when f(centre) <= 0.
template <class F, class Index>
std::pair<double, double> open_ends(F&& f, Index centre, Index first, Index last) {
  if (!(f(centre) > 0.0)) return {static_cast<double>(centre), static_cast<double>(centre)};
  Index l = centre;
  while (l - 1 >= first && f(l - 1) > 0.0) --l;
  Index r = centre;
  while (r + 1 <= last && f(r + 1) > 0.0) ++r;
  const double left = l - 1 >= first ? (l - 1) + (-f(l - 1)) / (f(l) - f(l - 1)) : static_cast<double>(first);
  const double right = r + 1 <= last ? r + f(r) / (f(r) - f(r + 1)) : static_cast<double>(last);
  return {left, right};
}

}  // namespace peakplan
