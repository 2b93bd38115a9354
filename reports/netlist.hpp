// A SPICE netlist of a chain as written, for sign-off in an outside simulator (ngspice).
//
// Layout of the netlist:
//   - title line "peakplan: <chain name>", then one .subckt per stage, ports (in out), the
//     supply as AC ground (node 0). Inside: the gm cell as a G element drawing gm*v(in) out of
//     the drain (the stage inverts), the load of docs/physics.md (circuits) element by element exactly
//     as models/load_<kind>.cpp stamps it, the stage's own c_in from its input to ground, and
//     its c_load and r_load on its output node. Summed over the stages a node joins, the node
//     carries c_load + the c_in of every stage it feeds: the model's c_node.
//   - inductor losses as separate resistors (SPICE inductors have no series resistance); a
//     T-coil's halves coupled by K L1 L2 k, both coils written from their drain-side end, so
//     SPICE's dots sit on the drain side of each half and positive k makes the halves aid.
//   - the source: Vin with "DC 0 AC 1 PULSE(0 1 ...)" behind Rsource, or on the input directly
//     when r_source is 0.
//   - a stage with a tail current (docs/physics.md (large signals)): its gm cell is a behavioural current
//     source B with the models' pair curve (models/pair_curve.hpp) of x = gm*v(in)/I_T:
//     I = I_T/2*tanh(2x) (bipolar) or I = |x| < 1/sqrt2 ? I_T*x*sqrt(1 - x^2) : I_T/2*sgn(x)
//     (MOS); its slope at v(in) = 0 is gm, so .ac is the small-signal response.
//   - .ac and .tran cards matched to the main output's bandwidth, .print lines for the main
//     output (AC magnitude in dB and phase, and the step), and .end.
// Stage ids may hold any bytes: nodes and subcircuits get safe names (index + sanitised id)
// and the original id appears only in comments, escaped so that it cannot end a line.
//
// With batch_control, a .control block runs dc, ac and tran and writes, with wrdata, one file
// each (columns: the scale, then every output node of chain.outputs() in that order; ac as
// real and imaginary parts):
//   <data_prefix>.dc.txt    v(out) for Vin = 1 V (the signed DC gain)
//   <data_prefix>.ac.txt    frequency, re, im, ...
//   <data_prefix>.tran.txt  time, v(out) for the step
// then quits, in place of the .print lines. The designer-facing default has no .control block.
#pragma once

#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "models/chain.hpp"
#include "models/eye.hpp"

namespace peakplan {

struct NetlistOptions {
  static constexpr double unset = std::numeric_limits<double>::quiet_NaN();

  // The main output's bandwidth if the caller already has it (from analyze_chain); unset: the
  // writer asks the models for it. Only used to place the analyses.
  double bandwidth_hz = unset;
  int ac_points_per_decade = 100;
  double ac_start_hz = unset;  // default: bandwidth / 1000
  double ac_stop_hz = unset;   // default: bandwidth * 100
  double tran_step_s = unset;  // default: the step the models use for the chain's step response
  double tran_stop_s = unset;  // default: the duration the models use (delay and slowest decay)
  double step_rise_s = unset;  // PULSE rise time; default: tran step / 10, so the step is ideal
                               // to within a shift of half of it

  // The .tran source as a sequence of held symbols (half-circuit volts, one per UI, edges of
  // step_rise_s as PWL ramps centred on the nominal edge times) instead of the 0 -> 1 V step:
  // the drive for a chain with limited stages, whose response depends on the amplitude. The
  // .tran card then covers every symbol unless tran_stop_s is given.
  struct SymbolDrive {
    double ui_s = 0.0;
    std::vector<double> levels_v;
  };
  std::optional<SymbolDrive> drive;

  // The models' input edge ([signal] input_rise): a first-order rise, tau = input_rise / ln 4
  // (models/eye.hpp). When > 0 the .tran source (the step or the symbols) is that edge, written
  // as a PWL sampled at tau/8 (a linear interpolation error below 0.2 % of each step) until it
  // has settled to e^-10, so ngspice sees the waveform the eye model sees; .ac is unchanged.
  double edge_tau_s = 0.0;
  // One line for the header saying what the .tran source is ("PRBS7 NRZ at 56 Gb/s ..."), when
  // the caller built `drive` from a [signal].
  std::string drive_description;

  bool batch_control = false;
  std::string data_prefix = "peakplan";  // wrdata path prefix; letters, digits and _ . / + -
  // Tight tolerances for a reference run (reltol, vntol, abstol, chgtol, trap integration).
  bool precise = false;
};

// Throws std::invalid_argument for an unusable data_prefix or analysis range, and
// std::logic_error when a stage's circuit.c_node is not c_load + the c_in of the stages it
// feeds (fill_node_capacitances was not applied), because the netlist could not then match
// what the models analysed.
std::string write_spice_netlist(const Chain& chain, const NetlistOptions& options = {});

// The .tran drive of a [signal]: its PRBS as held symbols in half-circuit volts (the swing is
// differential peak to peak, so the half circuit swings +-swing/4: NRZ -swing/4 and +swing/4,
// PAM4 four levels evenly between them), one pattern period of symbols (PAM4: 2^n - 1 symbols
// from two periods of bits) but at most max_symbols, with a one-line description; the edge of
// input_rise in edge_tau_s. Throws std::invalid_argument for a signal without a positive
// bit rate or swing.
NetlistOptions prbs_netlist_drive(const Signal& signal, size_t max_symbols = 2047);
// Only the edge: edge_tau_s = input_rise / ln 4 (0 without an input_rise).
double netlist_edge_tau(const Signal& signal);

// SPICE-safe name: lower case letters, digits and '_' only (SPICE is case-insensitive).
std::string spice_safe_name(std::string_view text);
// A value in SPICE engineering notation: 4.5e-14 -> "45f", 1e6 -> "1meg", 120 -> "120".
// Element values use 10 significant digits, so rounding (5e-11) is far below any tolerance the
// netlist is checked to; analysis cards use 4.
std::string spice_number(double value, int digits = 10);
// Text for a comment: printable ASCII kept, '\' and every other byte escaped as \\ and \xHH.
std::string comment_safe(std::string_view text);

// The top-level SPICE node names the netlist gives each stage's output, by stage index.
std::string stage_output_node(const Chain& chain, int stage);

}  // namespace peakplan
