#include "models/large_signal.hpp"

#include <algorithm>
#include <cmath>
#include <future>
#include <stdexcept>

#include "models/eye_overlay.hpp"

namespace peakplan {
namespace {

// The stage's transfer from its gm current to its output voltage.
Rational network_of(const ChainStage& stage) {
  const Rational h = stage_rational(stage);
  std::vector<double> num = h.numerator();
  for (auto& c : num) c /= stage.circuit.gm;
  return Rational(std::move(num), h.denominator(), h.time_scale());
}

}  // namespace

LargeSignalPath::LargeSignalPath(const Chain& chain, int output, const Signal& signal, bool linear)
    : ui_(signal.ui()), linear_(linear) {
  Cascade block;
  block.append(source_rational(chain));
  const double ts = block.blocks().front().time_scale();
  if (signal.input_rise > 0.0) {
    // The input edge of pulse_response: a real pole at 1/tau, tau = input_rise / ln 4.
    const double tau = signal.input_rise / std::log(4.0);
    block.append(Rational({1.0}, {1.0, tau / ts}, ts));
  }
  Segment current;
  auto close = [&]() {
    current.network = realise(block);
    current.dc_gain = block.dc_value();
    segments_.push_back(std::move(current));
    current = Segment{};
    block = Cascade();
  };
  for (int s : chain.path_to(output)) {
    const auto& stage = chain.stages[static_cast<size_t>(s)];
    if (stage.limit) {
      close();
      current.limit = stage.limit;
      current.gm = stage.circuit.gm;
      block.append(network_of(stage));
      limited_.push_back(s);
    } else {
      block.append(stage_rational(stage));
    }
  }
  close();
}

double LargeSignalPath::drive(const Segment& s, double v) const {
  return linear_ ? s.gm * v : pair_current(*s.limit, s.gm, v);
}

std::vector<double> LargeSignalPath::run(const std::vector<double>& input, int steps_per_ui, int output_steps) const {
  if (output_steps == 0) output_steps = steps_per_ui;
  if (output_steps % steps_per_ui != 0)
    throw std::invalid_argument("LargeSignalPath::run: output_steps must be a multiple of steps_per_ui");
  const double dt = ui_ / steps_per_ui;
  const auto n = static_cast<size_t>(steps_per_ui);
  std::vector<double> u(input.size() * n);
  for (size_t s = 0; s < input.size(); ++s) std::fill_n(u.begin() + static_cast<long>(s * n), n, input[s]);
  const auto& lead = segments_.front();
  std::vector<double> v = HoldSimulator(lead.network, dt, HoldSimulator::Hold::held).run(u);
  // A pure-gain lead passes the held symbols on: the first pair's current is then held too.
  bool held = lead.network.order() == 0;
  for (size_t j = 1; j < segments_.size(); ++j) {
    const auto& seg = segments_[j];
    for (auto& x : v) x = drive(seg, x);
    v = HoldSimulator(seg.network, dt, held ? HoldSimulator::Hold::held : HoldSimulator::Hold::cubic, steps_per_ui).run(v);
    held = held && seg.network.order() == 0;
  }
  // The output of the last network is the integral of a bounded current, smooth within each
  // symbol even where the current clips: the hold's cubic between its samples.
  return cubic_resample(v, output_steps / steps_per_ui, steps_per_ui);
}

double LargeSignalPath::dc_output(double v) const {
  v *= segments_.front().dc_gain;
  for (size_t j = 1; j < segments_.size(); ++j) v = segments_[j].dc_gain * drive(segments_[j], v);
  return v;
}

std::vector<double> LargeSignalPath::stage_inputs(double v) const {
  std::vector<double> inputs;
  v *= segments_.front().dc_gain;
  for (size_t j = 1; j < segments_.size(); ++j) {
    inputs.push_back(v);
    v = segments_[j].dc_gain * drive(segments_[j], v);
  }
  return inputs;
}

double LargeSignalPath::compression_swing(size_t j) const {
  const auto& seg = segments_.at(j + 1);
  const double target = pair_compression_x(seg.limit->pair) * seg.limit->tail_current / seg.gm;
  auto reach = [&](double v) { return std::fabs(stage_inputs(v)[j]); };
  // The settled input of stage j grows monotonically with the chain input (every curve is
  // monotone): bisection in log over a span no chain input leaves.
  double lo = 1e-15, hi = 1e6;
  if (reach(hi) < target) return std::numeric_limits<double>::quiet_NaN();
  for (int i = 0; i < 200 && hi / lo - 1.0 > 1e-13; ++i) {
    const double mid = std::sqrt(lo * hi);
    (reach(mid) < target ? lo : hi) = mid;
  }
  return 4.0 * std::sqrt(lo * hi);  // half-circuit peak -> differential peak to peak
}

namespace {

// Half-circuit input for a symbol level a in [0, 1]: the differential input is swing*(a - 1/2).
double half_input(const Signal& signal, double a) { return 0.5 * signal.swing * (a - 0.5); }

// 50 % crossing of a full-swing rising input edge, after the edge, held long either side.
double edge_delay(const LargeSignalPath& path, const Signal& signal, long hold, int steps, int grid) {
  std::vector<double> input(static_cast<size_t>(2 * hold));
  for (long s = 0; s < 2 * hold; ++s) input[static_cast<size_t>(s)] = half_input(signal, s < hold ? 0.0 : 1.0);
  const auto y = path.run(input, steps, grid);
  steps = grid;
  const double low = path.dc_output(input.front()), high = path.dc_output(input.back());
  const double mid = 0.5 * (low + high);
  const auto edge = static_cast<size_t>(hold * steps);
  const double dt = path.ui() / steps;
  const bool rising = high > low;
  for (size_t k = edge; k + 1 < y.size(); ++k) {
    const bool before = rising ? y[k] < mid : y[k] > mid;
    const bool after = rising ? y[k + 1] >= mid : y[k + 1] <= mid;
    if (before && after) return (static_cast<double>(k - edge) + (mid - y[k]) / (y[k + 1] - y[k])) * dt;
  }
  return std::numeric_limits<double>::quiet_NaN();
}

}  // namespace

double LargeSignalEye::volts(double level) const {
  if (levels_v.size() < 2) throw std::logic_error("LargeSignalEye::volts: no settled levels");
  const int eyes = static_cast<int>(levels_v.size()) - 1;
  const double x = level * eyes;
  // The end segments extend beyond 0 and 1, as the forward map does for over- and undershoot.
  const auto e = static_cast<size_t>(std::clamp(static_cast<int>(std::floor(x)), 0, eyes - 1));
  return levels_v[e] + (x - static_cast<double>(e)) * (levels_v[e + 1] - levels_v[e]);
}

LargeSignalEye large_signal_eye_at(const Chain& chain, int output, const Signal& signal, int steps,
                                   const HalfCircuitRun& run, bool keep_traces) {
  if (!(signal.swing > 0.0) || !std::isfinite(signal.swing))
    throw std::invalid_argument("large_signal_eye: the swing must be positive");
  const LargeSignalPath path(chain, output, signal);
  const int eyes = signal.eye_count();
  LargeSignalEye r;
  r.modulation = signal.modulation;
  r.input_swing_v = signal.swing;
  r.steps_per_ui = steps;
  r.step_s = signal.ui() / steps;
  r.grid_steps_per_ui = steps;

  std::vector<double> levels;  // settled, half circuit
  for (int l = 0; l <= eyes; ++l) levels.push_back(path.dc_output(half_input(signal, static_cast<double>(l) / eyes)));
  for (double l : levels) r.levels_v.push_back(2.0 * l);
  if (eyes == 3) {
    const double middle = std::fabs(levels[2] - levels[1]);
    const double outer = 0.5 * (std::fabs(levels[1] - levels[0]) + std::fabs(levels[3] - levels[2]));
    r.level_compression = outer / middle;
  }

  const PulseResponse pulse = pulse_response(output_cascade(chain, output), signal, steps);
  const PeakDistortion pda = peak_distortion(pulse, signal.modulation);
  // Settled levels -> 0, 1/eyes, ..., 1, piecewise linearly (an inverting chain included).
  const bool rising = levels.back() > levels.front();
  auto normalise = [&](double y) {
    int e = 0;
    while (e + 1 < eyes && (rising ? y > levels[static_cast<size_t>(e + 1)] : y < levels[static_cast<size_t>(e + 1)])) ++e;
    const double l0 = levels[static_cast<size_t>(e)], l1 = levels[static_cast<size_t>(e + 1)];
    return (e + (y - l0) / (l1 - l0)) / eyes;
  };
  auto simulate = [&](const std::vector<double>& symbols, long warm) {
    std::vector<double> input(symbols.size());
    for (size_t s = 0; s < symbols.size(); ++s) input[s] = half_input(signal, symbols[s]);
    auto y = run(input, steps);
    if (y.size() != input.size() * static_cast<size_t>(steps))
      throw std::logic_error("large_signal_eye_at: the run returned the wrong number of samples");
    y.erase(y.begin(), y.begin() + warm * steps);
    for (auto& v : y) v = normalise(v);
    return y;
  };
  const EyeOverlay built(pda, PatternOverlay(steps, pulse.ui_count, signal, pda, simulate));
  r.eye = prbs_eye(pulse, signal, built);
  if (keep_traces) r.traces = eye_traces(pulse, r.eye, signal, built);
  const long common = std::lround(r.eye.eye.best_offset_s / pulse.dt());
  r.height_v = std::numeric_limits<double>::infinity();
  for (int e = 0; e < eyes; ++e) {
    const double spacing = 2.0 * std::fabs(levels[static_cast<size_t>(e + 1)] - levels[static_cast<size_t>(e)]);
    r.height_v = std::min(r.height_v, built.envelope.height(e, common) * spacing);
    r.eye_heights_v.push_back(r.eye.eyes[static_cast<size_t>(e)].height * spacing);
  }
  r.width_ui = r.eye.eye.width_ui;
  r.ddj_pp_s = r.eye.ddj_pp_s;
  return r;
}

LargeSignalEye large_signal_eye_fixed(const Chain& chain, int output, const Signal& signal, int steps, int grid,
                                      bool keep_traces) {
  const LargeSignalPath path(chain, output, signal);
  const HalfCircuitRun run = [&](const std::vector<double>& input, int g) { return path.run(input, steps, g); };
  LargeSignalEye r = large_signal_eye_at(chain, output, signal, grid, run, keep_traces);
  r.steps_per_ui = steps;
  r.step_s = signal.ui() / steps;
  r.grid_steps_per_ui = grid;
  return r;
}

LargeSignalEye large_signal_eye(const Chain& chain, int output, const Signal& signal, const LargeSignalOptions& options) {
  const LargeSignalPath path(chain, output, signal);
  // Simulated at `steps` per UI, measured on a grid of at least default_steps_per_ui (the eye
  // code's resolution), the same grid for both runs of a comparison.
  auto grid_for = [](int steps) { return std::max(default_steps_per_ui, steps); };
  auto at = [&](int steps, int grid) {
    return large_signal_eye_fixed(chain, output, signal, steps, grid, options.keep_traces);
  };
  const double ideal_v =
      2.0 * std::fabs(path.dc_output(half_input(signal, 1.0)) - path.dc_output(half_input(signal, 0.0))) / signal.eye_count();

  // The step: halve until the eye height and width move by less than the tolerance. The two runs of
  // the first comparison are independent and run on two threads; each run is sequential, so
  // the result does not depend on the thread count.
  int steps = options.min_steps_per_ui;
  auto finer_future = std::async(std::launch::async, at, 2 * steps, grid_for(2 * steps));
  LargeSignalEye coarse = at(steps, grid_for(2 * steps));
  LargeSignalEye finer = finer_future.get();
  double change = 0.0;
  bool converged = false;
  for (;;) {
    // Height and width both: at 16 steps per UI a PAM4 eye's height has settled while its width
    // (read where the interpolated edges cross the thresholds) is still 0.8 % short.
    const double scale = std::max(std::fabs(finer.height_v), 0.05 * ideal_v);
    change = std::max(std::fabs(coarse.height_v - finer.height_v) / scale,
                      std::fabs(coarse.width_ui - finer.width_ui) / std::max(finer.width_ui, 0.05));
    converged = change < options.tolerance;
    if (converged || 2 * steps >= options.max_steps_per_ui) break;
    steps *= 2;
    // The finer run becomes the coarse one when the grid does not change; otherwise redo it.
    coarse = grid_for(steps) == grid_for(2 * steps) ? std::move(finer) : at(steps, grid_for(2 * steps));
    finer = at(2 * steps, grid_for(2 * steps));
  }
  LargeSignalEye r = std::move(coarse);
  r.steps_per_ui = steps;
  r.step_s = signal.ui() / steps;
  r.step_change = change;
  r.converged = converged;

  // Held long enough for the step response to settle: the linear pulse response's span.
  const long hold = pulse_response(output_cascade(chain, output), signal).ui_count + 2;
  const LargeSignalPath small(chain, output, signal, true);
  r.delay_s = edge_delay(path, signal, hold, steps, r.grid_steps_per_ui);
  r.linear_delay_s = edge_delay(small, signal, hold, steps, r.grid_steps_per_ui);
  r.delay_shift_s = r.delay_s - r.linear_delay_s;

  for (size_t j = 0; j < path.limited_stages().size(); ++j)
    r.compression.push_back({path.limited_stages()[j], path.compression_swing(j)});
  return r;
}

}  // namespace peakplan
