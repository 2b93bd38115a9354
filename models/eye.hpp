// Eye estimates of a chain for NRZ or PAM4 data (docs/physics.md (metrics)): the pulse response,
// peak-distortion analysis, the overlay of a PRBS pattern, and noise-limited (statistical)
// openings at a target bit-error ratio.
//
// Every waveform here is the chain's output divided by its signed DC gain, for input symbol
// levels 0..1 (NRZ 0, 1; PAM4 0, 1/3, 2/3, 1): an ideal chain reproduces the levels exactly.
// Heights are fractions of the ideal eye (1 for NRZ, 1/3 of the swing for each PAM4 eye);
// `*_v` fields are volts at the output for the signal's swing at the input.
//
// Time responses come from the realised cascade through SteppedSimulator (exact for held
// inputs); pattern waveforms are superpositions of the sampled pulse response, which is exact
// for a linear chain because a held symbol sequence is a sum of shifted one-symbol pulses.
#pragma once

#include <cstdint>
#include <limits>
#include <span>
#include <vector>

#include "models/prbs.hpp"
#include "models/rational.hpp"

namespace peakplan {

enum class Modulation { nrz, pam4 };
// "nrz" or "pam4", as the chain file writes it.
std::string_view to_string(Modulation modulation);

struct Signal {
  double bit_rate = 0.0;                  // b/s, > 0
  Modulation modulation = Modulation::nrz;
  PrbsKind pattern = PrbsKind::prbs7;
  // 20-80 % rise time of the driving edge, s; 0 = ideal steps. The edge is first order: a real
  // pole at 1/tau ahead of the chain with tau = input_rise / ln 4 (a first-order step rises
  // from 20 % to 80 % in tau*ln(0.8/0.2)), so it stays exact through the discretisation.
  double input_rise = 0.0;
  double swing = 1.0;                     // V peak to peak at the chain's input
  double target_ber = 1e-12;
  // P1/P0 of an optical signal (linear), for the average power of a sensitivity; inf = ideal.
  double extinction_ratio = std::numeric_limits<double>::infinity();

  double symbol_rate() const { return modulation == Modulation::pam4 ? bit_rate / 2 : bit_rate; }
  double ui() const { return 1.0 / symbol_rate(); }
  // Eye levels above the lowest one: 1 (NRZ) or 3 (PAM4).
  int eye_count() const { return modulation == Modulation::pam4 ? 3 : 1; }
};

// p(t) = step(t) - step(t - UI) of the chain (with the input edge, if any), divided by the
// signed DC gain, at t = k*dt, k = 0 .. ui_count*steps_per_ui - 1.
struct PulseResponse {
  double ui = 0.0;        // s
  int steps_per_ui = 0;   // dt = ui / steps_per_ui
  int ui_count = 0;       // span of p in UI: covers 2x the group delay and 16 slowest time constants
  bool span_capped = false;  // the decay needed more than max_pulse_ui; the tail is cut off
  double dc_gain = 0.0;   // signed DC gain the waveforms were divided by
  std::vector<double> p;

