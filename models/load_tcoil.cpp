// tcoil: a bridged T-coil between the drain and Rd, the output taken at the centre tap.
//
//                      Cb (bridging)
//            +---------||----------+
//            |                     |
//   drain ---+--L1--+--L2----------+--- rd_end --- Rd --- supply
//     |        (k)  |
//   c_out         out (centre tap) --+--------+
//                                   c_node   r_load
//
// L1 and L2 are coupled by k (positive k: the halves aid, end-to-end L1 + L2 + 2k*sqrt(L1*L2));
// each half may carry a series loss (r_l1, r_l2) and a winding capacitance c_w across it.
// Symmetric, lossless, c_out = 0, load C at the tap, R = Rd: with 2L(1+k) = R^2*C and
// Cb = C(1-k)/(4(1+k)) the drain sees R at every frequency and
// v_out/(-gm*R) = 1 / (1 + s*R*C/2 + s^2*(1-k)*R^2*C^2/(4(1+k)))   (C. R. Battjes).
// A coil self-capacitance ([technology] coil_c_per_nh, stamp_coil) puts c_per_l*L1/2 on the drain,
// c_per_l*(L1 + L2)/2 on the tap and c_per_l*L2/2 on rd_end.
#include <array>
#include <cmath>

#include "models/load_kinds.hpp"
#include "models/peaking_design.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{.key = "l1", .dimension = Dimension::inductance, .description = "half-coil from the drain to the centre tap",
                  .role = ParameterRole::element, .field = &StageCircuit::l1, .label = "L1", .plan_lo = 1e-12,
                  .plan_hi = 2e-9, .technology = TechnologyBound::inductance},
    LoadParameter{.key = "l2", .dimension = Dimension::inductance, .description = "half-coil from the centre tap to Rd",
                  .role = ParameterRole::element, .field = &StageCircuit::l2, .label = "L2", .plan_lo = 1e-12,
                  .plan_hi = 2e-9, .technology = TechnologyBound::inductance},
    LoadParameter{.key = "k", .dimension = Dimension::dimensionless,
                  .description = "coupling factor between the halves, in (-1, 1)", .role = ParameterRole::element,
                  .field = &StageCircuit::k, .label = "k", .plan_lo = 0.0, .plan_hi = 0.9, .linear_scale = true,
                  .technology = TechnologyBound::coupling},
    LoadParameter{.key = "cb", .dimension = Dimension::capacitance,
                  .description = "bridging capacitor from the drain to the Rd end", .role = ParameterRole::element,
                  .field = &StageCircuit::cb, .label = "Cb", .plan_lo = 0.05e-15, .plan_hi = 200e-15,
                  .technology = TechnologyBound::bridge_capacitance},
    LoadParameter{.key = "c_w", .dimension = Dimension::capacitance, .description = "winding capacitance across each half",
                  .role = ParameterRole::parasitic, .field = &StageCircuit::c_w, .label = "Cw", .omit_when_zero = true},
    LoadParameter{.key = "r_l", .dimension = Dimension::resistance,
                  .description = "series resistance of each half (sets r_l1, r_l2)", .role = ParameterRole::alias,
                  .field = &StageCircuit::r_l1},
    LoadParameter{.key = "r_l1", .dimension = Dimension::resistance, .description = "series resistance of l1",
                  .role = ParameterRole::loss, .field = &StageCircuit::r_l1, .fallback_key = "r_l", .loss_of = "l1"},
    LoadParameter{.key = "r_l2", .dimension = Dimension::resistance, .description = "series resistance of l2",
                  .role = ParameterRole::loss, .field = &StageCircuit::r_l2, .fallback_key = "r_l", .loss_of = "l2"},
    LoadParameter{.key = "zeta", .dimension = Dimension::dimensionless,
                  .description = "damping ratio of the ideal design; sets l1 = l2, k and cb", .role = ParameterRole::design},
    LoadParameter{.key = "response", .dimension = Dimension::dimensionless,
                  .description = "named ideal design: butterworth, bessel or critical", .role = ParameterRole::design},
};

