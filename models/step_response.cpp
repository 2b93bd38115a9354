#include "models/step_response.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <stdexcept>
#include <unsupported/Eigen/MatrixFunctions>

#include "models/fixed_size.hpp"
#include "models/frequency_response.hpp"

namespace peakplan {
namespace {

StateSpace realise_block(const Rational& block) {
  const auto& num = block.numerator();
  const auto& den = block.denominator();
  const int n = block.order();
  if (block.numerator_degree() > n)
    throw std::logic_error("realise: improper transfer function");
  const double lead = den.back();
  StateSpace ss;
  ss.time_scale = block.time_scale();
  ss.a = Eigen::MatrixXd::Zero(n, n);
  ss.b = Eigen::VectorXd::Zero(n);
  ss.c = Eigen::RowVectorXd::Zero(n);
  const double bn = static_cast<int>(num.size()) == n + 1 ? num.back() / lead : 0.0;
  ss.d = bn;
  if (n == 0) {
    ss.d = num[0] / den[0];
    return ss;
  }
  for (int i = 0; i + 1 < n; ++i) ss.a(i, i + 1) = 1.0;
  for (int k = 0; k < n; ++k) {
    const double ak = den[static_cast<size_t>(k)] / lead;
    const double bk = k < static_cast<int>(num.size()) ? num[static_cast<size_t>(k)] / lead : 0.0;
    ss.a(n - 1, k) = -ak;
    ss.c(k) = bk - ak * bn;
  }
  ss.b(n - 1) = 1.0;
  return ss;
}

// first, then second: u -> first -> second -> y.
StateSpace series(const StateSpace& first, const StateSpace& second) {
  const int n1 = first.order(), n2 = second.order();
  StateSpace s;
  s.time_scale = first.time_scale;
  s.a = Eigen::MatrixXd::Zero(n1 + n2, n1 + n2);
  s.a.topLeftCorner(n1, n1) = first.a;
  s.a.bottomRightCorner(n2, n2) = second.a;
  s.a.bottomLeftCorner(n2, n1) = second.b * first.c;
  s.b = Eigen::VectorXd(n1 + n2);
  s.b << first.b, second.b * first.d;
  s.c = Eigen::RowVectorXd(n1 + n2);
  s.c << second.d * first.c, second.c;
  s.d = second.d * first.d;
  return s;
}

}  // namespace

StateSpace realise(const Cascade& cascade) {
  StateSpace total;
  total.a = Eigen::MatrixXd::Zero(0, 0);
  total.b = Eigen::VectorXd::Zero(0);
  total.c = Eigen::RowVectorXd::Zero(0);
  total.d = 1.0;
  for (const auto& block : cascade.blocks()) {
    if (block.time_scale() != total.time_scale)
      throw std::logic_error("realise: blocks with different time scales");
    total = series(total, realise_block(block));
  }
  return total;
}

SteppedSimulator::SteppedSimulator(StateSpace model, double dt) : model_(std::move(model)), dt_(dt) {
  const int n = model_.order();
  Eigen::MatrixXd augmented = Eigen::MatrixXd::Zero(n + 1, n + 1);
  augmented.topLeftCorner(n, n) = model_.a;
  augmented.topRightCorner(n, 1) = model_.b;
  const Eigen::MatrixXd e = (augmented * (dt / model_.time_scale)).exp();
  phi_ = e.topLeftCorner(n, n);
  gamma_ = e.topRightCorner(n, 1);
  // The rows each column of phi has entries in: from its first to its last nonzero.
  rows_.assign(static_cast<size_t>(n), {0, 0});
  for (int j = 0; j < n; ++j) {
    int first = 0, last = n - 1;
    while (first < n && phi_(first, j) == 0.0) ++first;
    while (last > first && phi_(last, j) == 0.0) --last;
    rows_[static_cast<size_t>(j)] = first < n ? std::pair{first, last + 1} : std::pair{0, 0};
  }
}

namespace {

// x[k+1] = phi x[k] + gamma u[k], y[k] = c x[k] + d u[k], for a fixed order N (0: the general
// order n), so the compiler unrolls and vectorises the orders chains have (up to 16: a T-coil,
// a series and a shunt stage and a plain one are 10; measured, the planner's search on such a
// chain spends 20 % less time than with the general loop from order 7 on, and a six-stage one
// 10 % less from order 13 on, although the fixed loop multiplies the exact zeros too). The
// product is written out column by column: for the few states of a cascade a general matrix-vector product costs more in its set-up than
// in its arithmetic. Column j of phi is used over rows rows[j].first .. rows[j].second - 1 only:
// a cascade's phi is block lower triangular, with exact zeros above the blocks, and leaving out
// a product with an exact zero changes no sum. Each row sums its terms in column order, as the
// general product did, and y uses Eigen's own dot product, so the results are the same bits.
template <int N>
void stepped_loop(int n, const double* phi, const std::vector<std::pair<int, int>>& rows, const double* gamma,
                  const Eigen::RowVectorXd& c, double d, const std::vector<double>& u, std::vector<double>& y) {
  if constexpr (N > 0) n = N;
  Eigen::VectorXd x = Eigen::VectorXd::Zero(n), next(n);
  for (size_t k = 0; k < u.size(); ++k) {
    y[k] = c.dot(x) + d * u[k];
    const double* xs = x.data();
    double* ns = next.data();
    for (int r = 0; r < n; ++r) ns[r] = 0.0;
    for (int j = 0; j < n; ++j) {
      const double xj = xs[j];
      const double* column = phi + static_cast<std::ptrdiff_t>(j) * n;
      if constexpr (N > 0) {
        for (int r = 0; r < N; ++r) ns[r] += column[r] * xj;
      } else {
        const auto [first, end] = rows[static_cast<size_t>(j)];
        for (int r = first; r < end; ++r) ns[r] += column[r] * xj;
      }
    }
    for (int r = 0; r < n; ++r) ns[r] += gamma[r] * u[k];
    x.swap(next);
  }
}

}  // namespace

std::vector<double> SteppedSimulator::run(const std::vector<double>& u) const {
  std::vector<double> y(u.size());
  const double* phi = phi_.data();  // column-major
  const double* gamma = gamma_.data();
  const auto& c = model_.c;
  const double d = model_.d;
  with_fixed_size<16>(
      model_.order(), [&](auto n) { stepped_loop<n.value>(n.value, phi, rows_, gamma, c, d, u, y); },
      [&] { stepped_loop<0>(model_.order(), phi, rows_, gamma, c, d, u, y); });
  return y;
}

std::vector<double> SteppedSimulator::step(int points) const {
  // y[0] is the value just after the step (the direct term), as for any held input.
  return run(std::vector<double>(static_cast<size_t>(points), 1.0));
}

namespace {

// The cubic through (nodes[m], u_m), m = 0..3: weights[m][j] of u_m in its j-th derivative at 0.
std::array<std::array<double, 4>, 4> cubic_derivative_weights(const std::array<double, 4>& nodes) {
  Eigen::Matrix4d v;
  for (int m = 0; m < 4; ++m)
    for (int p = 0; p < 4; ++p) v(m, p) = std::pow(nodes[static_cast<size_t>(m)], p);
  const Eigen::Matrix4d inverse = v.inverse();  // coefficients c = inverse * u
  const double factorial[4] = {1.0, 1.0, 2.0, 6.0};
  std::array<std::array<double, 4>, 4> w{};
  for (int m = 0; m < 4; ++m)
    for (int j = 0; j < 4; ++j) w[static_cast<size_t>(m)][static_cast<size_t>(j)] = factorial[j] * inverse(j, m);
  return w;
}

// Sample offsets of the four nodes of each stencil: centred, and one-sided for the intervals
// that start or end at a break (the derivatives of a waveform driven by held symbols jump at the
// symbol boundaries; a stencil across one would smear the jump).
constexpr std::array<std::array<int, 4>, 3> kStencils{{{-1, 0, 1, 2}, {0, 1, 2, 3}, {-2, -1, 0, 1}}};

// Which stencil the interval [k, k+1] takes, with breaks every `period` samples (0: none).
int stencil_for(size_t k, int period) {
  if (period < 4) return 0;
  const auto p = static_cast<int>(k % static_cast<size_t>(period));
  return p == 0 ? 1 : p == period - 1 ? 2 : 0;
}

}  // namespace

HoldSimulator::HoldSimulator(const StateSpace& model, double dt, Hold hold, int period)
    : n_(model.order()), hold_(hold), period_(period), dt_(dt), d_(model.d) {
  const int n = n_;
  const double h = dt / model.time_scale;
  Eigen::MatrixXd augmented = Eigen::MatrixXd::Zero(n + 4, n + 4);
  augmented.topLeftCorner(n, n) = model.a * h;
  augmented.block(0, n, n, 1) = model.b * h;
  for (int j = 0; j < 3; ++j) augmented(n + j, n + j + 1) = 1.0;
  const Eigen::MatrixXd e = augmented.exp();
  // G_j: the state after one step from rest for the input tau^j/j!, tau in [0, 1].
  const Eigen::MatrixXd g = e.topRightCorner(n, 4);
  phi_.resize(static_cast<size_t>(n * n));
  for (int r = 0; r < n; ++r)
    for (int c = 0; c < n; ++c) phi_[static_cast<size_t>(r * n + c)] = e(r, c);
  // w_[(stencil * 4 + m) * n + r]: the weight of the stencil's node m in state r.
  w_.assign(static_cast<size_t>(3 * 4 * n), 0.0);
  for (int st = 0; st < 3; ++st) {
    std::array<double, 4> nodes{};
    for (int m = 0; m < 4; ++m) nodes[static_cast<size_t>(m)] = kStencils[static_cast<size_t>(st)][static_cast<size_t>(m)];
    const auto lagrange = cubic_derivative_weights(nodes);
    for (int m = 0; m < 4; ++m)
      for (int j = 0; j < 4; ++j) {
        // A held input is the constant u[k] (node 0 of the centred stencil) with G_0 alone.
        const bool node_k = kStencils[static_cast<size_t>(st)][static_cast<size_t>(m)] == 0;
        const double weight = hold == Hold::held ? (st == 0 && node_k && j == 0 ? 1.0 : 0.0)
                                                 : lagrange[static_cast<size_t>(m)][static_cast<size_t>(j)];
        for (int r = 0; r < n; ++r) w_[static_cast<size_t>((st * 4 + m) * n + r)] += weight * g(r, j);
      }
  }
  c_.assign(model.c.data(), model.c.data() + n);
}

namespace {

// The step loop for a fixed order N (0 = the general order n), so the compiler unrolls it.
template <int N>
void hold_loop(int n, bool cubic, int period, double d, const double* phi, const double* w, const double* c,
               const std::vector<double>& u, std::vector<double>& y) {
  if constexpr (N > 0) n = N;
  double x[8] = {0, 0, 0, 0, 0, 0, 0, 0}, next[8];
  std::vector<double> big_x, big_next;
  double* xs = x;
  double* ns = next;
  if (n > 8) {
    big_x.assign(static_cast<size_t>(n), 0.0);
    big_next.assign(static_cast<size_t>(n), 0.0);
    xs = big_x.data();
    ns = big_next.data();
  }
  const long count = static_cast<long>(u.size()), last = count - 1;
  auto at = [&](long i) { return u[static_cast<size_t>(std::clamp<long>(i, 0, last))]; };
  for (long k = 0; k < count; ++k) {
    double out = d * u[static_cast<size_t>(k)];
    for (int r = 0; r < n; ++r) out += c[r] * xs[r];
    y[static_cast<size_t>(k)] = out;
    if (cubic) {
      const int st = stencil_for(static_cast<size_t>(k), period);
      const auto& offsets = kStencils[static_cast<size_t>(st)];
      const double u0 = at(k + offsets[0]), u1 = at(k + offsets[1]), u2 = at(k + offsets[2]), u3 = at(k + offsets[3]);
      const double* w0 = w + st * 4 * n;
      const double* w1 = w0 + n;
      const double* w2 = w1 + n;
      const double* w3 = w2 + n;
      for (int r = 0; r < n; ++r) {
        double acc = w0[r] * u0 + w1[r] * u1 + w2[r] * u2 + w3[r] * u3;
        const double* row = phi + r * n;
        for (int j = 0; j < n; ++j) acc += row[j] * xs[j];
        ns[r] = acc;
      }
    } else {
      const double u0 = u[static_cast<size_t>(k)];
      const double* w1 = w + n;  // node 0 of the centred stencil
      for (int r = 0; r < n; ++r) {
        double acc = w1[r] * u0;
        const double* row = phi + r * n;
        for (int j = 0; j < n; ++j) acc += row[j] * xs[j];
        ns[r] = acc;
      }
    }
    std::swap(xs, ns);
  }
}

}  // namespace

std::vector<double> HoldSimulator::run(const std::vector<double>& u) const {
  std::vector<double> y(u.size());
  if (u.empty()) return y;
  const bool cubic = hold_ == Hold::cubic;
  const double *phi = phi_.data(), *w = w_.data(), *c = c_.data();
  with_fixed_size<6>(
      n_, [&](auto n) { hold_loop<n.value>(n.value, cubic, period_, d_, phi, w, c, u, y); },
      [&] { hold_loop<0>(n_, cubic, period_, d_, phi, w, c, u, y); });
  return y;
}

std::vector<double> cubic_resample(const std::vector<double>& v, int factor, int period) {
  if (factor < 1) throw std::invalid_argument("cubic_resample: factor must be at least 1");
  if (factor == 1 || v.empty()) return v;
  const long count = static_cast<long>(v.size()), last = count - 1;
  // Lagrange basis values at t = j/factor of each stencil, once.
  std::vector<double> basis(static_cast<size_t>(3 * factor * 4));
  for (int st = 0; st < 3; ++st)
    for (int j = 0; j < factor; ++j) {
      const double t = static_cast<double>(j) / factor;
      const auto& nodes = kStencils[static_cast<size_t>(st)];
      for (int m = 0; m < 4; ++m) {
        double l = 1.0;
        for (int q = 0; q < 4; ++q)
          if (q != m) l *= (t - nodes[static_cast<size_t>(q)]) / (nodes[static_cast<size_t>(m)] - nodes[static_cast<size_t>(q)]);
        basis[static_cast<size_t>((st * factor + j) * 4 + m)] = l;
      }
    }
  std::vector<double> y(v.size() * static_cast<size_t>(factor));
  auto at = [&](long i) { return v[static_cast<size_t>(std::clamp<long>(i, 0, last))]; };
  for (long k = 0; k < count; ++k) {
    const int st = stencil_for(static_cast<size_t>(k), period);
    const auto& offsets = kStencils[static_cast<size_t>(st)];
    const double u0 = at(k + offsets[0]), u1 = at(k + offsets[1]), u2 = at(k + offsets[2]), u3 = at(k + offsets[3]);
    for (int j = 0; j < factor; ++j) {
      const double* b = basis.data() + (st * factor + j) * 4;
      y[static_cast<size_t>(k * factor + j)] = b[0] * u0 + b[1] * u1 + b[2] * u2 + b[3] * u3;
    }
  }
  return y;
}

TimeAxis choose_time_axis(const Cascade& cascade, double bandwidth_hz) {
  double slowest = std::numeric_limits<double>::infinity();
  double fastest = 0.0;
  for (const auto& p : cascade.poles()) {
    const double sigma = -p.real();
    if (sigma > 0.0) slowest = std::min(slowest, sigma);
    fastest = std::max(fastest, std::abs(p));
  }
  const double delay = std::max(0.0, -cascade.log_derivative({0.0, 0.0}).real());
  if (!std::isfinite(slowest)) return {1e-12, 2};  // a pure gain
  const double duration = 2.0 * delay + 12.0 / slowest;
  // The rise needs hundreds of samples; bandwidth sets it, the fastest pole bounds it.
  double dt = duration / 4000.0;
  if (std::isfinite(bandwidth_hz) && bandwidth_hz > 0.0) dt = std::min(dt, 1.0 / (bandwidth_hz * 1000.0));
  dt = std::max(dt, duration / 200000.0);
  (void)fastest;
  return {dt, static_cast<int>(std::ceil(duration / dt)) + 1};
}

StepResponse step_response(const Cascade& cascade, const TimeAxis& axis) {
  const SteppedSimulator sim(realise(cascade), axis.dt);
  StepResponse r;
  r.dt = axis.dt;
  r.y = sim.step(axis.points);
  const double dc = cascade.dc_value();
  for (auto& v : r.y) v /= dc;
  return r;
}

StepMetrics step_metrics(const StepResponse& step) {
  StepMetrics m;
  const auto& y = step.y;
  if (y.size() < 3) return m;
  const auto peak = std::max_element(y.begin(), y.end());
  double peak_value = *peak;
  const auto i = static_cast<size_t>(peak - y.begin());
  if (i > 0 && i + 1 < y.size()) {
    // The vertex of the parabola through the three samples around the largest one.
    const double a = y[i - 1], b = y[i], c = y[i + 1];
    const double denom = a - 2.0 * b + c;
    if (denom < 0.0) peak_value = b - 0.125 * (c - a) * (c - a) / denom;
  }
  m.overshoot_pct = std::max(0.0, 100.0 * (peak_value - 1.0));

  auto first_crossing = [&](double level) {
    for (size_t k = 1; k < y.size(); ++k)
      if (y[k - 1] < level && y[k] >= level)
        return step.time(k - 1) + step.dt * (level - y[k - 1]) / (y[k] - y[k - 1]);
    return not_found;
  };
  m.rise_time_s = first_crossing(0.9) - first_crossing(0.1);

  m.settling_time_s = 0.0;
  for (size_t k = y.size(); k-- > 0;) {
    if (std::fabs(y[k] - 1.0) <= 0.01) continue;
    if (k + 1 >= y.size()) {
      m.settling_time_s = not_found;  // never settled within the simulated span
      break;
    }
    // Interpolate where |y - 1| returns to the 1 % band between samples k and k + 1.
    const double band = y[k] > 1.0 ? 1.01 : 0.99;
    m.settling_time_s = step.time(k) + step.dt * (band - y[k]) / (y[k + 1] - y[k]);
    break;
  }
  return m;
}

TimeAxis short_time_axis(const Cascade& cascade, double bandwidth_hz) {
  auto axis = choose_time_axis(cascade, bandwidth_hz);
  constexpr int kMaxPoints = 500;
  if (std::isfinite(bandwidth_hz) && bandwidth_hz > 0.0) {
    const double dt = std::max(axis.dt, 1.0 / (50.0 * bandwidth_hz));
    const double duration = axis.dt * (axis.points - 1);
    axis.points = std::min(kMaxPoints, static_cast<int>(std::ceil(duration / dt)) + 1);
    axis.dt = dt;
  } else if (axis.points > kMaxPoints) {
    axis.dt *= static_cast<double>(axis.points) / kMaxPoints;
    axis.points = kMaxPoints;
  }
  return axis;
}

}  // namespace peakplan
