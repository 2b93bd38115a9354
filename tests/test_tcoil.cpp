// The symmetric bridged T-coil against the constant-resistance design (C. R. Battjes, fact sheet
// for constant-resistance T-coils, in J. Williams (ed.), The Art and Science of Analog Circuit
// Design, 1995; B. Razavi, "The bridged T-coil", IEEE Solid-State Circuits Magazine, 2015):
// with 2L(1+k) = R^2 C and Cb = C(1-k)/(4(1+k)) the drain sees R at every frequency and
// v_tap/(-gm R) = 1/(1 + s R C/2 + s^2 (1-k) R^2 C^2/(4(1+k))).
#include <doctest/doctest.h>

#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

TEST_CASE("tcoil: the published conditions leave a second-order response with no finite zeros") {
  for (double zeta : {1.0 / std::sqrt(2.0), std::sqrt(3.0) / 2.0, 1.0, 0.6}) {
    CAPTURE(zeta);
    const auto r = build_stage_system(tcoil_stage(zeta)).rational();
    CHECK(r.order() == 2);
    CHECK(r.numerator_degree() == 0);
    CHECK(r.poles().size() == 2);
  }
}

TEST_CASE("tcoil: the nodal solve equals the closed form at many frequencies") {
  const double R = 100.0, C = 100e-15;
  for (double zeta : {1.0 / std::sqrt(2.0), std::sqrt(3.0) / 2.0, 1.0}) {
    const auto s = tcoil_stage(zeta);
    const auto system = build_stage_system(s);
    for (double f = 1e8; f < 1e12; f *= 1.41) {
      const auto sv = jw(f);
      const auto expected = -s.gm * R /
                            (1.0 + sv * R * C / 2.0 + sv * sv * (1 - s.k) * R * R * C * C / (4 * (1 + s.k)));
      CHECK(std::abs(system.transfer(sv) / expected - 1.0) < 1e-9);
    }
  }
}

TEST_CASE("tcoil: the input impedance equals Rd within 0.1 % from DC to three times the bandwidth") {
  for (double zeta : {1.0 / std::sqrt(2.0), std::sqrt(3.0) / 2.0, 1.0}) {
    const auto s = tcoil_stage(zeta);
    CHECK(input_impedance_error(s, 3.0 * bandwidth(s)) < 1e-3);
  }
  // The sign of k matters (Razavi 2015): flipped coupling destroys the constant resistance.
  auto flipped = tcoil_stage(1.0 / std::sqrt(2.0));
  flipped.k = -flipped.k;
  CHECK(input_impedance_error(flipped, 3.0 * bandwidth(flipped)) > 0.1);
}

TEST_CASE("tcoil: k = 1/3, Cb = C/8 is Butterworth: 2.83x the bandwidth of R with C, 4.3 % overshoot") {
  const auto s = tcoil_stage(1.0 / std::sqrt(2.0));
  CHECK(s.k == doctest::Approx(1.0 / 3.0));
  CHECK(s.cb == doctest::Approx(100e-15 / 8.0));
  const auto f = frequency_metrics(alone(s));
  CHECK(f.bandwidth_hz / plain_bandwidth() == doctest::Approx(2.83).epsilon(0.002));  // 2 sqrt 2, derived
  CHECK(f.peaking_db == doctest::Approx(0.0));
  CHECK(overshoot_pct(alone(s)) == doctest::Approx(4.3).epsilon(0.01));  // Battjes: 4.3 %
  CHECK(f.group_delay_s == doctest::Approx(100.0 * 100e-15 / 2.0).epsilon(1e-9));  // RC/2
}

TEST_CASE("tcoil: the Bessel design (k = 1/2, Cb = C/12) is maximally flat in delay") {
  // A maximally flat delay has no w^2 term in tau(w) (derived from the Bessel polynomial
  // s^2 + 3s + 3); the Butterworth design has one, as a contrast.
  auto curvature = [](double zeta) {
    const auto h = alone(tcoil_stage(zeta));
    const double t0 = group_delay(h, 0.0);
    const double f = 0.02 * plain_bandwidth();
    return (group_delay(h, f) - t0) / t0 / std::pow(f / plain_bandwidth(), 2);
  };
  const auto bessel = tcoil_stage(std::sqrt(3.0) / 2.0);
  CHECK(bessel.k == doctest::Approx(0.5));
  CHECK(bessel.cb == doctest::Approx(100e-15 / 12.0));
  CHECK(std::fabs(curvature(std::sqrt(3.0) / 2.0)) < 1e-3);
  CHECK(std::fabs(curvature(1.0 / std::sqrt(2.0))) > 0.1);
  CHECK(overshoot_pct(alone(bessel)) == doctest::Approx(0.43).epsilon(0.05));  // Battjes: 0.4 %
  CHECK(frequency_metrics(alone(bessel)).bandwidth_hz / plain_bandwidth() ==
        doctest::Approx(2.723).epsilon(1e-3));  // derived
}

TEST_CASE("tcoil: k = 0.6, Cb = C/16 is critically damped, no overshoot, 2.57x") {
  const auto s = tcoil_stage(1.0);
  CHECK(s.k == doctest::Approx(0.6));
  CHECK(s.cb == doctest::Approx(100e-15 / 16.0));
  CHECK(overshoot_pct(alone(s)) < 1e-6);
  CHECK(frequency_metrics(alone(s)).bandwidth_hz / plain_bandwidth() == doctest::Approx(2.574).epsilon(1e-3));
}

TEST_CASE("tcoil: a drain capacitance adds a separate real pole at 1/(R Cd)") {
  auto s = tcoil_stage(1.0 / std::sqrt(2.0));
  s.c_out = 30e-15;
  const auto actual = build_stage_system(s);
  const auto ideal = tcoil_ideal_response(s.gm, s.rd, s.c_node, s.k, s.c_out);
  for (double f = 1e8; f < 1e12; f *= 1.5) CHECK(std::abs(actual.transfer(jw(f)) / ideal.evaluate(jw(f)) - 1.0) < 1e-9);
}

TEST_CASE("tcoil: with k = 0 and Cb = C/4 the step overshoots about 16 %") {
  // Battjes: 16 % for an uncoupled T-coil. zeta = 1/2 gives exactly k = 0, Cb = C/4.
  const auto s = tcoil_stage(0.5);
  CHECK(s.k == doctest::Approx(0.0));
  CHECK(s.cb == doctest::Approx(100e-15 / 4.0));
  CHECK(overshoot_pct(alone(s)) == doctest::Approx(16.3).epsilon(0.01));  // exp(-pi/sqrt 3) = 16.3 %
}
