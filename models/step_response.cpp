#include "models/step_response.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <unsupported/Eigen/MatrixFunctions>

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
}

std::vector<double> SteppedSimulator::run(const std::vector<double>& u) const {
  std::vector<double> y(u.size());
  Eigen::VectorXd x = Eigen::VectorXd::Zero(model_.order());
  Eigen::VectorXd next(model_.order());
  for (size_t k = 0; k < u.size(); ++k) {
    y[k] = model_.c.dot(x) + model_.d * u[k];
    next.noalias() = phi_ * x + gamma_ * u[k];
    x.swap(next);
  }
  return y;
}

std::vector<double> SteppedSimulator::step(int points) const {
  // y[0] is the value just after the step (the direct term), as for any held input.
  return run(std::vector<double>(static_cast<size_t>(points), 1.0));
}

CubicHoldSimulator::CubicHoldSimulator(const StateSpace& model, double dt) : n_(model.order()), dt_(dt), d_(model.d) {
  const int n = n_;
  const double h = dt / model.time_scale;
  Eigen::MatrixXd augmented = Eigen::MatrixXd::Zero(n + 4, n + 4);
  augmented.topLeftCorner(n, n) = model.a * h;
  augmented.block(0, n, n, 1) = model.b * h;
  for (int j = 0; j < 3; ++j) augmented(n + j, n + j + 1) = 1.0;
  const Eigen::MatrixXd e = augmented.exp();
  // G_j: the state after one step from rest for the input tau^j/j!, tau in [0, 1].
  const Eigen::MatrixXd g = e.topRightCorner(n, 4);
  // The Lagrange cubic through tau = -1, 0, 1, 2 (values u_1, u0, u1, u2) has at tau = 0
  //   u = u0,  du = -u_1/3 - u0/2 + u1 - u2/6,  d2u = u_1 - 2 u0 + u1,  d3u = -u_1 + 3 u0 - 3 u1 + u2;
  // lagrange[m][j] is the weight of sample m (u_1, u0, u1, u2) in derivative j.
  const double lagrange[4][4] = {{0.0, -1.0 / 3.0, 1.0, -1.0},
                                 {1.0, -0.5, -2.0, 3.0},
                                 {0.0, 1.0, 1.0, -3.0},
                                 {0.0, -1.0 / 6.0, 0.0, 1.0}};
  phi_.resize(static_cast<size_t>(n * n));
  for (int r = 0; r < n; ++r)
    for (int c = 0; c < n; ++c) phi_[static_cast<size_t>(r * n + c)] = e(r, c);
  w_.assign(static_cast<size_t>(4 * n), 0.0);
  for (int m = 0; m < 4; ++m)
    for (int j = 0; j < 4; ++j)
      for (int r = 0; r < n; ++r) w_[static_cast<size_t>(m * n + r)] += lagrange[m][j] * g(r, j);
  c_.assign(model.c.data(), model.c.data() + n);
}

std::vector<double> CubicHoldSimulator::run(const std::vector<double>& u) const {
  const size_t count = u.size();
  std::vector<double> y(count);
  if (count == 0) return y;
  const int n = n_;
  std::vector<double> x(static_cast<size_t>(n), 0.0), next(static_cast<size_t>(n));
  const double* phi = phi_.data();
  const double* w0 = w_.data();
  const double* w1 = w0 + n;
  const double* w2 = w1 + n;
  const double* w3 = w2 + n;
  const size_t last = count - 1;
  for (size_t k = 0; k < count; ++k) {
    double out = d_ * u[k];
    for (int r = 0; r < n; ++r) out += c_[static_cast<size_t>(r)] * x[static_cast<size_t>(r)];
    y[k] = out;
    const double um = u[k > 0 ? k - 1 : 0], u0 = u[k], u1 = u[std::min(k + 1, last)], u2 = u[std::min(k + 2, last)];
    for (int r = 0; r < n; ++r) {
      double acc = w0[r] * um + w1[r] * u0 + w2[r] * u1 + w3[r] * u2;
      const double* row = phi + r * n;
      for (int c = 0; c < n; ++c) acc += row[c] * x[static_cast<size_t>(c)];
      next[static_cast<size_t>(r)] = acc;
    }
    x.swap(next);
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
