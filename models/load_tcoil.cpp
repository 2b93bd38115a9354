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
#include <array>
#include <cmath>

#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

constexpr std::array kParameters{
    LoadParameter{"l1", Dimension::inductance, "half-coil from the drain to the centre tap"},
    LoadParameter{"l2", Dimension::inductance, "half-coil from the centre tap to Rd"},
    LoadParameter{"k", Dimension::dimensionless, "coupling factor between the halves, in (-1, 1)"},
    LoadParameter{"cb", Dimension::capacitance, "bridging capacitor from the drain to the Rd end"},
    LoadParameter{"c_w", Dimension::capacitance, "winding capacitance across each half"},
    LoadParameter{"r_l", Dimension::resistance, "series resistance of each half (sets r_l1, r_l2)"},
    LoadParameter{"r_l1", Dimension::resistance, "series resistance of l1"},
    LoadParameter{"r_l2", Dimension::resistance, "series resistance of l2"},
    LoadParameter{"zeta", Dimension::dimensionless,
                  "damping ratio of the ideal design; sets l1 = l2, k and cb"},
    LoadParameter{"response", Dimension::dimensionless,
                  "named ideal design: butterworth, bessel or critical"},
};

int stamp_tcoil(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  const int tap = sys.add_node("tap");
  const int rd_end = sys.add_node("rd_end");
  sys.add_gm_drive(drain, s.gm);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out);
  const int b1 = sys.add_inductor(drain, tap, s.l1, s.r_l1);
  const int b2 = sys.add_inductor(tap, rd_end, s.l2, s.r_l2);
  sys.add_mutual(b1, b2, s.k * std::sqrt(s.l1 * s.l2));
  sys.add_capacitor(drain, rd_end, s.cb);
  sys.add_capacitor(drain, tap, s.c_w);
  sys.add_capacitor(tap, rd_end, s.c_w);
  sys.add_resistor(rd_end, NodalSystem::ground, s.rd);
  sys.add_capacitor(tap, NodalSystem::ground, s.c_node);
  sys.add_resistor(tap, NodalSystem::ground, s.r_load);
  return tap;
}

}  // namespace

const LoadKindInfo tcoil_load{LoadKind::tcoil, "tcoil",
                              "bridged T-coil, output at the centre tap", kParameters,
                              stamp_tcoil};

}  // namespace peakplan
