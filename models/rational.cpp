#include "models/rational.hpp"

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <unsupported/Eigen/Polynomials>

namespace peakplan {
namespace {

std::complex<double> horner(const std::vector<double>& p, std::complex<double> x) {
  std::complex<double> acc = 0.0;
  for (auto it = p.rbegin(); it != p.rend(); ++it) acc = acc * x + *it;
  return acc;
}

std::complex<double> horner_derivative(const std::vector<double>& p, std::complex<double> x) {
  std::complex<double> acc = 0.0;
  for (size_t k = p.size(); k-- > 1;) acc = acc * x + static_cast<double>(k) * p[k];
  return acc;
}

// p(j y) for real y, splitting p into even and odd parts so that only real products remain.
std::complex<double> at_imaginary(const std::vector<double>& p, double y) {
  const double y2 = y * y;
  double even = 0.0, odd = 0.0;
  const size_t n = p.size();
  // even: a0 - a2 y^2 + a4 y^4 ...; odd: a1 - a3 y^2 + ... (times y afterwards)
  for (size_t k = (n - 1) & ~size_t{1};; k -= 2) {
    even = even * -y2 + p[k];
    if (k < 2) break;
  }
  if (n >= 2) {
    for (size_t k = ((n - 2) & ~size_t{1}) + 1;; k -= 2) {
      odd = odd * -y2 + p[k];
      if (k < 2) break;
    }
  }
  return {even, odd * y};
}

std::vector<double> derivative(const std::vector<double>& p) {
  if (p.size() < 2) return {0.0};
  std::vector<double> d(p.size() - 1);
  for (size_t k = 1; k < p.size(); ++k) d[k - 1] = static_cast<double>(k) * p[k];
  return d;
}

}  // namespace

Rational::FrequencyPoint Rational::at_frequency(double omega) const {
  const double y = omega * time_scale_;
  const auto n = at_imaginary(num_, y), d = at_imaginary(den_, y);
  const auto dn = at_imaginary(num_derivative_, y), dd = at_imaginary(den_derivative_, y);
  return {n / d, -(dn / n - dd / d).real() * time_scale_};
}

double Rational::gain_squared_at(double omega) const {
  const double y = omega * time_scale_;
  return std::norm(at_imaginary(num_, y)) / std::norm(at_imaginary(den_, y));
}

Rational::Rational(std::vector<double> num, std::vector<double> den, double time_scale)
    : num_(std::move(num)), den_(std::move(den)), time_scale_(time_scale) {
  while (num_.size() > 1 && num_.back() == 0.0) num_.pop_back();
  while (den_.size() > 1 && den_.back() == 0.0) den_.pop_back();
  if (num_.empty() || den_.empty()) throw std::logic_error("Rational: empty polynomial");
  if (den_.size() == 1 && den_[0] == 0.0) throw std::logic_error("Rational: zero denominator");
  num_derivative_ = derivative(num_);
  den_derivative_ = derivative(den_);
}

Rational::Rational(std::vector<double> num, std::vector<double> den, double time_scale,
                   std::vector<std::complex<double>> num_roots, std::vector<std::complex<double>> den_roots)
    : Rational(std::move(num), std::move(den), time_scale) {
  has_roots_ = true;
  num_roots_ = std::move(num_roots);
  den_roots_ = std::move(den_roots);
}

std::complex<double> Rational::evaluate(std::complex<double> s) const {
  const auto x = s * time_scale_;
  return horner(num_, x) / horner(den_, x);
}

std::complex<double> Rational::log_derivative(std::complex<double> s) const {
  const auto x = s * time_scale_;
  return (horner_derivative(num_, x) / horner(num_, x) -
          horner_derivative(den_, x) / horner(den_, x)) *
         time_scale_;
}

double Rational::dc_value() const {
  if (den_[0] == 0.0) return std::numeric_limits<double>::infinity();
  return num_[0] / den_[0];
}

std::vector<std::complex<double>> Rational::poles() const {
  auto r = has_roots_ ? den_roots_ : polynomial_roots(den_);
  for (auto& p : r) p /= time_scale_;
  return r;
}

std::vector<std::complex<double>> Rational::zeros() const {
  auto r = has_roots_ ? num_roots_ : polynomial_roots(num_);
  for (auto& z : r) z /= time_scale_;
  return r;
}

std::vector<std::complex<double>> polynomial_roots(const std::vector<double>& ascending) {
  std::vector<double> p = ascending;
  while (p.size() > 1 && p.back() == 0.0) p.pop_back();
  std::vector<std::complex<double>> roots;
  size_t low = 0;
  while (low + 1 < p.size() && p[low] == 0.0) {
    roots.emplace_back(0.0, 0.0);
    ++low;
  }
  const size_t degree = p.size() - 1 - low;
  if (degree == 0) return roots;
  if (degree == 1) {
    roots.emplace_back(-p[low] / p[low + 1], 0.0);
    return roots;
  }
  Eigen::VectorXd coefficients(degree + 1);
  for (size_t k = 0; k <= degree; ++k) coefficients(k) = p[low + k];
  Eigen::PolynomialSolver<double, Eigen::Dynamic> solver;
  solver.compute(coefficients);
  for (Eigen::Index k = 0; k < solver.roots().size(); ++k) roots.push_back(solver.roots()(k));
  // Conjugate pairs come out with slightly unequal parts; make real roots exactly real.
  for (auto& r : roots)
    if (std::fabs(r.imag()) < 1e-12 * std::abs(r)) r = {r.real(), 0.0};
  std::sort(roots.begin(), roots.end(), [](auto a, auto b) {
    return a.real() != b.real() ? a.real() > b.real() : a.imag() > b.imag();
  });
  return roots;
}

std::vector<double> polynomial_from_roots(const std::vector<std::complex<double>>& roots) {
  std::vector<std::complex<double>> p{1.0};
  for (const auto& r : roots) {
    std::vector<std::complex<double>> next(p.size() + 1, 0.0);
    for (size_t k = 0; k < p.size(); ++k) {
      next[k + 1] += p[k];
      next[k] -= r * p[k];
    }
    p = std::move(next);
  }
  std::vector<double> real(p.size());
  for (size_t k = 0; k < p.size(); ++k) real[k] = p[k].real();
  return real;
}

std::complex<double> Cascade::evaluate(std::complex<double> s) const {
  std::complex<double> h = 1.0;
  for (const auto& b : blocks_) h *= b.evaluate(s);
  return h;
}

std::complex<double> Cascade::log_derivative(std::complex<double> s) const {
  std::complex<double> d = 0.0;
  for (const auto& b : blocks_) d += b.log_derivative(s);
  return d;
}

Rational::FrequencyPoint Cascade::at_frequency(double omega) const {
  Rational::FrequencyPoint total{1.0, 0.0};
  for (const auto& b : blocks_) {
    const auto p = b.at_frequency(omega);
    total.h *= p.h;
    total.group_delay += p.group_delay;
  }
  return total;
}

double Cascade::gain_at(double omega) const {
  double g2 = 1.0;
  for (const auto& b : blocks_) g2 *= b.gain_squared_at(omega);
  return std::sqrt(g2);
}

double Cascade::dc_value() const {
  double h = 1.0;
  for (const auto& b : blocks_) h *= b.dc_value();
  return h;
}

std::vector<std::complex<double>> Cascade::poles() const {
  std::vector<std::complex<double>> all;
  for (const auto& b : blocks_) {
    const auto p = b.poles();
    all.insert(all.end(), p.begin(), p.end());
  }
  return all;
}

std::optional<std::complex<double>> first_unstable_pole(const std::vector<std::complex<double>>& poles) {
  for (const auto& p : poles)
    if (!(p.real() < 0.0)) return p;
  return std::nullopt;
}

std::vector<std::complex<double>> Cascade::zeros() const {
  std::vector<std::complex<double>> all;
  for (const auto& b : blocks_) {
    const auto z = b.zeros();
    all.insert(all.end(), z.begin(), z.end());
  }
  return all;
}

}  // namespace peakplan

namespace peakplan {

std::vector<double> polynomial_quotient(const std::vector<double>& p, const std::vector<double>& f) {
  if (f.empty() || f.back() == 0.0) throw std::logic_error("polynomial_quotient: bad divisor");
  if (p.size() < f.size()) return {0.0};
  std::vector<double> rem = p;
  std::vector<double> q(p.size() - f.size() + 1, 0.0);
  for (size_t k = q.size(); k-- > 0;) {
    q[k] = rem[k + f.size() - 1] / f.back();
    for (size_t j = 0; j < f.size(); ++j) rem[k + j] -= q[k] * f[j];
  }
  return q;
}

}  // namespace peakplan
