// Rational transfer functions H(s) = N(s)/D(s) and cascades of them.
//
// Coefficients are stored in ascending powers of the scaled variable s_hat = s * time_scale
// (time_scale = 1 ps), which keeps them well conditioned for circuits with picosecond time
// constants. All public functions take and return SI values (s in rad/s, poles in rad/s).
#pragma once

#include <complex>
#include <optional>
#include <vector>

namespace peakplan {

class Rational {
 public:
  Rational() = default;  // H = 1
  Rational(std::vector<double> num, std::vector<double> den, double time_scale);
  // The same with the roots of num and den (of the scaled s, as polynomial_roots gives them)
  // already known to the caller: poles() and zeros() return them instead of solving again (a
  // planner asks a stage's roots several times per candidate).
  Rational(std::vector<double> num, std::vector<double> den, double time_scale,
           std::vector<std::complex<double>> num_roots, std::vector<std::complex<double>> den_roots);

  std::complex<double> evaluate(std::complex<double> s) const;
  // d ln H / ds = N'/N - D'/D, per rad/s. Group delay is -Re of this at s = j*omega.
  std::complex<double> log_derivative(std::complex<double> s) const;
  double dc_value() const;
  // H(j omega) and the group delay -d(arg H)/d(omega) there, in one pass of real arithmetic
  // (the fast path: a planner evaluates this hundreds of thousands of times).
  struct FrequencyPoint {
    std::complex<double> h;
    double group_delay;
  };
  FrequencyPoint at_frequency(double omega) const;
  // |H(j omega)|^2, real arithmetic only (what magnitude scans need).
  double gain_squared_at(double omega) const;

  std::vector<std::complex<double>> poles() const;
  std::vector<std::complex<double>> zeros() const;
  int order() const { return static_cast<int>(den_.size()) - 1; }
  int numerator_degree() const { return static_cast<int>(num_.size()) - 1; }

  const std::vector<double>& numerator() const { return num_; }
  const std::vector<double>& denominator() const { return den_; }
  double time_scale() const { return time_scale_; }

 private:
  std::vector<double> num_{1.0};
  std::vector<double> den_{1.0};
  std::vector<double> num_derivative_{0.0};
  std::vector<double> den_derivative_{0.0};
  double time_scale_ = 1e-12;
  bool has_roots_ = false;
  std::vector<std::complex<double>> num_roots_, den_roots_;  // scaled s, when has_roots_
};

// Roots of a real polynomial in ascending coefficients (companion-matrix eigenvalues).
std::vector<std::complex<double>> polynomial_roots(const std::vector<double>& ascending);
// The real polynomial with the given roots (conjugates paired) and leading coefficient 1.
std::vector<double> polynomial_from_roots(const std::vector<std::complex<double>>& roots);

// Blocks in series. Each gm stage isolates its input from its output (a unilateral,
// buffered cascade), so the chain's transfer function is the product of its blocks'.
class Cascade {
 public:
  Cascade() = default;
  explicit Cascade(std::vector<Rational> blocks) : blocks_(std::move(blocks)) {}
  void append(Rational block) { blocks_.push_back(std::move(block)); }

  std::complex<double> evaluate(std::complex<double> s) const;
  std::complex<double> log_derivative(std::complex<double> s) const;
  double dc_value() const;
  Rational::FrequencyPoint at_frequency(double omega) const;
  double gain_at(double omega) const;  // |H(j omega)|
  std::vector<std::complex<double>> poles() const;
  std::vector<std::complex<double>> zeros() const;
  const std::vector<Rational>& blocks() const { return blocks_; }

 private:
  std::vector<Rational> blocks_;
};

}  // namespace peakplan

namespace peakplan {
// A pole on or right of the imaginary axis (rad/s): the block is unstable and has no step or
// pulse response to measure. None for a stable block.
std::optional<std::complex<double>> first_unstable_pole(const std::vector<std::complex<double>>& poles);
}  // namespace peakplan

namespace peakplan {
// The quotient of p / f (ascending coefficients), the remainder discarded.
std::vector<double> polynomial_quotient(const std::vector<double>& p, const std::vector<double>& f);
}  // namespace peakplan
