// plain: a resistor load.
//
//            supply (AC ground)
//               |
//               Rd
//               |
//   gm*v_in <---+--- out (= drain) ---+--------+
//                                     |        |
//                          C = c_out + c_node  r_load
//
// H(s) = -gm * R / (1 + s*R*C), R = Rd || r_load: one real pole at 1/(R*C).
#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

int stamp_plain(const StageCircuit& s, NodalSystem& sys) {
  const int drain = sys.add_node("drain");
  sys.add_gm_drive(drain, s.gm);
  sys.add_resistor(drain, NodalSystem::ground, s.rd);
  sys.add_capacitor(drain, NodalSystem::ground, s.c_out + s.c_node);
  sys.add_resistor(drain, NodalSystem::ground, s.r_load);
  return drain;
}

void netlist_plain(const StageCircuit& s, ElementSink& w) {
  w.gm_cell("out");
  w.resistor("Rd", "out", "0", s.rd);
  w.capacitor("Cout", "out", "0", s.c_out);
}

double dc_resistance_plain(const StageCircuit& s) { return s.rd; }

}  // namespace

const LoadKindInfo plain_load{
    .kind = LoadKind::plain,
    .name = "plain",
    .summary = "resistor load Rd",
    .parameters = {},
    .stamp = stamp_plain,
    .drain_is_output = true,
    .netlist_comment = "plain: Rd from the drain (= out) to the supply",
    .netlist = netlist_plain,
    .dc_resistance = dc_resistance_plain,
};

}  // namespace peakplan
