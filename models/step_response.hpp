// Time responses by exact discretisation of a state-space realisation.
//
// Each block of a cascade is realised in controllable canonical form (time in picoseconds) and
// the blocks are connected in series. For an input that is constant over each time step, the
// matrix exponential of [[A, B], [0, 0]]*dt gives x[k+1] = Phi x[k] + Gamma u[k] with no
// integration error. Poles and residues are avoided on purpose: an ideal T-coil's double pole
// makes its eigenvector matrix nearly singular.
#pragma once

#include <Eigen/Dense>
#include <utility>
#include <vector>

#include "models/rational.hpp"

namespace peakplan {

struct StateSpace {
  Eigen::MatrixXd a;
  Eigen::VectorXd b;
  Eigen::RowVectorXd c;
  double d = 0.0;
  double time_scale = 1e-12;  // seconds per unit of the model's time
  int order() const { return static_cast<int>(a.rows()); }
};

// Throws std::logic_error for an improper block (more zeros than poles).
StateSpace realise(const Cascade& cascade);

// Exact response to inputs held constant over steps of dt seconds.
class SteppedSimulator {
 public:
  SteppedSimulator(StateSpace model, double dt);
  double dt() const { return dt_; }
  // y[k] = output at t = k*dt for input u[k] held over [k*dt, (k+1)*dt); starts at rest.
  std::vector<double> run(const std::vector<double>& u) const;
  // The response to a unit step at t = 0, for `points` samples.
  std::vector<double> step(int points) const;

 private:
  StateSpace model_;
  double dt_;
  Eigen::MatrixXd phi_;
  Eigen::VectorXd gamma_;
  std::vector<std::pair<int, int>> rows_;  // per column of phi: its nonzero rows [first, end)
};

// Exact responses to sampled inputs u[k] (at t = k*dt) under two holds:
//   held   u[k] held over [k*dt, (k+1)*dt): the discretisation of SteppedSimulator;
//   cubic  between samples k and k+1 the cubic through the samples k-1, k, k+1, k+2, for a
//          smooth waveform known only at the samples (a pair's output current computed from
//          the previous stage's sampled output; models/large_signal.hpp).
// The matrix exponential of the augmented matrix [[A h, B h, 0, 0, 0], [0, 0, 1, 0, 0],
// [0, 0, 0, 1, 0], [0, 0, 0, 0, 1], [0, 0, 0, 0, 0]] (h = dt in model time) gives the exact
// responses G_j over one step to the inputs tau^j/j!, tau in [0, 1]; the held input uses G_0,
// the cubic weights G_0..G_3 by the four-point Lagrange cubic's derivatives at tau = 0. The
// cubic hold reproduces every polynomial input of degree <= 3 exactly, so its error for a
// smooth input is O(dt^4). With breaks every `period` samples (the symbol boundaries of a
// waveform driven by held symbols, where its derivatives jump), the intervals that start or end
// at a break use the one-sided cubics through k..k+3 and k-2..k+1, so no cubic straddles a
// break. Ends: the first and last samples are repeated outward. The loop is
// written out for the small orders of a stage (a few states), where it is several times faster
// than general matrix-vector products.
class HoldSimulator {
 public:
  enum class Hold { held, cubic };
  HoldSimulator(const StateSpace& model, double dt, Hold hold, int period = 0);
  double dt() const { return dt_; }
  int order() const { return n_; }
  // y[k] = output at t = k*dt; starts at rest.
  std::vector<double> run(const std::vector<double>& u) const;

 private:
  int n_ = 0;
  Hold hold_ = Hold::cubic;
  int period_ = 0;
  double dt_ = 0.0, d_ = 0.0;
  std::vector<double> phi_;  // n x n, row major
  std::vector<double> w_;    // 3 stencils x 4 nodes x n
  std::vector<double> c_;
};

// A smooth sampled waveform at `factor` times the rate: the four-point Lagrange cubic between
// samples, one-sided at breaks every `period` samples as in HoldSimulator (0: no breaks).
std::vector<double> cubic_resample(const std::vector<double>& v, int factor, int period = 0);

struct StepResponse {
  double dt = 0.0;
  std::vector<double> y;  // divided by the DC gain: settles at 1
  double time(size_t k) const { return dt * static_cast<double>(k); }
};

struct StepMetrics {
  double overshoot_pct = 0.0;
  double rise_time_s = 0.0;      // first 10 % to first 90 % crossing
  double settling_time_s = 0.0;  // last time outside 1 +/- 1 %
};

// A duration that covers the slowest pole's decay and the delay, and a step fine enough
// for the rise: chosen from the cascade's poles and its bandwidth.
struct TimeAxis {
  double dt;
  int points;
};
TimeAxis choose_time_axis(const Cascade& cascade, double bandwidth_hz);
// A short record for measuring overshoot many times (a planner's search, Monte Carlo samples):
// choose_time_axis's span at about 50 samples per 1/bandwidth (a rise time spans about 17), at
// most 500 of them. Overshoot peaks within a few rise times of the delay, so the short record
// finds it; settling times need the full record.
TimeAxis short_time_axis(const Cascade& cascade, double bandwidth_hz);

StepResponse step_response(const Cascade& cascade, const TimeAxis& axis);
StepMetrics step_metrics(const StepResponse& step);

}  // namespace peakplan
