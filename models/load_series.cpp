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
#include <array>

#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{"l", Dimension::inductance, "series inductor from the drain to the output"},
    LoadParameter{"r_l", Dimension::resistance, "series resistance of the inductor"},
    LoadParameter{"m", Dimension::dimensionless,
                  "design factor L/(Rd^2 C), C = c_out + output-node capacitance; sets l"},
};

int stamp_series(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int out = sys.add_node("out");
  sys.add_gm_drive(drain, s.gm);
  sys.add_resistor(drain, NodalSystem::ground, s.rd);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out);
  sys.add_inductor(drain, out, s.l, s.r_l);
  sys.add_capacitor(out, NodalSystem::ground, s.c_node);
  sys.add_resistor(out, NodalSystem::ground, s.r_load);
  return out;
}

}  // namespace

const LoadKindInfo series_load{LoadKind::series, "series",
                               "Rd on the drain, series inductor to the output", kParameters,
                               stamp_series};

}  // namespace peakplan
