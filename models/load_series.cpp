// series: Rd on the drain node, an inductor L (loss r_l) from the drain to the output node.
//
//            supply
//               |
//               Rd
//               |
//   gm*v_in <---+--- drain ---L (+ r_l)--- out ---+--------+
//               |                                 |        |
//             c_out                             c_node   r_load
//
// With r_l = 0 and no r_load, C = c_out + c_node, x = c_node/C, tau = Rd*C, m = L/(Rd^2*C):
// v_out/(-gm*Rd) = 1 / (1 + tau*s + m*x*tau^2*s^2 + m*x*(1-x)*tau^3*s^3).
// A coil self-capacitance ([technology] coil_c_per_nh, stamp_coil) puts c_per_l*L/2 on the drain
// and on out.
#include <array>

#include "models/load_kinds.hpp"
#include "models/peaking_design.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{.key = "l", .dimension = Dimension::inductance,
                  .description = "series inductor from the drain to the output", .role = ParameterRole::element,
                  .field = &StageCircuit::l, .label = "L", .plan_lo = 1e-12, .plan_hi = 2e-9,
                  .technology = TechnologyBound::inductance},
    LoadParameter{.key = "r_l", .dimension = Dimension::resistance, .description = "series resistance of the inductor",
                  .role = ParameterRole::loss, .field = &StageCircuit::r_l, .loss_of = "l"},
    LoadParameter{.key = "m", .dimension = Dimension::dimensionless,
                  .description = "design factor L/(Rd^2 C), C = c_out + output-node capacitance; sets l",
                  .role = ParameterRole::design},
};

int stamp_series(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int out = sys.add_node("out");
  sys.add_gm_drive(drain, s.gm);
  sys.add_resistor(drain, NodalSystem::ground, s.rd);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out);
  stamp_coil(sys, drain, out, s.l, s.r_l, s.coil_c_per_l);
  sys.add_capacitor(out, NodalSystem::ground, s.c_node);
  sys.add_resistor(out, NodalSystem::ground, s.r_load);
  return out;
}

void netlist_series(const StageCircuit& s, ElementSink& w) {
  w.gm_cell("drain");
  w.resistor("Rd", "drain", "0", s.rd);
  w.capacitor("Cout", "drain", "0", s.c_out);
  netlist_coil(w, "L", "drain", "out", s.l, s.r_l, s.coil_c_per_l);
}

double dc_resistance_series(const StageCircuit& s) { return s.rd; }

std::string missing_series(const KeyGiven& given, bool designed) {
  if (designed || given("l")) return {};
  return "a series stage needs l (an inductance) or m (its design factor L/(Rd^2 C))";
}

double design_capacitance_series(const StageCircuit& s) { return s.c_out + s.c_node; }
void design_series(StageCircuit& s, double m) { s.l = inductance_for_m(m, s.rd, design_capacitance_series(s)); }

}  // namespace

const LoadKindInfo series_load{
    .kind = LoadKind::series,
    .name = "series",
    .summary = "Rd on the drain, series inductor to the output",
    .parameters = kParameters,
    .stamp = stamp_series,
    .netlist_comment = "series: Rd on the drain, L from the drain to out",
    .netlist = netlist_series,
    .dc_resistance = dc_resistance_series,
    .missing = missing_series,
    .design = DesignFactor::m,
    .design_lo = 0.05,
    .design_hi = 1.5,
    .design_seed = 0.5,
    .apply_design = design_series,
    .design_capacitance = design_capacitance_series,
};

}  // namespace peakplan
