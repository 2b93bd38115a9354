// A coil's self-capacitance ([technology] coil_c_per_nh): c_per_l * L to AC ground, half at each
// end of the coil, stamped by every kind through stamp_coil. Checked against circuits that
// already hold the same capacitors elsewhere, and against a closed form.
#include <doctest/doctest.h>

#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

constexpr double kCPerL = 20e-15 / 1e-9;  // 20 fF per nH, F/H (an invented value)

}  // namespace

TEST_CASE("coil capacitance: a series coil's halves are exactly c_out and c_node grown by c L / 2") {
  // Derived: the series coil runs drain -> out; its two halves sit on the drain (beside c_out)
  // and on out (beside c_node), so the circuit is the plain series stage with those grown.
  StageCircuit with = plain_stage(100.0, 40e-15);
  with.kind = LoadKind::series;
  with.c_out = 25e-15;
  with.l = 450e-12;
  with.r_l = 4.0;
  with.coil_c_per_l = kCPerL;
  StageCircuit moved = with;
  moved.coil_c_per_l = 0.0;
  const double half = 0.5 * kCPerL * with.l;  // 4.5 fF
  moved.c_out += half;
  moved.c_node += half;
  const auto a = build_stage_system(with), b = build_stage_system(moved);
  for (double f = 1e8; f < 1e12; f *= 1.37) CHECK(std::abs(a.transfer(jw(f)) / b.transfer(jw(f)) - 1.0) < 1e-10);
}

TEST_CASE("coil capacitance: a shunt coil puts c L / 2 on the node between Rd and L, none on the supply end") {
  // Derived by inspection: the coil Z_L = r_l + sL shunted by C_m = c L / 2 at the Rd-L node
  // (its supply end is AC ground), in series with Rd; the drain node adds C = c_out + c_node
  // and r_load: H = -gm / (1/(Rd + Z_L/(1 + s C_m Z_L)) + s C + 1/r_load).
  StageCircuit s = plain_stage(100.0, 50e-15);
  s.kind = LoadKind::shunt;
  s.c_out = 20e-15;
  s.r_load = 2000.0;
  s.l = 400e-12;
  s.r_l = 3.0;
  s.coil_c_per_l = kCPerL;
  const auto system = build_stage_system(s);
  const double c_m = 0.5 * kCPerL * s.l, c_drain = s.c_out + s.c_node;
  for (double f = 1e8; f < 1e12; f *= 1.37) {
    const auto p = jw(f);
    const auto z_l = s.r_l + p * s.l;
    const auto y = 1.0 / (s.rd + z_l / (1.0 + p * c_m * z_l)) + p * c_drain + 1.0 / s.r_load;
    CHECK(std::abs(system.transfer(p) / (-s.gm / y) - 1.0) < 1e-10);
  }
}

TEST_CASE("coil capacitance: a T-coil's halves are the tap's c_node and c_out grown, plus L2's end on rd_end") {
  // Derived: L1 (drain -> tap) puts c L1/2 on the drain and on the tap, L2 (tap -> rd_end) c L2/2
  // on the tap and on rd_end. The drain's share is c_out grown and the tap's is c_node grown;
  // rd_end has no capacitor of its own, so with l2 = 0 (a short whose capacitance is zero) the
  // circuit equals the plain T-coil with c_out + c L1/2 and c_node + c L1/2.
  StageCircuit t = plain_stage(100.0, 60e-15);
  t.kind = LoadKind::tcoil;
  t.c_out = 15e-15;
  t.l1 = 380e-12;
  t.l2 = 0.0;
  t.k = 0.0;
  t.cb = 6e-15;
  t.r_l1 = 5.0;
  t.coil_c_per_l = kCPerL;
  StageCircuit moved = t;
  moved.coil_c_per_l = 0.0;
  moved.c_out += 0.5 * kCPerL * t.l1;
  moved.c_node += 0.5 * kCPerL * t.l1;
  const auto a = build_stage_system(t), b = build_stage_system(moved);
  for (double f = 1e8; f < 1e12; f *= 1.37) CHECK(std::abs(a.transfer(jw(f)) / b.transfer(jw(f)) - 1.0) < 1e-10);
}
