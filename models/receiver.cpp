#include "models/receiver.hpp"

#include <cmath>
#include <stdexcept>

namespace peakplan {

OpticalSensitivity optical_sensitivity(double input_rms_a, double responsivity, double q, double extinction_ratio,
                                       Modulation modulation) {
  if (!(input_rms_a > 0.0) || !(responsivity > 0.0) || !(q > 0.0) || !(extinction_ratio > 1.0))
    throw std::invalid_argument("optical_sensitivity: needs positive noise, responsivity and Q, and ER > 1");
  OpticalSensitivity s;
  s.q = q;
  s.extinction_ratio = extinction_ratio;
  const double eyes = modulation == Modulation::pam4 ? 3.0 : 1.0;
  s.oma_w = eyes * 2.0 * q * input_rms_a / responsivity;
  // (P1 + P0)/2 with P1 - P0 = OMA and P1 = ER P0; ER -> infinity gives OMA/2.
  const double er_factor = std::isinf(extinction_ratio) ? 1.0 : (extinction_ratio + 1.0) / (extinction_ratio - 1.0);
  s.average_w = s.oma_w / 2.0 * er_factor;
  return s;
}

}  // namespace peakplan
