#include "models/nodal_system.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

#include "models/fixed_size.hpp"
#include "models/small_lu.hpp"

namespace peakplan {
namespace {

constexpr double kScale = 1.0 / NodalSystem::time_scale;  // F -> pF, H -> pH

bool absent_resistor(double ohms) { return !std::isfinite(ohms) || ohms <= 0.0; }

}  // namespace

int NodalSystem::add_node(std::string name) {
  assembled_.reset();
  node_names_.push_back(std::move(name));
  return node_count() - 1;
}

void NodalSystem::stamp(std::vector<Entry>& into, int a, int b, double value) {
  if (a != ground) into.push_back({a, a, value});
  if (b != ground) into.push_back({b, b, value});
  if (a != ground && b != ground) {
    into.push_back({a, b, -value});
    into.push_back({b, a, -value});
  }
}

void NodalSystem::add_resistor(int a, int b, double ohms) {
  if (absent_resistor(ohms)) return;
  add_conductance(a, b, 1.0 / ohms);
}

void NodalSystem::add_conductance(int a, int b, double siemens) {
  assembled_.reset();
  if (siemens == 0.0) return;
  stamp(g_entries_, a, b, siemens);
  conductances_.emplace_back(a, b, siemens);
}

void NodalSystem::add_capacitor(int a, int b, double farads) {
  assembled_.reset();
  if (farads != 0.0) stamp(c_entries_, a, b, farads * kScale);
}

int NodalSystem::add_inductor(int a, int b, double henries, double series_ohms) {
  assembled_.reset();
  inductors_.push_back({a, b, branches_, henries * kScale, series_ohms});
  return branches_++;
}

void NodalSystem::add_mutual(int branch1, int branch2, double henries) {
  assembled_.reset();
  if (henries != 0.0) mutuals_.emplace_back(branch1, branch2, henries * kScale);
}

void NodalSystem::add_gm_drive(int node, double siemens) { assembled_.reset();
  drive_.emplace_back(node, -siemens);
  gm_cells_.emplace_back(node, siemens);
}

void NodalSystem::add_transconductance(int control, int node, double siemens) {
  assembled_.reset();
  if (siemens == 0.0) return;
  // KCL at `node`: the current drawn out, gm v(control), moves to the left-hand side.
  g_entries_.push_back({node, control, siemens});
  gm_cells_.emplace_back(node, std::fabs(siemens));
}

void NodalSystem::add_current_drive(int node) {
  assembled_.reset();
  drive_.emplace_back(node, 1.0);
}

void NodalSystem::add_shot_noise(int node, double amperes) {
  if (amperes > 0.0) shot_currents_.emplace_back(node, amperes);
}

void NodalSystem::add_source(int node, double ohms) {
  assembled_.reset();
  if (absent_resistor(ohms))
    throw std::logic_error("add_source needs a finite positive source resistance");
  add_resistor(node, ground, ohms);
  drive_.emplace_back(node, 1.0 / ohms);
}

void NodalSystem::set_output(int node) { output_ = node; }

int NodalSystem::size() const { return node_count() + branches_; }

Eigen::MatrixXd NodalSystem::G() const {
  const int n = node_count();
  Eigen::MatrixXd g = Eigen::MatrixXd::Zero(size(), size());
  for (const auto& e : g_entries_) g(e.row, e.col) += e.value;
  // Branch rows: -(v_a - v_b) + r*i = -s*L*i - s*M*i_other, i.e. the coil's own terms go in C.
  for (const auto& l : inductors_) {
    const int k = n + l.branch;
    if (l.a != ground) {
      g(l.a, k) += 1.0;
      g(k, l.a) -= 1.0;
    }
    if (l.b != ground) {
      g(l.b, k) -= 1.0;
      g(k, l.b) += 1.0;
    }
    g(k, k) += l.r;
  }
  return g;
}

Eigen::MatrixXd NodalSystem::C() const {
  const int n = node_count();
  Eigen::MatrixXd c = Eigen::MatrixXd::Zero(size(), size());
  for (const auto& e : c_entries_) c(e.row, e.col) += e.value;
  for (const auto& l : inductors_) c(n + l.branch, n + l.branch) += l.l_scaled;
  for (const auto& [b1, b2, m] : mutuals_) {
    c(n + b1, n + b2) += m;
    c(n + b2, n + b1) += m;
  }
  return c;
}

Eigen::VectorXd NodalSystem::b() const {
  Eigen::VectorXd rhs = Eigen::VectorXd::Zero(size());
  for (const auto& [node, value] : drive_) rhs(node) += value;
  return rhs;
}

std::vector<NodalSystem::NoiseGenerator> NodalSystem::noise_generators() const {
  std::vector<NoiseGenerator> out;
  for (const auto& [a, b, g] : conductances_) out.push_back({NoiseGenerator::Kind::resistor, a, b, g});
  for (const auto& l : inductors_)
    if (l.r > 0.0)
      out.push_back({NoiseGenerator::Kind::coil_loss, node_count() + l.branch, ground, l.r});
  for (const auto& [node, gm] : gm_cells_)
    if (gm != 0.0) out.push_back({NoiseGenerator::Kind::gm_cell, node, ground, gm});
  for (const auto& [node, amperes] : shot_currents_) out.push_back({NoiseGenerator::Kind::shot, node, ground, amperes});
  return out;
}

const NodalSystem::Assembled& NodalSystem::assembled() const {
  if (!assembled_)
    assembled_ = Assembled{G().cast<std::complex<double>>(), C().cast<std::complex<double>>(),
                           b().cast<std::complex<double>>(), G(), C(), b()};
  return *assembled_;
}

Eigen::MatrixXcd NodalSystem::matrix_at(std::complex<double> s_scaled) const {
  return assembled().g + s_scaled * assembled().c;
}

std::complex<double> NodalSystem::transfer(std::complex<double> s) const {
  return transfer_and_derivative(s).first;
}

namespace {

// H and dH/ds (per scaled s) of an N-unknown system: (G + sC) x = b, (G + sC) dx = -C x, the
// derivative from the same factorisation. G, C and b are real: only s makes the system complex.
template <int N, class Assembled>
std::pair<std::complex<double>, std::complex<double>> solve_fixed(const Assembled& a, std::complex<double> s_scaled,
                                                                  int output, double time_scale) {
  const double* g = a.g_real.data();  // column-major N x N
  const double* c = a.c_real.data();
  const SmallLU<N> lu([&](int r, int col) {
    const double cv = c[col * N + r];
    return std::complex<double>(g[col * N + r] + s_scaled.real() * cv, s_scaled.imag() * cv);
  });
  typename SmallLU<N>::Vector x, dx;
  for (int r = 0; r < N; ++r) x[r] = a.b_real(r);
  lu.solve(x);
  for (int r = 0; r < N; ++r) {
    std::complex<double> cx = 0.0;
    for (int col = 0; col < N; ++col) cx += c[col * N + r] * x[col];
    dx[r] = -cx;
  }
  lu.solve(dx);
  return {x[output], dx[output] * time_scale};
}

}  // namespace

std::pair<std::complex<double>, std::complex<double>> NodalSystem::transfer_and_derivative(
    std::complex<double> s) const {
  if (output_ == ground) throw std::logic_error("NodalSystem: no output node set");
  const auto& a = assembled();
  // The sizes stages have: fixed-size matrices, unrolled.
  return with_fixed_size<8>(
      size(), [&](auto n) { return solve_fixed<n.value>(a, s * time_scale, output_, time_scale); },
      [&]() -> std::pair<std::complex<double>, std::complex<double>> {
        const Eigen::PartialPivLU<Eigen::MatrixXcd> lu(a.g + (s * time_scale) * a.c);
        const Eigen::VectorXcd x = lu.solve(a.b);
        const Eigen::VectorXcd dx = -lu.solve(a.c * x);  // per scaled s
        return {x(output_), dx(output_) * time_scale};
      });
}

std::complex<double> NodalSystem::impedance(int node, std::complex<double> s) const {
  Eigen::VectorXcd rhs = Eigen::VectorXcd::Zero(size());
  rhs(node) = 1.0;
  const Eigen::PartialPivLU<Eigen::MatrixXcd> lu(matrix_at(s * time_scale));
  return lu.solve(rhs)(node);
}

double NodalSystem::characteristic_rate() const { return 0.1; }

namespace {

// The N-point DFT weights w[m] = exp(-2 pi i m / N); their conjugates are the sample points on
// the unit circle.
std::vector<std::complex<double>> unit_roots(int samples) {
  std::vector<std::complex<double>> w(static_cast<size_t>(samples));
  for (int m = 0; m < samples; ++m) w[static_cast<size_t>(m)] = std::polar(1.0, -2.0 * std::numbers::pi * m / samples);
  return w;
}

// det(G + sC) and the output of (G + sC) x = rhs at the scaled s: fixed-size LU for the sizes
// stages have (models/small_lu.hpp; measured, a plan of the free T-coil spends 12 % less time
// than with Eigen's dynamic-size LU), Eigen's beyond.
template <int N>
std::pair<std::complex<double>, std::complex<double>> determinant_and_output_fixed(
    const Eigen::MatrixXcd& g, const Eigen::MatrixXcd& c, const Eigen::VectorXcd& rhs, int output,
    std::complex<double> s) {
  const SmallLU<N> lu([&](int r, int col) { return g(r, col) + s * c(r, col); });
  typename SmallLU<N>::Vector x;
  for (int r = 0; r < N; ++r) x[r] = rhs(r);
  lu.solve(x);
  return {lu.determinant(), x[output]};
}

std::pair<std::complex<double>, std::complex<double>> determinant_and_output(
    const Eigen::MatrixXcd& g, const Eigen::MatrixXcd& c, const Eigen::VectorXcd& rhs, int output,
    std::complex<double> s) {
  return with_fixed_size<8>(
      static_cast<int>(g.rows()),
      [&](auto n) { return determinant_and_output_fixed<n.value>(g, c, rhs, output, s); },
      [&]() -> std::pair<std::complex<double>, std::complex<double>> {
        const Eigen::PartialPivLU<Eigen::MatrixXcd> lu(g + s * c);
        return {lu.determinant(), lu.solve(rhs)(output)};
      });
}

// The polynomials det(G + sC) (den) and det(G + sC) * v_out(s) (num) of the scaled s, as
// coefficients of powers of (rho z): interpolated from their values at s = rho z on the unit
// circle, z the conjugates of the weights w.
void interpolate_on_circle(const Eigen::MatrixXcd& g, const Eigen::MatrixXcd& c, const Eigen::VectorXcd& rhs,
                           int output, const std::vector<std::complex<double>>& w, double rho,
                           std::vector<double>& num, std::vector<double>& den) {
  const int samples = static_cast<int>(w.size());
  std::vector<std::complex<double>> d_samples(samples), n_samples(samples);
  for (int j = 0; j < samples; ++j) {
    const auto [det, v] = determinant_and_output(g, c, rhs, output, rho * std::conj(w[static_cast<size_t>(j)]));
    d_samples[j] = det;
    n_samples[j] = det * v;
  }
  num.assign(samples, 0.0);
  den.assign(samples, 0.0);
  for (int k = 0; k < samples; ++k) {
    std::complex<double> dn = 0, nn = 0;
    for (int j = 0; j < samples; ++j) {
      const auto& wk = w[static_cast<size_t>((j * k) % samples)];
      dn += d_samples[j] * wk;
      nn += n_samples[j] * wk;
    }
    den[k] = dn.real() / samples;
    num[k] = nn.real() / samples;
  }
}

double largest_coefficient(const std::vector<double>& p) {
  double biggest = 0.0;
  for (double a : p) biggest = std::max(biggest, std::fabs(a));
  return biggest;
}

// Zeroes coefficients below `floor` and drops the vanished leading ones.
void trim(std::vector<double>& p, double floor) {
  for (auto& a : p)
    if (std::fabs(a) < floor) a = 0.0;
  while (p.size() > 1 && p.back() == 0.0) p.pop_back();
}

// Interpolates on circles until the radius sits within a factor 2 of the roots' geometric mean
// magnitude (at most three passes): a circle near the roots keeps every coefficient significant.
// Returns the radius used; num and den are the last pass's (den trimmed).
double interpolate_at_root_radius(const Eigen::MatrixXcd& g, const Eigen::MatrixXcd& c, const Eigen::VectorXcd& rhs,
                                  int output, const std::vector<std::complex<double>>& w, double rho,
                                  std::vector<double>& num, std::vector<double>& den) {
  for (int pass = 0; pass < 3; ++pass) {
    interpolate_on_circle(g, c, rhs, output, w, rho, num, den);
    const double biggest = largest_coefficient(den);
    if (biggest == 0.0) throw std::logic_error("NodalSystem: singular circuit");
    trim(den, 1e-10 * biggest);
    const int order = static_cast<int>(den.size()) - 1;
    if (order == 0 || den[0] == 0.0) break;
    const double mean_root = rho * std::pow(std::fabs(den[0] / den[order]), 1.0 / order);
    if (mean_root > rho / 2 && mean_root < rho * 2) break;
    rho = mean_root;
  }
  return rho;
}

// Scales both polynomials by den's largest coefficient (num trimmed against it) and undoes the
// radius: the coefficient of s_hat^k is that of (rho z)^k divided by rho^k.
void normalise_and_unscale(std::vector<double>& num, std::vector<double>& den, double rho) {
  const double biggest = largest_coefficient(den);
  trim(num, 1e-10 * biggest);
  for (auto& a : num) a /= biggest;
  for (auto& a : den) a /= biggest;
  for (size_t k = 0; k < den.size(); ++k) den[k] /= std::pow(rho, static_cast<double>(k));
  for (size_t k = 0; k < num.size(); ++k) num[k] /= std::pow(rho, static_cast<double>(k));
}

// Removes pole-zero pairs that cancel (the ideal T-coil's q(s) appears in both N and det Y; at
// critical damping det Y has a fourfold root, which no root finder resolves better than about
// 1e-4). Candidates are matched loosely, divided out of both polynomials, and kept only if the
// reduced function reproduces the original at test points about the radius rho (scaled s).
// Returns the roots of num and den as they are afterwards.
std::pair<std::vector<std::complex<double>>, std::vector<std::complex<double>>> cancel_common_roots(
    std::vector<double>& num, std::vector<double>& den, double rho, double time_scale) {
  const Rational original(num, den, time_scale);
  auto reproduces = [&](const std::vector<double>& n2, const std::vector<double>& d2) {
    const Rational reduced(n2, d2, time_scale);
    for (double radius : {0.3, 1.0, 3.0})
      for (double angle : {0.0, 0.7, 1.4, 1.5707963, 2.2}) {
        const auto s = std::polar(radius * rho, angle) / time_scale;
        const auto h = original.evaluate(s);
        if (std::abs(reduced.evaluate(s) / h - 1.0) > 1e-7) return false;
      }
    return true;
  };
  auto zeros = polynomial_roots(num);
  auto poles = polynomial_roots(den);
  bool cancelled = false;
  for (const auto& z : zeros) {
    if (z.imag() < 0.0) continue;  // handled with its conjugate
    double nearest = std::numeric_limits<double>::infinity();
    for (const auto& p : poles) nearest = std::min(nearest, std::abs(p - z));
    if (nearest > 1e-2 * (std::abs(z) + rho)) continue;
    const std::vector<double> factor =
        z.imag() == 0.0 ? std::vector<double>{-z.real(), 1.0}
                        : std::vector<double>{std::norm(z), -2.0 * z.real(), 1.0};
    auto n2 = polynomial_quotient(num, factor);
    auto d2 = polynomial_quotient(den, factor);
    if (reproduces(n2, d2)) {
      num = std::move(n2);
      den = std::move(d2);
      cancelled = true;
    }
  }
  if (cancelled) return {polynomial_roots(num), polynomial_roots(den)};
  return {std::move(zeros), std::move(poles)};
}

}  // namespace

Rational NodalSystem::rational() const {
  if (output_ == ground) throw std::logic_error("NodalSystem: no output node set");
  int samples = 8;
  while (samples < size() + 2) samples *= 2;
  const auto& a = assembled();
  std::vector<double> num, den;
  const double rho = interpolate_at_root_radius(a.g, a.c, a.b, output_, unit_roots(samples), characteristic_rate(), num, den);
  normalise_and_unscale(num, den, rho);
  if (num.size() < 2 || den.size() < 2) return Rational(num, den, time_scale);  // no roots to cancel
  auto [zeros, poles] = cancel_common_roots(num, den, rho, time_scale);
  return Rational(std::move(num), std::move(den), time_scale, std::move(zeros), std::move(poles));
}

}  // namespace peakplan
