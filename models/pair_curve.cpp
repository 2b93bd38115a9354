#include "models/pair_curve.hpp"

#include <cmath>


namespace peakplan {

std::optional<PairKind> pair_kind_from_name(std::string_view name) {
  if (name == "bipolar") return PairKind::bipolar;
  if (name == "mos") return PairKind::mos;
  return std::nullopt;
}

std::string_view to_string(PairKind kind) { return kind == PairKind::mos ? "mos" : "bipolar"; }

double pair_current_normalised(PairKind pair, double x) {
  if (pair == PairKind::bipolar) {
    // tanh(y) = (1 - e)/(1 + e), e = exp(-2|y|), is as accurate as tanh itself away from zero
    // and a third of its cost; beyond |y| = 19.1 tanh rounds to 1 in double precision.
    const double a = std::fabs(2.0 * x);
    if (a >= 20.0) return std::copysign(0.5, x);
    if (a < 0.5) return 0.5 * std::tanh(2.0 * x);
    const double e = std::exp(-2.0 * a);
    return std::copysign(0.5 * (1.0 - e) / (1.0 + e), x);
  }
  // Beyond full steering (x^2 >= 1/2) one device carries the whole tail current.
  if (2.0 * x * x >= 1.0) return x > 0.0 ? 0.5 : -0.5;
  return x * std::sqrt(1.0 - x * x);
}

double pair_current(const PairLimit& limit, double gm, double v) {
  const double it = limit.tail_current;
  return it * pair_current_normalised(limit.pair, gm * v / it);
}

double pair_compression_x(PairKind pair) {
  // f(x)/x decreases monotonically from 1 at x = 0 for both curves: bisection.
  const double target = std::pow(10.0, -1.0 / 20.0);
  double lo = 1e-9, hi = 10.0;
  for (int i = 0; i < 200 && hi - lo > 1e-15; ++i) {
    const double mid = 0.5 * (lo + hi);
    (pair_current_normalised(pair, mid) / mid > target ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

double max_pair_gm(double tail_current, double temperature_k) {
  constexpr double boltzmann = 1.380649e-23, elementary_charge = 1.602176634e-19;  // SI 2019, exact
  const double thermal_voltage = boltzmann * temperature_k / elementary_charge;
  return tail_current / (2.0 * thermal_voltage);
}

}  // namespace peakplan
