#include "models/eye.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>

#include "models/eye_overlay.hpp"
#include "models/step_response.hpp"

namespace peakplan {

std::string_view to_string(Modulation modulation) { return modulation == Modulation::pam4 ? "pam4" : "nrz"; }
namespace {

constexpr double kTie = 1e-9;  // heights closer than this are treated as equal

// The centre of the first run of near-maximal values of f over [first, last].
template <class F>
int centre_of_best(F&& f, int first, int last) {
  double best = -std::numeric_limits<double>::infinity();
  for (int i = first; i <= last; ++i) best = std::max(best, f(i));
  int start = first;
  while (f(start) < best - kTie) ++start;
  int end = start;
  while (end + 1 <= last && f(end + 1) >= best - kTie) ++end;
  return (start + end) / 2;
}

// Span (in samples) of the contiguous region around `centre` where f > 0, over [first, last],
// its ends found by linear interpolation between the last open and first closed sample.
template <class F>
double open_span(F&& f, int centre, int first, int last) {
  const auto [left, right] = open_ends(f, centre, first, last);
  return right - left;
}

int main_cursor(const std::vector<double>& c) {
  return static_cast<int>(std::max_element(c.begin(), c.end()) - c.begin());
}

double ideal_eye_fraction(Modulation m) { return m == Modulation::pam4 ? 1.0 / 3.0 : 1.0; }

}  // namespace

std::vector<double> PulseResponse::cursors(int phase_index) const {
  std::vector<double> c(static_cast<size_t>(ui_count));
  for (int j = 0; j < ui_count; ++j)
    c[static_cast<size_t>(j)] = p[static_cast<size_t>(phase_index + j * steps_per_ui)];
  return c;
}

std::vector<double> PulseResponse::cursors_at(double phase_s) const {
  const double x = phase_s / dt();
  const int i0 = static_cast<int>(std::floor(x));
  const double frac = x - i0;
  std::vector<double> c(static_cast<size_t>(ui_count));
  auto at = [&](long k) { return k >= 0 && k < static_cast<long>(p.size()) ? p[static_cast<size_t>(k)] : 0.0; };
  for (int j = 0; j < ui_count; ++j) {
    const long k = i0 + static_cast<long>(j) * steps_per_ui;
    c[static_cast<size_t>(j)] = (1.0 - frac) * at(k) + frac * at(k + 1);
  }
  return c;
}

PulseResponse pulse_response(const Cascade& chain, const Signal& signal, int steps_per_ui) {
  if (!(signal.bit_rate > 0.0) || !std::isfinite(signal.bit_rate))
    throw std::invalid_argument("pulse_response: bit_rate must be positive");
  if (steps_per_ui < default_steps_per_ui)
    throw std::invalid_argument("pulse_response: at least 64 steps per UI");
  if (!(signal.input_rise >= 0.0)) throw std::invalid_argument("pulse_response: input_rise < 0");

  Cascade cascade = chain;
  const double ts = chain.blocks().empty() ? 1e-12 : chain.blocks().front().time_scale();
  if (signal.input_rise > 0.0) {
    const double tau = signal.input_rise / std::log(4.0);
    cascade.append(Rational({1.0}, {1.0, tau / ts}, ts));
  }
  PulseResponse r;
  r.ui = signal.ui();
  r.steps_per_ui = steps_per_ui;
  r.dc_gain = cascade.dc_value();
  if (r.dc_gain == 0.0 || !std::isfinite(r.dc_gain))
    throw std::invalid_argument("pulse_response: the chain has no finite, nonzero DC gain");

  double slowest = std::numeric_limits<double>::infinity();
  for (const auto& pole : cascade.poles()) {
    if (!(pole.real() < 0.0)) throw std::invalid_argument("pulse_response: unstable chain");
    slowest = std::min(slowest, -pole.real());
  }
  // The pulse's tail decays like exp(-slowest*t) once the delay has passed; 16 time constants
  // leave 1e-7 of it, below anything the eye metrics resolve.
  int span = 2;
  if (std::isfinite(slowest)) {
    const double delay = std::max(0.0, -cascade.log_derivative({0.0, 0.0}).real());
    const double needed = std::ceil((2.0 * delay + 16.0 / slowest) / r.ui) + 2.0;
    r.span_capped = needed > max_pulse_ui;
    span = static_cast<int>(std::min<double>(needed, max_pulse_ui));
  }
  r.ui_count = span;

  const SteppedSimulator sim(realise(cascade), r.dt());
  const int points = span * steps_per_ui;
  const auto s = sim.step(points);
  r.p.resize(static_cast<size_t>(points));
  for (int k = 0; k < points; ++k) {
    const double delayed = k >= steps_per_ui ? s[static_cast<size_t>(k - steps_per_ui)] : 0.0;
    r.p[static_cast<size_t>(k)] = (s[static_cast<size_t>(k)] - delayed) / r.dc_gain;
  }
  return r;
}

PeakDistortion peak_distortion(const PulseResponse& pulse, Modulation modulation) {
  const double weight = modulation == Modulation::pam4 ? 3.0 : 1.0;
  const int n = pulse.steps_per_ui;
  std::vector<double> height(static_cast<size_t>(n));
  for (int phase = 0; phase < n; ++phase) {
    const auto c = pulse.cursors(phase);
    const int main = main_cursor(c);
    double others = 0.0;
    for (size_t j = 0; j < c.size(); ++j)
      if (static_cast<int>(j) != main) others += std::fabs(c[j]);
    height[static_cast<size_t>(phase)] = c[static_cast<size_t>(main)] - weight * others;
  }
  PeakDistortion r;
  r.phase_index = centre_of_best([&](int i) { return height[static_cast<size_t>(i)]; }, 0, n - 1);
  r.height = height[static_cast<size_t>(r.phase_index)];
  r.cursors = pulse.cursors(r.phase_index);
  r.main_index = main_cursor(r.cursors);
  r.sample_time_s = (r.phase_index + static_cast<double>(r.main_index) * n) * pulse.dt();
  return r;
}

PrbsEye prbs_eye(const PulseResponse& pulse, const Signal& signal) { return prbs_eye(pulse, signal, EyeOverlay(pulse, signal)); }

PrbsEye prbs_eye(const PulseResponse& pulse, const Signal& signal, const EyeOverlay& built) {
  const auto& pda = built.pda;
  const auto& overlay = built.overlay;
  const auto& envelope = built.envelope;
  const int n = pulse.steps_per_ui;
  const bool pam4 = signal.modulation == Modulation::pam4;
  const int eyes = overlay.eye_count();

  PrbsEye r;
  r.modulation = signal.modulation;
  r.pattern_truncated = overlay.truncated();
  r.symbols_overlaid = static_cast<std::uint64_t>(overlay.count());
  r.settling_symbols = overlay.settling_symbols();

  auto eye_height = [&](int e, int o) { return envelope.height(e, o); };
  auto eye_margin = [&](int e, int o) { return envelope.margin(e, o); };
  auto opening = [&](auto&& height, auto&& margin) {
    EyeOpening e;
    const int best = centre_of_best(height, -n / 2, n / 2);
    e.height = height(best);
    e.best_offset_s = best * pulse.dt();
    e.width_ui = open_span(margin, best, -n, n) / n;
    e.open_span_ui = open_span(height, best, -n, n) / n;
    return e;
  };
  for (int e = 0; e < eyes; ++e)
    r.eyes.push_back(opening([&](int o) { return eye_height(e, o); },
                             [&](int o) { return eye_margin(e, o); }));
  auto worst = [&](auto&& f) {
    return [&, f](int o) {
      double v = std::numeric_limits<double>::infinity();
      for (int e = 0; e < eyes; ++e) v = std::min(v, f(e, o));
      return v;
    };
  };
  r.eye = opening(worst(eye_height), worst(eye_margin));
  {
    const int best = static_cast<int>(std::lround(r.eye.best_offset_s / pulse.dt()));
    std::vector<double> thresholds;
    for (int e = 0; e < eyes; ++e) thresholds.push_back(envelope.centre(e, best));
    auto margin = [&](int o) {  // where every eye is open at its own centred threshold
      double v = std::numeric_limits<double>::infinity();
      for (int e = 0; e < eyes; ++e) v = std::min(v, envelope.margin_to(e, o, thresholds[static_cast<size_t>(e)]));
      return v;
    };
    r.width_centred_ui = margin(best) > 0.0 ? open_span(margin, best, -n, n) / n : 0.0;
  }
  for (int e = 0; e < eyes; ++e)
    if (r.eyes[static_cast<size_t>(e)].height < r.eyes[static_cast<size_t>(r.worst_eye)].height) r.worst_eye = e;
  r.sample_time_s = pda.sample_time_s + r.eye.best_offset_s;

  if (!pam4) {
    // Overlaid symbols 0 .. K-1 own the boundaries (i-1, i) for i in (0, K]; their edges lie
    // between consecutive sampling instants, where the crossings are looked for.
    const long count = overlay.count();
    const long boundaries = r.pattern_truncated ? count - 1 : count;
    for (long i = 1; i <= boundaries; ++i)
      if (overlay.level(i) != overlay.level(i - 1)) ++r.transitions;
    const long g_start = overlay.sampling_index(0), g_end = overlay.sampling_index(boundaries);
    const double edge = pda.phase_index + n / 2.0;  // nominal edge phase: half a UI from the sampling phase
    double earliest = std::numeric_limits<double>::infinity(), latest = -earliest;
    for (long g = g_start; g < g_end; ++g) {
      const double y0 = overlay.sample(g), y1 = overlay.sample(g + 1);
      if ((y0 >= 0.5) == (y1 >= 0.5)) continue;
      ++r.crossings;
      const double t = g + (0.5 - y0) / (y1 - y0);
      double offset = std::fmod(t - edge, n);
      if (offset < -n / 2.0) offset += n;
      if (offset >= n / 2.0) offset -= n;
      earliest = std::min(earliest, offset);
      latest = std::max(latest, offset);
    }
    if (r.crossings == r.transitions && r.crossings > 0) r.ddj_pp_s = (latest - earliest) * pulse.dt();
  }
  return r;
}

double ber_from_q(double q) { return 0.5 * std::erfc(q / std::numbers::sqrt2); }

double q_from_ber(double ber) {
  if (!(ber > 0.0 && ber < 0.5)) throw std::invalid_argument("q_from_ber: ber must be in (0, 0.5)");
  // A plan asks for the same target BER in every evaluation, and the bisection below costs 49
  // erfc calls (3 % of a receiver plan's time): the last answer is kept, one per thread.
  thread_local double last_ber = 0.0, last_q = 0.0;
  if (ber == last_ber) return last_q;
  // Bisection on the monotone tail: no approximation of the inverse to justify.
  double lo = 0.0, hi = 40.0;
  for (int i = 0; i < 200 && hi - lo > 1e-13; ++i) {
    const double mid = 0.5 * (lo + hi);
    (ber_from_q(mid) > ber ? lo : hi) = mid;
  }
  last_ber = ber;
  last_q = 0.5 * (lo + hi);
  return last_q;
}

namespace {

// The spread of the ISI a phase's cursors can add: the sum of the negative and of the positive
// cursors other than the main one.
std::pair<double, double> isi_bounds(std::span<const double> cursors, int main_index) {
  double isi_min = 0.0, isi_max = 0.0;
  for (size_t j = 0; j < cursors.size(); ++j) {
    if (static_cast<int>(j) == main_index) continue;
    isi_min += std::min(0.0, cursors[j]);
    isi_max += std::max(0.0, cursors[j]);
  }
  return {isi_min, isi_max};
}

double noise_reach(double ber) { return std::max(8.0, q_from_ber(ber) + 2.0); }  // noise tail, in sigma

// The voltage grid of height_at_ber and the Gaussian tail on it, P(N > m*delta) for |m| <= half,
// which one statistical eye shares over its phases (the tail depends only on delta / sigma).
// erfc(x) is exactly 2 in double below x = -6 (2 - 2e-17 rounds to 2) and exactly 0 above
// x = 28 (it underflows): those entries are set without the call, and hold the same bits.
struct BerGrid {
  double delta = 0.0;
  int half = 0;
  std::vector<double> tail;
  BerGrid(double delta_, double sigma, int half_) : delta(delta_), half(half_), tail(static_cast<size_t>(2 * half_ + 1)) {
    for (int mm = -half; mm <= half; ++mm) {
      double t;
      if (sigma > 0.0) {
        const double x = mm * delta / (sigma * std::numbers::sqrt2);
        t = x < -6.0 ? 1.0 : x > 28.0 ? 0.0 : 0.5 * std::erfc(x);
      } else {
        t = mm < 0 ? 1.0 : 0.0;
      }
      tail[static_cast<size_t>(mm + half)] = t;
    }
  }
};

// Bins of max(range/2048, (range + 2 reach sigma)/8192) for an ISI range of `range`; 0 when there
// is neither ISI nor noise.
double grid_delta(double range, double sigma, double reach) {
  const double total = range + 2.0 * reach * sigma;
  return total == 0.0 ? 0.0 : std::max(range / 2048.0, total / 8192.0);
}
// Tail entries a phase of ISI range `range` can need on bins of `delta`.
int grid_half(double range, double sigma, double reach, double delta) {
  const int bins = static_cast<int>(std::ceil(range / delta)) + 2;
  const int noise_bins = sigma > 0.0 ? static_cast<int>(std::ceil(reach * sigma / delta)) + 1 : 1;
  return bins + noise_bins + 2;
}

// The ISI a phase's cursors add, as a distribution on x = isi_min + i*delta, the shared grid's
// bins; `occupied` bins from the first can be non-zero. Each cursor's share a*c - min(0, c) in
// [0, |c|] is split between its two neighbouring bins so the mean stays exact. Cursors below
// delta/16 are left out and their sum kept in `dropped`, which the caller adds to the spread:
// that only makes the result conservative.
struct IsiPmf {
  std::vector<double> pmf;
  int occupied = 1;
  double dropped = 0.0;
};

IsiPmf isi_pmf(std::span<const double> cursors, int main_index, int eyes, double isi_range, double delta) {
  const int levels = eyes + 1;
  const int bins = static_cast<int>(std::ceil(isi_range / delta)) + 2;
  IsiPmf d;
  d.pmf.assign(static_cast<size_t>(bins), 0.0);
  std::vector<double> next(d.pmf.size());
  auto& pmf = d.pmf;
  int& occupied = d.occupied;
  pmf[0] = 1.0;
  for (size_t j = 0; j < cursors.size(); ++j) {
    if (static_cast<int>(j) == main_index) continue;
    const double c = cursors[j];
    if (std::fabs(c) < delta / 16.0) {
      d.dropped += std::fabs(c);
      continue;
    }
    std::fill(next.begin(), next.begin() + std::min(bins, occupied + static_cast<int>(std::fabs(c) / delta) + 2), 0.0);
    int reach_bins = occupied;
    for (int l = 0; l < levels; ++l) {
      const double a = static_cast<double>(l) / eyes;
      const double shift = (a * c - std::min(0.0, c)) / delta;
      const int whole = static_cast<int>(std::floor(shift));
      const double frac = shift - whole;
      const double w0 = (1.0 - frac) / levels, w1 = frac / levels;
      for (int i = 0; i < occupied; ++i) {
        const double v = pmf[static_cast<size_t>(i)];
        if (v == 0.0) continue;
        const int k = std::min(i + whole, bins - 2);
        next[static_cast<size_t>(k)] += w0 * v;
        next[static_cast<size_t>(k + 1)] += w1 * v;
      }
      reach_bins = std::max(reach_bins, std::min(bins, occupied + whole + 2));
    }
    occupied = reach_bins;
    std::swap(pmf, next);
  }
  return d;
}

// P(X + noise > x_i) and P(X + noise < x_i) at grid points i (which may lie outside the ISI
// bins, out to the noise reach), with the Gaussian tail of the shared grid:
// P(X + N > x_i) = sum D_k P(N > x_i - x_k); P(X + N < x_i) = sum D_k P(N > x_k - x_i).
struct NoisyIsiTails {
  const double* pmf;
  int occupied;
  const double* tail;
  int table_half;

