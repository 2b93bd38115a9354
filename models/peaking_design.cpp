#include "models/peaking_design.hpp"

#include <cmath>
#include <numbers>
#include <stdexcept>

namespace peakplan {

double inductance_for_m(double m, double rd, double c_total) { return m * rd * rd * c_total; }

TcoilDesign tcoil_for_zeta(double zeta, double rd, double c_tap) {
  if (!(zeta > 0.0)) throw std::invalid_argument("tcoil_for_zeta: zeta must be positive");
  const double z2 = 4.0 * zeta * zeta;
  const double k = (z2 - 1.0) / (z2 + 1.0);
  return {rd * rd * c_tap / (2.0 * (1.0 + k)), k, c_tap * (1.0 - k) / (4.0 * (1.0 + k))};
}

std::optional<double> zeta_for_response(std::string_view name) {
  if (name == "butterworth") return 1.0 / std::numbers::sqrt2;
  if (name == "bessel") return std::sqrt(3.0) / 2.0;
  if (name == "critical") return 1.0;
  return std::nullopt;
}

Rational tcoil_ideal_response(double gm, double rd, double c_tap, double k, double c_drain) {
  constexpr double ts = 1e-12;
  const double t1 = rd * c_tap / 2.0 / ts;
  const double t2 = (1.0 - k) * rd * rd * c_tap * c_tap / (4.0 * (1.0 + k)) / (ts * ts);
  const double td = rd * c_drain / ts;
  // (1 + t1 s + t2 s^2)(1 + td s)
  return Rational({-gm * rd}, {1.0, t1 + td, t2 + t1 * td, t2 * td}, ts);
}

double loss_resistance(double l, double q, double f_hz) {
  return 2.0 * std::numbers::pi * f_hz * l / q;
}

}  // namespace peakplan
