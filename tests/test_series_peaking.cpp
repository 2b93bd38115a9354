// Series peaking against its closed form (derived, docs/references.md):
//   v_out/(-gm R) = 1/(1 + tau s + m x tau^2 s^2 + m x (1-x) tau^3 s^3),
// C = C_near + C_far, x = C_far/C, tau = R C, m = L/(R^2 C).
#include <doctest/doctest.h>

#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

StageCircuit series_stage(double m, double x, double rd = 100.0, double c = 100e-15) {
  StageCircuit s = plain_stage(rd, c * x);
  s.kind = LoadKind::series;
  s.c_out = c * (1.0 - x);
  s.l = inductance_for_m(m, rd, c);
  return s;
}

}  // namespace

TEST_CASE("series: the nodal solve equals the third-order closed form") {
  const double m = 0.55, x = 0.7, tau = 100.0 * 100e-15;
  const auto system = build_stage_system(series_stage(m, x));
  for (double f = 1e8; f < 1e12; f *= 1.29) {
    const auto s = jw(f);
    const auto expected = -0.02 * 100.0 /
                          (1.0 + tau * s + m * x * tau * tau * s * s + m * x * (1 - x) * tau * tau * tau * s * s * s);
    CHECK(std::abs(system.transfer(s) / expected - 1.0) < 1e-10);
  }
}

TEST_CASE("series: x = 3/4, m = 2/3 is third-order Butterworth, 2.00x and 8.15 % overshoot") {
  // Derived: 1 + tau s + (tau s)^2/2 + (tau s)^3/8 is the Butterworth s^3 + 2s^2 + 2s + 1 at
  // s -> tau s / 2 (standard filter tables), so f3dB = 2 / (2 pi tau).
  const auto h = alone(series_stage(2.0 / 3.0, 0.75));
  const auto f = frequency_metrics(h);
  CHECK(f.bandwidth_hz / plain_bandwidth() == doctest::Approx(2.0).epsilon(1e-6));
  CHECK(f.peaking_db == doctest::Approx(0.0));
  CHECK(overshoot_pct(h) == doctest::Approx(8.15).epsilon(0.002));  // Butterworth-3 step, derived
}

TEST_CASE("series: x = 5/6, m = 0.48 is third-order Bessel, 1.756x") {
  // Bessel s^3 + 6s^2 + 15s + 15 has w3dB = 1.7557 in delay-normalised units (filter handbooks).
  const auto f = frequency_metrics(alone(series_stage(0.48, 5.0 / 6.0)));
  CHECK(f.bandwidth_hz / plain_bandwidth() == doctest::Approx(1.7557).epsilon(1e-3));
}
