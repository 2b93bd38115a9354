// The nodal engine on circuits small enough to solve by hand.
#include <doctest/doctest.h>

#include <random>

#include "models/nodal_system.hpp"
#include "models/small_lu.hpp"
#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

TEST_CASE("nodal: a series RLC driven through R gives the textbook second-order response") {
  // V source 1 V behind R into L then C to ground; v_C = 1/(1 + s R C + s^2 L C) (derived).
  const double r = 50.0, l = 1e-9, c = 200e-15;
  NodalSystem sys;
  const int a = sys.add_node("a");
  const int b = sys.add_node("b");
  sys.add_source(a, r);
  sys.add_inductor(a, b, l);
  sys.add_capacitor(b, NodalSystem::ground, c);
  sys.set_output(b);
  const auto rational = sys.rational();
  CHECK(rational.order() == 2);
  for (double f = 1e8; f < 1e12; f *= 1.9) {
    const auto s = jw(f);
    const auto expected = 1.0 / (1.0 + s * r * c + s * s * l * c);
    CHECK(std::abs(sys.transfer(s) / expected - 1.0) < 1e-12);
    CHECK(std::abs(rational.evaluate(s) / expected - 1.0) < 1e-10);
  }
}

TEST_CASE("nodal: group delay from the exact derivative equals differenced phase") {
  const auto sys = build_stage_system(shunt_stage(0.4));
  const double f = 9e9, df = 1.0;  // 1 Hz: the phase is smooth and the solve exact, so differencing works
  const auto [h, dh] = sys.transfer_and_derivative(jw(f));
  const double tau = -(dh / h).real();
  const double phase_slope = (std::arg(sys.transfer(jw(f + df))) - std::arg(sys.transfer(jw(f - df)))) / (2 * 2 * pi * df);
  CHECK(tau == doctest::Approx(-phase_slope).epsilon(1e-5));
}

TEST_CASE("nodal: aiding coupling adds 2M to the end-to-end inductance") {
  // Two coupled coils in series from a node to ground see L1 + L2 + 2k sqrt(L1 L2) (docs/physics.md, circuits).
  const double l1 = 300e-12, l2 = 200e-12, k = 0.4;
  NodalSystem sys;
  const int a = sys.add_node("a");
  const int m = sys.add_node("m");
  const int b1 = sys.add_inductor(a, m, l1);
  const int b2 = sys.add_inductor(m, NodalSystem::ground, l2);
  sys.add_mutual(b1, b2, k * std::sqrt(l1 * l2));
  const auto z = sys.impedance(a, jw(1e9));
  CHECK(z.imag() / (2 * pi * 1e9) == doctest::Approx(l1 + l2 + 2 * k * std::sqrt(l1 * l2)).epsilon(1e-12));
}

namespace {

// Solves a random complex N x N system with SmallLU; returns the relative residual
// |A x - b|_inf / (|A|_inf |x|_inf + |b|_inf).
template <int N>
double small_lu_residual(std::mt19937& rng) {
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  Eigen::Matrix<std::complex<double>, N, N> a;
  Eigen::Matrix<std::complex<double>, N, 1> b;
  for (int r = 0; r < N; ++r) {
    b(r) = {unit(rng), unit(rng)};
    for (int c = 0; c < N; ++c) a(r, c) = {unit(rng), unit(rng)};
  }
  const SmallLU<N> lu([&](int r, int c) { return a(r, c); });
  typename SmallLU<N>::Vector x;
  for (int r = 0; r < N; ++r) x[static_cast<size_t>(r)] = b(r);
  lu.solve(x);
  const Eigen::Map<const Eigen::Matrix<std::complex<double>, N, 1>> xv(x.data());
  const double a_norm = a.cwiseAbs().rowwise().sum().maxCoeff();
  return (a * xv - b).cwiseAbs().maxCoeff() / (a_norm * xv.cwiseAbs().maxCoeff() + b.cwiseAbs().maxCoeff());
}

}  // namespace

TEST_CASE("nodal: the small fixed-size LU solves random complex systems to rounding and pivots past a zero") {
  // Gaussian elimination with partial pivoting is backward stable: the computed x solves
  // (A + E) x = b with |E| <= gamma_3n |L| |U|, gamma_3n about 3n eps (Higham, Accuracy and
  // Stability of Numerical Algorithms, 2nd ed., theorem 9.4; from memory). For random matrices of
  // order <= 8, |L| |U| is a few times |A|; 1e-13 (about 500 eps) leaves room for that and fails
  // on any wrong pivot, swap or sweep, which leaves residuals of order 1.
  std::mt19937 rng(20261203);
  for (int trial = 0; trial < 50; ++trial) {
    CHECK(small_lu_residual<1>(rng) < 1e-13);
    CHECK(small_lu_residual<2>(rng) < 1e-13);
    CHECK(small_lu_residual<3>(rng) < 1e-13);
    CHECK(small_lu_residual<5>(rng) < 1e-13);
    CHECK(small_lu_residual<8>(rng) < 1e-13);
  }
  // A zero leading entry needs a row exchange: [[0, 2j], [4, 1]] x = [2j, 5] has x = (1, 1)
  // exactly (derived: the second row after the exchange is 2j x2 = 2j).
  const std::complex<double> j(0.0, 1.0);
  const std::complex<double> m[2][2] = {{0.0, 2.0 * j}, {4.0, 1.0}};
  const SmallLU<2> lu([&](int r, int c) { return m[r][c]; });
  SmallLU<2>::Vector x{2.0 * j, 5.0};
  lu.solve(x);
  CHECK(std::abs(x[0] - 1.0) < 1e-15);
  CHECK(std::abs(x[1] - 1.0) < 1e-15);
}

TEST_CASE("rational: polynomial helpers round-trip") {
  const std::vector<std::complex<double>> roots{{-1.0, 2.0}, {-1.0, -2.0}, {-3.0, 0.0}};
  const auto p = polynomial_from_roots(roots);  // (s^2 + 2s + 5)(s + 3) = s^3 + 5s^2 + 11s + 15
  REQUIRE(p.size() == 4);
  CHECK(p[0] == doctest::Approx(15.0));
  CHECK(p[1] == doctest::Approx(11.0));
  CHECK(p[2] == doctest::Approx(5.0));
  const auto q = polynomial_quotient(p, {3.0, 1.0});
  REQUIRE(q.size() == 3);
  CHECK(q[0] == doctest::Approx(5.0));
  CHECK(q[1] == doctest::Approx(2.0));
  CHECK(q[2] == doctest::Approx(1.0));
}