  // Each sum runs over the bins in order; terms[k] = pmf[k] * tail[first + step * k].
  double in_order(int first, int step) const {
    double sum = 0.0;
    for (int k = 0; k < occupied; ++k) sum += pmf[k] * tail[first + step * k];
    return sum;
  }
  // The same sum in four interleaved parts: several times faster (the parts do not wait on one
  // another), equal to it within rounding. It only steers the search in ber_quantile.
  double in_parts(int first, int step) const {
    double part[4] = {0.0, 0.0, 0.0, 0.0};
    int k = 0;
    for (; k + 4 <= occupied; k += 4)
      for (int q = 0; q < 4; ++q) part[q] += pmf[k + q] * tail[first + step * (k + q)];
    for (; k < occupied; ++k) part[0] += pmf[k] * tail[first + step * k];
    return (part[0] + part[1]) + (part[2] + part[3]);
  }
  // P(X + N > x_i) when Upper, else P(X + N < x_i); the fast sum when `fast`.
  template <bool Upper>
  double at(int i, bool fast) const {
    const int first = Upper ? i + table_half : table_half - i;
    const int step = Upper ? -1 : 1;
    return fast ? in_parts(first, step) : in_order(first, step);
  }
};

// The upper (lower) quantile, in bins of the grid from isi_min: the smallest (largest) grid point
// in [i_lo, i_hi] with P(> x) <= ber (P(< x) <= ber), refined in log between points.
// Both tails are monotonic in i term by term, and so in floating point too (every term keeps
// its place in the sum; rounding is monotonic), so the bracket is unique: the fast sums find
// it, and the in-order sums, which the interpolation uses, confirm it, or move it by a point
// where the two kinds of sum fall on either side of the ber within rounding.
template <bool Upper>
double ber_quantile(const NoisyIsiTails& tails, double ber, double sigma, int i_lo, int i_hi) {
  auto reached = [&](double t) { return Upper ? t <= ber : t > ber; };  // false below b, true from b
  int a = i_lo, b = i_hi;
  while (b - a > 1) {
    const int mid = (a + b) / 2;
    (reached(tails.at<Upper>(mid, true)) ? b : a) = mid;
  }
  double t_a = tails.at<Upper>(a, false), t_b = tails.at<Upper>(b, false);
  while (a > i_lo && reached(t_a)) {
    b = a--;
    t_b = t_a;
    t_a = tails.at<Upper>(a, false);
  }
  while (b < i_hi && !reached(t_b)) {
    a = b++;
    t_a = t_b;
    t_b = tails.at<Upper>(b, false);
  }
  const int inside = Upper ? a : b, outside = Upper ? b : a;
  const double t_in = Upper ? t_a : t_b, t_out = Upper ? t_b : t_a;
  double x = outside;
  if (t_out > 0.0 && t_in > t_out && sigma > 0.0)
    x = inside + (outside - inside) * (std::log(t_in) - std::log(ber)) / (std::log(t_in) - std::log(t_out));
  return x;
}

// The inner eye height at the ber for one phase's cursors: the level spacing less the spread
// between the upper and lower ber quantiles of ISI plus noise, for each of the eyes.
double height_on_grid(std::span<const double> cursors, int main_index, Modulation modulation, double sigma,
                      double ber, double reach, const BerGrid& grid) {
  const int eyes = modulation == Modulation::pam4 ? 3 : 1;
  const double spacing = cursors[static_cast<size_t>(main_index)] / eyes;
  const auto [isi_min, isi_max] = isi_bounds(cursors, main_index);
  const double delta = grid.delta;
  if (delta == 0.0) return spacing * eyes;

  const IsiPmf isi = isi_pmf(cursors, main_index, eyes, isi_max - isi_min, delta);
  const int noise_bins = sigma > 0.0 ? static_cast<int>(std::ceil(reach * sigma / delta)) + 1 : 1;
  const NoisyIsiTails tails{isi.pmf.data(), isi.occupied, grid.tail.data(), grid.half};
  const int i_lo = -noise_bins - 1, i_hi = isi.occupied + noise_bins;
  const double upper = isi_min + ber_quantile<true>(tails, ber, sigma, i_lo, i_hi) * delta;
  const double lower = isi_min + ber_quantile<false>(tails, ber, sigma, i_lo, i_hi) * delta;
  return eyes * (spacing - (upper - lower) - isi.dropped);
}

}  // namespace

double height_at_ber(std::span<const double> cursors, int main_index, Modulation modulation,
                     double sigma, double ber, double* resolution) {
  if (!(sigma >= 0.0)) throw std::invalid_argument("height_at_ber: sigma < 0");
  const double reach = noise_reach(ber);
  const auto [isi_min, isi_max] = isi_bounds(cursors, main_index);
  const double range = isi_max - isi_min;
  const double delta = grid_delta(range, sigma, reach);
  if (resolution) *resolution = delta;
  const BerGrid grid(delta, sigma, delta > 0.0 ? grid_half(range, sigma, reach, delta) : 0);
  return height_on_grid(cursors, main_index, modulation, sigma, ber, reach, grid);
}

double eye_q(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal, double noise_rms_v) {
  const double ideal_eye_v = signal.swing * std::fabs(pulse.dc_gain) * ideal_eye_fraction(signal.modulation);
  const double inner_v = std::max(0.0, prbs.eye.height) * ideal_eye_v;
  return noise_rms_v > 0.0 ? inner_v / (2.0 * noise_rms_v) : std::numeric_limits<double>::infinity();
}

StatisticalEye statistical_eye(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                               double noise_rms_v) {
  if (!(noise_rms_v >= 0.0)) throw std::invalid_argument("statistical_eye: noise < 0");
  if (!(signal.swing > 0.0)) throw std::invalid_argument("statistical_eye: swing must be positive");
  StatisticalEye r;
  r.noise_rms_v = noise_rms_v;
  r.target_ber = signal.target_ber;
  r.ideal_eye_v = signal.swing * std::fabs(pulse.dc_gain) * ideal_eye_fraction(signal.modulation);
  const double sigma = noise_rms_v / (signal.swing * std::fabs(pulse.dc_gain));  // normalised

  r.q = eye_q(pulse, prbs, signal, noise_rms_v);
  r.ber = ber_from_q(r.q);

  const int n = pulse.steps_per_ui;
  // One grid for every phase, fine enough for the widest ISI spread among them, so the Gaussian
  // tail is tabulated once rather than once per phase.
  std::vector<std::vector<double>> cursors(static_cast<size_t>(n));
  double widest = 0.0;
  for (int phase = 0; phase < n; ++phase) {
    cursors[static_cast<size_t>(phase)] = pulse.cursors(phase);
    const auto& c = cursors[static_cast<size_t>(phase)];
    const auto [lo, hi] = isi_bounds(c, main_cursor(c));
    widest = std::max(widest, hi - lo);
  }
  const double reach = noise_reach(signal.target_ber);
  const double delta = grid_delta(widest, sigma, reach);
  const BerGrid grid(delta, sigma, delta > 0.0 ? grid_half(widest, sigma, reach, delta) : 0);
  std::vector<double> h(static_cast<size_t>(n));
  for (int phase = 0; phase < n; ++phase) {
    const auto& c = cursors[static_cast<size_t>(phase)];
    h[static_cast<size_t>(phase)] = height_on_grid(c, main_cursor(c), signal.modulation, sigma, signal.target_ber, reach, grid);
  }
  // The phase axis is circular: phase n-1 is followed by phase 0 of the next UI.
  auto at = [&](int i) { return h[static_cast<size_t>(((i % n) + n) % n)]; };
  const int best = centre_of_best(at, 0, n - 1);
  r.height_at_ber = at(best);
  r.height_at_ber_v = r.height_at_ber * r.ideal_eye_v;
  r.width_at_ber_ui = std::min(1.0, open_span(at, best, best - n, best + n) / n);
  const auto c = pulse.cursors(best);
  r.sample_time_s = (best + static_cast<double>(main_cursor(c)) * n) * pulse.dt();
  return r;
}

EyeEstimate estimate_eye(const Cascade& chain, const Signal& signal, int steps_per_ui) {
  EyeEstimate e;
  e.pulse = pulse_response(chain, signal, steps_per_ui);
  e.pda = peak_distortion(e.pulse, signal.modulation);
  e.prbs = prbs_eye(e.pulse, signal);
  return e;
}

}  // namespace peakplan
