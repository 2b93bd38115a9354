// Thermal noise of a chain: output and input-referred densities, total rms, noise bandwidth.
//
// Generators: every resistor (Rd, r_load, source resistance, coil losses r_l, r_l1, r_l2) is
// 4kT/R of current (4kT*r of voltage in series, for a coil loss), every gm cell 4kT*gamma*gm of
// current at the node it drives. Each circuit's noise at its output node comes from its own
// nodal system: one solve of the transposed system (G + sC)^T w = e_out per frequency gives the
// transfer from every generator at once (w . e). A stage's noise then passes through the voltage
// gain of the stages after it (each gm cell isolates its input), and the source network's noise
// through all of them:
//   S_out(f) = sum_i S_i(f) * |H_{i+1} ... H_n|^2 + (S_src(f) + e_in^2 |H_src|^2) |H_1 ... H_n|^2.
// Densities are one-sided: V^2/Hz, or V/rtHz where a name says density.
#pragma once

#include <complex>
#include <functional>
#include <utility>
#include <vector>

#include "models/chain.hpp"
#include "models/frequency_response.hpp"
#include "models/nodal_system.hpp"
#include "models/rational.hpp"

namespace peakplan {

inline constexpr double boltzmann = 1.380649e-23;  // J/K (exact, SI 2019)
inline constexpr double elementary_charge = 1.602176634e-19;  // C (exact, SI 2019)

struct NoiseOptions {
  double temperature = 300.0;  // K
  double gamma = 1.0;          // gm-cell excess noise factor
  bool resistor_noise = true;  // include resistors and coil losses
  bool gm_noise = true;        // include the gm cells
  // White noise of what drives the chain, V/rtHz, in series with its Thevenin voltage (on top
  // of r_source's own thermal noise).
  double input_density = 0.0;
  // The receiver's input bandwidth, Hz (0: none): a first-order low-pass 1/(1 + (f/fr)^2) on the
  // output noise behind Q and BER, as a slicer's front end band-limits it; the signal path and
  // its eye are the chain's own.
  double receiver_bandwidth_hz = 0.0;
};

// One circuit's noise model: its matrices and generators, ready for repeated solves.
class CircuitNoise {
 public:
  // Throws std::logic_error when the system has no output node.
  CircuitNoise(const NodalSystem& system, const NoiseOptions& options);
  // v_out / v_in for the circuit's stimulus, and the one-sided PSD (V^2/Hz) at its output node
  // from its own generators alone.
  std::pair<std::complex<double>, double> evaluate(double f_hz) const;

 private:
  Eigen::MatrixXd g_real_, c_real_;
  Eigen::VectorXd b_real_;
  Eigen::MatrixXcd g_, c_;  // complex copies, for the systems too large for the fixed-size solves
  Eigen::VectorXcd b_, e_out_;
  int output_ = 0;
  std::vector<std::pair<NodalSystem::NoiseGenerator, double>> generators_;  // with their PSD
};

// The noise model of one output of a chain (the source network and every stage on its path).
class ChainNoise {
 public:
  // Throws std::logic_error for an output that is not a stage of the chain.
  // The chain's c_node values must be filled (fill_node_capacitances), as for output_cascade.
  ChainNoise(const Chain& chain, int output, NoiseOptions options = {});
  // The same, given the output's cascade (output_cascade(chain, output)) already derived.
  ChainNoise(const Chain& chain, int output, NoiseOptions options, Cascade cascade);

  double output_psd(double f_hz) const;          // V^2/Hz
  std::complex<double> transfer(double f_hz) const;  // v_out / v_source, exact nodal solves
  double dc_gain() const { return cascade_.dc_value(); }
  const Cascade& cascade() const { return cascade_; }  // the same chain, rational form
  const NoiseOptions& options() const { return options_; }
  // H and the output PSD from one set of solves.
  std::pair<std::complex<double>, double> evaluate(double f_hz) const;

