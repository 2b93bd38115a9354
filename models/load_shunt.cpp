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
#include <array>

#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{"l", Dimension::inductance, "shunt inductor in series with Rd"},
    LoadParameter{"r_l", Dimension::resistance, "series resistance of the inductor"},
    LoadParameter{"m", Dimension::dimensionless,
                  "design factor L/(Rd^2 C), C the drain node's total capacitance; sets l"},
};

int stamp_shunt(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int mid = sys.add_node("rd_l");  // between Rd and L; has no capacitance
  sys.add_gm_drive(drain, s.gm);
  sys.add_resistor(drain, mid, s.rd);
  sys.add_inductor(mid, NodalSystem::ground, s.l, s.r_l);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out + s.c_node);
  sys.add_resistor(drain, NodalSystem::ground, s.r_load);
  return drain;
}

}  // namespace

const LoadKindInfo shunt_load{LoadKind::shunt, "shunt", "Rd in series with a shunt inductor",
                              kParameters, stamp_shunt, /*drain_is_output=*/true};

}  // namespace peakplan