int stamp_tcoil(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int tap = sys.add_node("tap");
  const int rd_end = sys.add_node("rd_end");
  sys.add_gm_drive(drain, s.gm);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out);
  const int b1 = stamp_coil(sys, drain, tap, s.l1, s.r_l1, s.coil_c_per_l);
  const int b2 = stamp_coil(sys, tap, rd_end, s.l2, s.r_l2, s.coil_c_per_l);
  sys.add_mutual(b1, b2, s.k * std::sqrt(s.l1 * s.l2));
  sys.add_capacitor(drain, rd_end, s.cb);
  sys.add_capacitor(drain, tap, s.c_w);
  sys.add_capacitor(tap, rd_end, s.c_w);
  sys.add_resistor(rd_end, NodalSystem::ground, s.rd);
  sys.add_capacitor(tap, NodalSystem::ground, s.c_node);
  sys.add_resistor(tap, NodalSystem::ground, s.r_load);
  return tap;
}

void netlist_tcoil(const StageCircuit& s, ElementSink& w) {
  w.gm_cell("drain");
  w.capacitor("Cout", "drain", "0", s.c_out);
  // Both halves run drain -> tap -> rd_end, first node = dotted end, so K's sign is the
  // models' sign: positive k adds 2k*sqrt(L1*L2) to the end-to-end inductance.
  const bool l1 = netlist_coil(w, "L1", "drain", "out", s.l1, s.r_l1, s.coil_c_per_l);
  const bool l2 = netlist_coil(w, "L2", "out", "rd_end", s.l2, s.r_l2, s.coil_c_per_l);
  if (l1 && l2 && s.k != 0.0) w.coupling("K12", "L1", "L2", s.k);
  w.capacitor("Cb", "drain", "rd_end", s.cb);
  w.capacitor("Cw1", "drain", "out", s.c_w);
  w.capacitor("Cw2", "out", "rd_end", s.c_w);
  w.resistor("Rd", "rd_end", "0", s.rd);
}

double dc_resistance_tcoil(const StageCircuit& s) { return s.rd + s.r_l1 + s.r_l2; }

// One error naming every missing key, not one per key.
std::string missing_tcoil(const KeyGiven& given, bool designed) {
  if (designed) return {};
  std::string missing;
  for (const auto* key : {"l1", "l2", "k"})
    if (!given(key)) missing += (missing.empty() ? "" : ", ") + std::string(key);
  if (missing.empty()) return {};
  return "a tcoil stage needs l1, l2 and k (and usually cb), or a design: zeta = 0.707 or response = "
         "\"butterworth\"; missing " + missing;
}

// The ideal design loads the centre tap only; c_out gives its own pole.
double design_capacitance_tcoil(const StageCircuit& s) { return s.c_node; }

void design_tcoil(StageCircuit& s, double zeta) {
  const auto d = tcoil_for_zeta(zeta, s.rd, s.c_node);
  s.l1 = s.l2 = d.l_half;
  s.k = d.k;
  s.cb = d.cb;
}

Rational ideal_tcoil(const StageCircuit& s) { return tcoil_ideal_response(s.gm, s.rd, s.c_node, s.k, s.c_out); }

}  // namespace

const LoadKindInfo tcoil_load{
    .kind = LoadKind::tcoil,
    .name = "tcoil",
    .summary = "bridged T-coil, output at the centre tap",
    .parameters = kParameters,
    .stamp = stamp_tcoil,
    .netlist_comment = "tcoil: L1 drain-out, L2 out-rd_end, Rd to the supply, Cb bridging",
    .netlist = netlist_tcoil,
    .dc_resistance = dc_resistance_tcoil,
    .missing = missing_tcoil,
    .design = DesignFactor::zeta,
    .design_lo = 0.52,
    .design_hi = 1.3,
    .design_seed = 0.78,  // between Butterworth and Bessel
    .apply_design = design_tcoil,
    .design_capacitance = design_capacitance_tcoil,
    .ideal_response = ideal_tcoil,
};

}  // namespace peakplan