  double dt() const { return ui / steps_per_ui; }
  // c_j = p(phase + j*UI), j = 0 .. ui_count-1, for a phase on the sample grid (0..steps-1).
  std::vector<double> cursors(int phase_index) const;
  // The same at any phase in [0, UI), linearly interpolated between samples.
  std::vector<double> cursors_at(double phase_s) const;
};

inline constexpr int default_steps_per_ui = 64;
inline constexpr int max_pulse_ui = 4096;

// Throws std::invalid_argument for a non-positive bit rate, steps_per_ui < 64, a negative
// input_rise, an unstable cascade or a zero DC gain.
PulseResponse pulse_response(const Cascade& chain, const Signal& signal,
                             int steps_per_ui = default_steps_per_ui);

struct PeakDistortion {
  double height = 0.0;         // NRZ h0 - sum|c_j|; PAM4 h0 - 3 sum|c_j|; <= 0 means closed
  double sample_time_s = 0.0;  // phase + main*UI: the sampling instant after the pulse starts
  int phase_index = 0;         // of the best phase on the sample grid
  int main_index = 0;          // j of the main cursor (the largest)
  std::vector<double> cursors; // at the best phase
};
// Maximum over the sample-grid phases. Among phases that tie (within 1e-9), the centre of the
// first tied run is taken, so a flat-topped pulse is sampled in the middle.
PeakDistortion peak_distortion(const PulseResponse& pulse, Modulation modulation);

struct EyeOpening {
  double height = 0.0;        // best inner opening over offsets within +-UI/2, fraction of ideal
  double width_ui = 0.0;      // open span at the decision threshold around the best offset
  double open_span_ui = 0.0;  // span around the best offset over which the height stays > 0
  double best_offset_s = 0.0; // of the best height, from the reference sampling phase
};

struct PrbsEye {
  Modulation modulation = Modulation::nrz;
  // NRZ: the eye; PAM4: the worst of the three eyes at one common sampling offset (one clock
  // for the three slicers), width and span where all three are open.
  EyeOpening eye;
  std::vector<EyeOpening> eyes;  // PAM4: lower, middle, upper eye, each at its own best offset
  int worst_eye = 0;             // index into eyes (0 for NRZ)
  // The width at thresholds centred in each eye's opening at the common sampling offset (an
  // adaptive slicer's), rather than at the nominal 1/6, 1/2, 5/6 (NRZ 1/2): ISI squeezes a PAM4
  // chain's outer levels towards the middle, and the nominal thresholds then sit off centre.
  // The span where every eye is open at its own centred threshold, UI, as eye.width_ui is at the
  // nominal thresholds; 0 when an eye is closed at the sampling offset.
  double width_centred_ui = 0.0;
  double sample_time_s = 0.0;    // best sampling instant after the start of a symbol's pulse
  // NRZ: max - min of the threshold crossings about their nominal edges; NaN when the number of
  // crossings differs from the number of data transitions, and for PAM4.
  double ddj_pp_s = std::numeric_limits<double>::quiet_NaN();
  int crossings = 0, transitions = 0;
  std::uint64_t symbols_overlaid = 0;  // symbols whose traces were overlaid
  // History ahead of the overlaid symbols. Patterns whose period fits the bound are computed as
  // their exact periodic steady state (circular superposition), which equals simulating and
  // discarding as many whole periods as the pulse response reaches back, at least one.
  std::uint64_t settling_symbols = 0;
  bool pattern_truncated = false;      // the period exceeds max_overlay_symbols
};

inline constexpr std::uint64_t max_overlay_symbols = std::uint64_t{1} << 15;

// The overlay of the signal's pattern (docs/physics.md (metrics)). Offsets are taken about the
// peak-distortion phase; the traces span +-1 UI around each sampling instant.
PrbsEye prbs_eye(const PulseResponse& pulse, const Signal& signal);

// Gaussian noise: BER = 0.5*erfc(Q/sqrt(2)) and its inverse (Q = 7.0345 at 1e-12).
double ber_from_q(double q);
double q_from_ber(double ber);  // ber in (0, 0.5); throws std::invalid_argument otherwise

// Opening at a bit-error ratio of one eye, as a fraction of the ideal eye: the upper level's
// lower ber-quantile minus the lower level's upper ber-quantile, where each level carries
// ISI = sum_{j != main} a_j c_j (a_j independent and uniform over the symbol levels; the
// distribution built by convolving per-cursor distributions on a voltage grid) plus Gaussian
// noise of rms sigma (in the same normalised units as the cursors). NRZ and PAM4 give the same
// model per eye, scaled by the level spacing. Grid: bins of max(ISI range/2048, (ISI range +
// 2*reach*sigma)/8192), reach = max(8, Q(ber) + 2); `resolution` receives the bin width (0 when
// there is neither ISI nor noise). Cursors below 1/16 bin are left out and their magnitudes
// subtracted from the opening (conservative). Throws std::invalid_argument for sigma < 0 or
// ber outside (0, 0.5).
double height_at_ber(std::span<const double> cursors, int main_index, Modulation modulation,
                     double sigma, double ber, double* resolution = nullptr);

struct StatisticalEye {
  double noise_rms_v = 0.0;      // at the output, as given
  double ideal_eye_v = 0.0;      // swing * |DC gain| (NRZ) or a third of it (PAM4)
  double q = 0.0;                // (prbs inner eye / 2) / noise at the best PRBS sampling instant
  double ber = 0.0;              // 0.5*erfc(q/sqrt(2)); PAM4: of the worst eye's slicer
  double height_at_ber = 0.0;    // fraction of the ideal eye, the best over sample-grid phases
  double height_at_ber_v = 0.0;
  double width_at_ber_ui = 0.0;  // contiguous phases around the best where height_at_ber > 0
  double sample_time_s = 0.0;    // of the best height_at_ber, after the start of the pulse
  double target_ber = 0.0;
};

// noise_rms_v: rms noise at the chain's output in volts (input-referred noise is the caller's to
// propagate); 0 gives q = inf, ber = 0 and the noise-free ISI opening. Throws
// std::invalid_argument for a negative noise, a non-positive swing or a target_ber outside
// (0, 0.5).
StatisticalEye statistical_eye(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal,
                               double noise_rms_v);
// Its q alone: (PRBS inner eye in volts / 2) / noise_rms_v (inf without noise), the cheap part a
// planner's search needs; statistical_eye's q and ber = ber_from_q(q) are this.
double eye_q(const PulseResponse& pulse, const PrbsEye& prbs, const Signal& signal, double noise_rms_v);

struct EyeEstimate {
  PulseResponse pulse;
  PeakDistortion pda;
  PrbsEye prbs;
};
EyeEstimate estimate_eye(const Cascade& chain, const Signal& signal,
                         int steps_per_ui = default_steps_per_ui);

}  // namespace peakplan
