// shunt: Rd in series with an inductor L (loss r_l), from the drain to the supply.
//
//            supply
//               |
//               L  (+ r_l)
//               |
//               Rd
//               |
//   gm*v_in <---+--- out (= drain) ---+--------+
//                                     |        |
//                          C = c_out + c_node  r_load
//
// With r_l = 0 and no r_load, Z/R = (1 + m*tau*s) / (1 + tau*s + m*tau^2*s^2), tau = Rd*C,
// m = L/(Rd^2*C) (the convention of Shekhar, Walling and Allstot, JSSC 2006).
// A coil self-capacitance ([technology] coil_c_per_nh, stamp_coil) puts c_per_l*L/2 on rd_l; its
// other end is the supply.
#include <array>
#include <cmath>

#include "models/load_kinds.hpp"
#include "models/peaking_design.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{.key = "l", .dimension = Dimension::inductance, .description = "shunt inductor in series with Rd",
                  .role = ParameterRole::element, .field = &StageCircuit::l, .label = "L",
                  .plan_lo = 1e-12, .plan_hi = 2e-9, .technology = TechnologyBound::inductance},
    LoadParameter{.key = "r_l", .dimension = Dimension::resistance, .description = "series resistance of the inductor",
                  .role = ParameterRole::loss, .field = &StageCircuit::r_l, .loss_of = "l"},
    LoadParameter{.key = "m", .dimension = Dimension::dimensionless,
                  .description = "design factor L/(Rd^2 C), C the drain node's total capacitance; sets l",
                  .role = ParameterRole::design},
};

int stamp_shunt(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int mid = sys.add_node("rd_l");  // between Rd and L; has no capacitance
  sys.add_gm_drive(drain, s.gm);
  sys.add_resistor(drain, mid, s.rd);
  stamp_coil(sys, mid, NodalSystem::ground, s.l, s.r_l, s.coil_c_per_l);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out + s.c_node);
  sys.add_resistor(drain, NodalSystem::ground, s.r_load);
  return drain;
}

void netlist_shunt(const StageCircuit& s, ElementSink& w) {
  w.gm_cell("out");
  w.resistor("Rd", "out", "rd_l", s.rd);
  netlist_coil(w, "L", "rd_l", "0", s.l, s.r_l, s.coil_c_per_l);
  w.capacitor("Cout", "out", "0", s.c_out);
}

double dc_resistance_shunt(const StageCircuit& s) { return s.rd + s.r_l; }

std::string missing_shunt(const KeyGiven& given, bool designed) {
  if (designed || given("l")) return {};
  return "a shunt stage needs l (an inductance) or m (its design factor L/(Rd^2 C))";
}

double design_capacitance_shunt(const StageCircuit& s) { return s.c_out + s.c_node; }
void design_shunt(StageCircuit& s, double m) { s.l = inductance_for_m(m, s.rd, design_capacitance_shunt(s)); }

}  // namespace

const LoadKindInfo shunt_load{
    .kind = LoadKind::shunt,
    .name = "shunt",
    .summary = "Rd in series with a shunt inductor",
    .parameters = kParameters,
    .stamp = stamp_shunt,
    .drain_is_output = true,
    .netlist_comment = "shunt: Rd in series with L from the drain (= out) to the supply",
    .netlist = netlist_shunt,
    .dc_resistance = dc_resistance_shunt,
    .missing = missing_shunt,
    .design = DesignFactor::m,
    .design_lo = 0.05,
    .design_hi = 1.2,
    .design_seed = 0.41421356237309503,  // sqrt(2) - 1: maximally flat (Shekhar et al.)
    .apply_design = design_shunt,
    .design_capacitance = design_capacitance_shunt,
};

}  // namespace peakplan
