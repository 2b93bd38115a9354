// Closed-form peaking designs: the published conditions a normalised design parameter maps to.
// They seed values and serve as test oracles; every response is still computed from the circuit.
#pragma once

#include <optional>
#include <string_view>

#include "models/rational.hpp"

namespace peakplan {

// Shunt or series peaking: L = m * Rd^2 * C (m as in Shekhar, Walling and Allstot, JSSC 2006).
double inductance_for_m(double m, double rd, double c_total);

// Symmetric bridged T-coil for a damping ratio zeta of the centre-tap response
// (C. R. Battjes; B. Razavi, IEEE SSC Magazine 2015):
//   k = (4 zeta^2 - 1)/(4 zeta^2 + 1),  L1 = L2 = R^2 C / (2 (1 + k)),  Cb = C (1 - k)/(4 (1 + k)).
struct TcoilDesign {
  double l_half;
  double k;
  double cb;
};
TcoilDesign tcoil_for_zeta(double zeta, double rd, double c_tap);
// The zeta of a named response: butterworth 1/sqrt(2), bessel sqrt(3)/2, critical 1.
std::optional<double> zeta_for_response(std::string_view name);

// What the ideal design promises: -gm R / (1 + s R C/2 + s^2 (1-k) R^2 C^2 / (4 (1+k))), times
// the separate real pole 1/(R c_drain) a drain capacitance adds (the network still looks like R).
Rational tcoil_ideal_response(double gm, double rd, double c_tap, double k, double c_drain);

// Series loss of an inductor of quality factor q at frequency f: 2 pi f L / q.
double loss_resistance(double l, double q, double f_hz);

}  // namespace peakplan
