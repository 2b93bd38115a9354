// tia: a shunt-feedback transimpedance stage, the first stage of an optical receiver.
//
//                 +---------- Rf ----------+
//                 +---------- Cf ----------+
//                 |                        |
//   i_pd --> in --+-- [cell 1] -- x1 -- ... -- [cell n] -- out --+---------+
//                 |                                              |         |
//         C_T = c_pd + c_in                           c_out + c_node    r_load
//
// The core is `core_stages` identical gm-Rd cells, each drawing gm*v(its input) out of its
// output node, which carries Rd and c_out to AC ground and, inside the core, the next cell's
// c_in. The core inverts as a whole: with an even count a differential core crosses one pair of
// wires, so its last cell pushes its current in instead. The photodiode (capacitance c_pd, dark
// current i_dark) sits on the input node with the first cell's c_in; the stimulus is 1 A into
// that node, so the transfer is the transimpedance v_out / i_pd in ohms. The stage is bilateral
// (Rf loads its own output), which is why it is one nodal circuit rather than a gm cell and a load.
//
// One cell, Cf = 0, G_f = 1/Rf, G_o = 1/Rd (r_load and c_node lumped with it), C_o at the output:
//   Z_T(s) = (G_f - gm) / (s^2 C_T C_o + s (C_T (G_f + G_o) + G_f C_o) + G_f (G_o + gm)),
// which for an ideal voltage amplifier of gain A0 = gm/G_o and pole 1/tau_A, tau_A = C_o/G_o, is
// the textbook second-order TIA (Saeckinger, "Analysis and Design of Transimpedance Amplifiers
// for Optical Receivers", 2017, ch. 6; from memory):
//   R_T = Rf A0/(A0 + 1), w0^2 = (A0 + 1)/(Rf C_T tau_A), Q = sqrt((A0 + 1) Rf C_T tau_A)/(Rf C_T + tau_A).
#include <algorithm>
#include <array>
#include <cmath>
#include <string>

#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{.key = "rf", .dimension = Dimension::resistance, .description = "feedback resistor from the output to the input node",
                  .role = ParameterRole::element, .field = &StageCircuit::rf, .label = "Rf",
                  .plan_lo = 50.0, .plan_hi = 20e3, .positive = true},
    LoadParameter{.key = "cf", .dimension = Dimension::capacitance, .description = "feedback capacitor across Rf (0 = none)",
                  .role = ParameterRole::element, .field = &StageCircuit::cf, .label = "Cf",
                  .plan_lo = 0.1e-15, .plan_hi = 50e-15, .omit_when_zero = true},
    LoadParameter{.key = "core_stages", .dimension = Dimension::dimensionless,
                  .description = "identical gm-Rd cells in the core, 1 .. 5 (the core inverts as a whole)",
                  .role = ParameterRole::structure, .field = &StageCircuit::core_stages, .fallback = 1.0,
                  .label = "cells"},
};

int cell_count(const StageCircuit& s) { return std::clamp(static_cast<int>(std::lround(s.core_stages)), 1, 5); }
std::string cell_node(int j, int n) { return j == n ? "out" : "x" + std::to_string(j); }

int stamp_tia(const StageCircuit& s, NodalSystem& sys) {
  const int n = cell_count(s);
  const int in = sys.add_node("in");
  sys.add_current_drive(in);
  sys.add_capacitor(in, NodalSystem::ground, s.c_cell_in + s.c_pd);
  sys.add_shot_noise(in, s.i_dark);
  int previous = in;
  for (int j = 1; j <= n; ++j) {
    const bool last = j == n;
    const int node = sys.add_node(cell_node(j, n));
    const bool crossed = last && n % 2 == 0;  // an even core crosses its last pair of wires
    sys.add_transconductance(previous, node, crossed ? -s.gm : s.gm);
    sys.add_resistor(node, NodalSystem::ground, s.rd);
    // Inside the core a node carries the next cell's input; the output carries the next stage's.
    sys.add_capacitor(node, NodalSystem::ground, s.c_out + (last ? s.c_node : s.c_cell_in));
    previous = node;
  }
  sys.add_resistor(previous, NodalSystem::ground, s.r_load);
  sys.add_resistor(previous, in, s.rf);
  sys.add_capacitor(previous, in, s.cf);
  return previous;
}

void netlist_tia(const StageCircuit& s, ElementSink& w) {
  const int n = cell_count(s);
  for (int j = 1; j <= n; ++j) {
    const std::string node = cell_node(j, n), tag = std::to_string(j);
    if (j == 1)
      w.gm_cell(node);
    else
      w.inner_gm_cell("cell" + tag, cell_node(j - 1, n), node, j == n && n % 2 == 0 ? -s.gm : s.gm);
    w.resistor(j == 1 ? "Rd" : "Rd" + tag, node, "0", s.rd);
    w.capacitor(j == 1 ? "Cout" : "Cout" + tag, node, "0", s.c_out);
    if (j < n) w.capacitor("Cin" + std::to_string(j + 1), node, "0", s.c_cell_in);
  }
  w.resistor("Rf", "out", "in", s.rf);
  w.capacitor("Cf", "out", "in", s.cf);
}

// The input node's DC resistance to ground with the core working (capacitors open): with the
// core's DC gain g_eff = (current drawn out of `out`) / v(in) and G_L = 1/Rd + 1/r_load at the
// output, KCL at out gives v_out = v_in (G_f - g_eff)/(G_f + G_L), and then i = G_f (v_in - v_out).
double dc_resistance_tia(const StageCircuit& s) {
  const int n = cell_count(s);
  const double internal_gain = -s.gm * s.rd;  // each inner cell: v_next = -gm Rd v
  double g_eff = s.gm * std::pow(internal_gain, n - 1);
  if (n % 2 == 0) g_eff = -g_eff;
  const double g_f = s.rf > 0.0 ? 1.0 / s.rf : 0.0;
  const double g_l = 1.0 / s.rd + (std::isfinite(s.r_load) && s.r_load > 0.0 ? 1.0 / s.r_load : 0.0);
  const double ratio = (g_f - g_eff) / (g_f + g_l);
  return 1.0 / (g_f * (1.0 - ratio));
}

std::string missing_tia(const KeyGiven& given, bool /*designed*/) {
  if (given("rf")) return {};
  return "a tia stage needs rf (its feedback resistor, e.g. rf = \"1 kohm\")";
}

}  // namespace

const LoadKindInfo tia_load{
    .kind = LoadKind::tia,
    .name = "tia",
    .summary = "shunt-feedback transimpedance stage: a gm-Rd core with Rf (and Cf) from the output to the input",
    .parameters = kParameters,
    .stamp = stamp_tia,
    .drain_is_output = true,  // out is the last cell's drain
    .current_input = true,
    .netlist_comment = "tia: core of gm-Rd cells from in to out, Rf || Cf from out back to in",
    .netlist = netlist_tia,
    .dc_resistance = dc_resistance_tia,
    .missing = missing_tia,
};

}  // namespace peakplan