 private:
  std::vector<CircuitNoise> blocks_;  // source network (if any) first, then the stages in order
  std::vector<size_t> alike_;         // per block, the first block with the same circuit (itself if none)
  NoiseOptions options_;
  Cascade cascade_;
};

struct NoisePoint {
  double frequency_hz = 0.0;
  double output_density = 0.0;  // V/rtHz at the output
  double input_density = 0.0;   // output_density / |H|: V/rtHz at the source
  double gain = 0.0;            // |H|
};
std::vector<NoisePoint> noise_spectrum(const ChainNoise& noise, const FrequencyGrid& grid);

struct NoiseSummary {
  // sqrt of the output PSD integrated over (0, inf); +inf when it is not band-limited (a white
  // input density through a chain with a direct path).
  double output_rms_v = 0.0;  // of one half circuit, the circuit the stages describe
  // The differential output's: the two halves' noise is uncorrelated, so sqrt(2) x output_rms_v.
  // It is the noise beside the differential swing and eye in Q and BER.
  double differential_rms_v = 0.0;
  double noise_bandwidth_hz = 0.0;  // integral of |H/H(0)|^2 df
  // The white source density that would give the same output rms: output_rms / (|H(0)| sqrt(NBW)).
  double equivalent_input_density = 0.0;
  double integration_limit_hz = 0.0;  // numerical part ends here; beyond, the asymptotic tail
  double receiver_bandwidth_hz = 0.0;  // the first-order limit applied to the rms (0: none)
};
NoiseSummary summarise_noise(const ChainNoise& noise);

// The integral of a one-sided PSD over (0, inf), for a PSD flat below f_lo and falling at least
// as fast as 1/f^1.5 above f_hi: a constant below f_lo, Simpson's rule in ln f from f_lo to f_hi
// (160 points per decade), and beyond f_hi the power-law tail its log-log slope there implies,
// S(f_hi) f_hi / (-slope - 1). Returns +inf when the PSD does not fall fast enough at f_hi.
double integrate_psd(const std::function<double(double)>& psd, double f_lo, double f_hi, int per_decade = 160);

// The output rms noise alone, V (summarise_noise's output_rms_v without the noise bandwidth), at
// `per_decade` integration points.
double output_rms_noise(const ChainNoise& noise, int per_decade = 160);

// The same integral as integrate_psd at a fraction of its PSD evaluations, for a PSD that is a
// rational function of f^2 (|transfer|^2 times white generators is) whose roots all lie within
// [f_first, f_last]: 6-point Gauss-Legendre panels of at most half a decade in ln f, from 1.5
// decades below f_first to 1.5 decades above f_last (further while the PSD has not settled to
// its asymptote), narrowed about each lightly damped pair of `poles` (rad/s) in proportion to
// its damping; below, a + b f^2 and above, c f^-2m (1 + d f^-2), each fitted at two points and
// integrated in closed form. +inf when the PSD does not fall at least as 1/f^2.
double integrate_psd_panels(const std::function<double(double)>& psd, double f_first, double f_last,
                            const std::vector<std::complex<double>>& poles = {});

// output_rms_noise by integrate_psd_panels: what a planner's search needs, many times over.
// Measured: 76 PSD evaluations on the planned receiver (88 with 7-point panels; output_rms_noise
// at 40 a decade took 274 on an earlier plan of it), and within 6.5e-7 of the mean square at 160 a
// decade on the shipped chains, with and without a receiver limit (40 a decade strays to 1e-4 on
// the most peaked).
double output_rms_noise_panels(const ChainNoise& noise);

// Integral of |H(j 2 pi f)/H(0)|^2 over f in (0, inf), Hz, over the cascade's natural span
// (3 decades beyond every pole and zero); +inf for a biproper cascade (a direct path).
double noise_bandwidth(const Cascade& cascade);

}  // namespace peakplan
