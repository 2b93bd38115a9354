#include "models/eye_overlay.hpp"

#include <limits>
#include <stdexcept>

namespace peakplan {

PatternOverlay::PatternOverlay(const PulseResponse& pulse, const Signal& signal, const PeakDistortion& pda)
    : n_(pulse.steps_per_ui), m_(pda.main_index), ref_(pda.phase_index), span_(pulse.ui_count) {
  lay_out(signal);
  const long b1 = first_ + count_ + m_ + 2;
  w_.assign(static_cast<size_t>((b1 - b0_) * n_), 0.0);
  for (long b = b0_; b < b1; ++b) {
    double* out = w_.data() + (b - b0_) * n_;
    for (long j = 0; j < span_; ++j) {
      const double a = symbol_[index(b - j)];
      if (a == 0.0) continue;
      const double* pj = pulse.p.data() + j * n_;
      for (long k = 0; k < n_; ++k) out[k] += a * pj[k];
    }
  }
}

PatternOverlay::PatternOverlay(long steps_per_ui, long span, const Signal& signal, const PeakDistortion& pda,
                               const Simulate& simulate)
    : n_(steps_per_ui), m_(pda.main_index), ref_(pda.phase_index), span_(span) {
  lay_out(signal);
  const long b1 = first_ + count_ + m_ + 2;
  const long warm = truncated_ ? b0_ : span_ + 2;
  std::vector<double> levels;
  levels.reserve(static_cast<size_t>(b1 - b0_ + warm));
  for (long b = b0_ - warm; b < b1; ++b) levels.push_back(symbol_[index(b)]);
  w_ = simulate(levels, warm);
  if (w_.size() != static_cast<size_t>((b1 - b0_) * n_))
    throw std::logic_error("PatternOverlay: the simulated waveform has the wrong length");
}

void PatternOverlay::lay_out(const Signal& signal) {
  const bool pam4 = signal.modulation == Modulation::pam4;
  eyes_ = pam4 ? 3 : 1;
  const std::uint64_t period = prbs_period(signal.pattern);
  truncated_ = period > max_overlay_symbols;
  count_ = static_cast<long>(truncated_ ? max_overlay_symbols : period);
  // Truncated patterns overlay a typical stretch, half a period in (prbs_typical_start), not the
  // run right after the seed; its first `span` symbols of history are simulated and discarded.
  // Periodic ones wrap: the exact periodic steady state.
  first_ = truncated_ ? span_ + 2 : 0;
  const long generated = truncated_ ? first_ + count_ + m_ + 3 : count_;
  const auto bits = prbs_bits(signal.pattern, static_cast<size_t>(pam4 ? 2 * generated : generated),
                              truncated_ ? prbs_typical_start(signal.pattern) : 0);
  symbol_ = pam4 ? pam4_levels(bits) : nrz_levels(bits);

  // Blocks of one UI; block b holds t in [b*UI, (b+1)*UI). Symbol k's pulse starts in block k,
  // its sampling instant is in block k + m, and its trace spans the block either side.
  b0_ = first_ + m_ - 1;
}

std::uint64_t PatternOverlay::settling_symbols() const {
  if (truncated_) return static_cast<std::uint64_t>(first_);
  return static_cast<std::uint64_t>(std::max<long>(1, (span_ + count_ - 1) / count_) * count_);
}

OverlayEnvelope::OverlayEnvelope(const PatternOverlay& overlay)
    : n(overlay.steps_per_ui()), eyes(overlay.eye_count()) {
  const long offsets = 2 * n + 1;
  const auto size = static_cast<size_t>((eyes + 1) * offsets);
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

}  // namespace peakplan
