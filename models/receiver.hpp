// What an optical receiver is signed off on, for a chain driven by a photocurrent (a tia first):
// the transimpedance, the input-referred noise current and the optical sensitivity at a BER.
//
// The photodiode drives one half circuit (the stages' own circuit); its noise is that half's.
//   input rms noise current   i_n = v_n,out / R_T, R_T = |Z_T(0)|    (Saeckinger's definition)
//   averaged input density    i_n / sqrt(noise bandwidth of |Z_T|^2)
//   NRZ:  OMA = P1 - P0 = 2 Q i_n / R; average power = OMA/2 * (ER + 1)/(ER - 1)
//   PAM4: each of the three eyes is OMA/3 and needs 2 Q i_n, so OMA = 6 Q i_n / R
// with Q from the target BER (Q = sqrt 2 erfc^-1(2 BER)), R the responsivity and ER the
// extinction ratio P1/P0 (E. Saeckinger, "Broadband Circuits for Optical Fiber Communication",
// Wiley 2005, ch. 4, from memory; the PAM4 factor derived). Noise that grows with the signal
// (the photocurrent's own shot noise, an APD's gain noise) is not included: a PIN estimate.
#pragma once

#include <limits>
#include <optional>
#include <vector>

#include "models/eye.hpp"
#include "models/noise.hpp"

namespace peakplan {

struct OpticalSensitivity {
  double q = 0.0;
  double oma_w = 0.0;      // optical modulation amplitude at the target BER, W
  double average_w = 0.0;  // average optical power at that OMA and extinction ratio, W
  double extinction_ratio = std::numeric_limits<double>::infinity();  // P1/P0, linear
};

// Throws std::invalid_argument unless noise and responsivity are positive, Q positive and ER > 1.
OpticalSensitivity optical_sensitivity(double input_rms_a, double responsivity, double q, double extinction_ratio,
                                       Modulation modulation);

struct ReceiverSummary {
  double transimpedance_ohm = 0.0;      // |Z_T(0)| from the photocurrent to this output
  double input_rms_a = 0.0;             // output rms noise / R_T
  double input_density_avg = 0.0;       // A/rtHz: input_rms_a / sqrt(noise bandwidth)
  double noise_bandwidth_hz = 0.0;
  std::vector<NoisePoint> spectrum;     // input-referred density (A/rtHz) on the analysis grid
  std::optional<OpticalSensitivity> sensitivity;  // with a photodiode and a signal
};

}  // namespace peakplan
