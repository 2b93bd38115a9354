// The static large-signal transfer curve of a differential pair (docs/physics.md (large signals)).
//
// Half-circuit convention: v is the half-circuit input voltage (half the differential input),
// i the half-circuit output current (half the differential output current, I1 - I2 over 2).
// Both curves have slope gm at v = 0 and limits +-I_T/2, I_T the tail current. With the
// normalised input x = gm*v/I_T:
//
//   bipolar  i = (I_T/2)*tanh(2x)
//     From memory (Gray, Hurst, Lewis, Meyer, Analysis and Design of Analog Integrated Circuits,
//     the emitter-coupled pair): dI = I_EE*tanh(dV/(2 V_T)) for the differential current and
//     voltage. In the half circuit i = dI/2, v = dV/2, I_EE = I_T: i = (I_T/2)*tanh(v/V_T),
//     slope I_T/(2 V_T) at zero, which is each transistor's gm = I_C/V_T at I_C = I_T/2.
//     Writing the slope as the stage's gm (V_T -> I_T/(2 gm)) gives the form above; a pair
//     whose gm is below I_T/(2 V_T) (emitter degeneration) is modelled by the same shape.
//
//   mos      i = I_T*x*sqrt(1 - x^2) for |x| <= 1/sqrt(2), then +-I_T/2 (one side off)
//     From memory (B. Razavi, Design of Analog CMOS Integrated Circuits, the differential-pair
//     chapter): in saturation dI = (beta/2)*dV*sqrt(4 I_SS/beta - dV^2), beta = mu_n Cox W/L,
//     fully steered at |dV| = sqrt(2 I_SS/beta). Half circuit (i = dI/2, v = dV/2, I_SS = I_T):
//     i = beta*v*sqrt(I_T/beta - v^2), slope sqrt(beta*I_T) at zero, so beta = gm^2/I_T; then
//     v = x*I_T/gm gives i = I_T*x*sqrt(1 - x^2), full steering at x = 1/sqrt(2) where
//     i = I_T/2 and di/dv = 0 (the clamp joins with a continuous slope).
//
// The physical bound: each device carries I_T/2 at balance, and neither a bipolar transistor
// (gm = I_C/V_T exactly) nor a MOS device (gm/I_D <= 1/(n V_T) with n >= 1, the weak-inversion
// ceiling; the square law's 2/V_ov meets it at V_ov = 2 n V_T) gives more than I_T/(2 V_T)
// of half-circuit gm. max_pair_gm returns it; the loader rejects a larger gm.
#pragma once

#include <optional>
#include <string_view>

namespace peakplan {

enum class PairKind { bipolar, mos };

std::optional<PairKind> pair_kind_from_name(std::string_view name);
std::string_view to_string(PairKind kind);

struct PairLimit {
  double tail_current = 0.0;  // A, > 0
  PairKind pair = PairKind::bipolar;
  bool operator==(const PairLimit&) const = default;
};

// Half-circuit output current (A) at half-circuit input v (V) for a stage of small-signal gm (S).
double pair_current(const PairLimit& limit, double gm, double v);
// The same on the normalised input x = gm*v/I_T, as a fraction of I_T (limits +-1/2).
double pair_current_normalised(PairKind pair, double x);
// The normalised input at which the large-signal gain f(x)/x falls 1 dB below its slope at zero.
double pair_compression_x(PairKind pair);
// The half-circuit gm the tail current can give at most, I_T/(2 V_T) (see above), at temperature_k.
double max_pair_gm(double tail_current, double temperature_k);

}  // namespace peakplan
