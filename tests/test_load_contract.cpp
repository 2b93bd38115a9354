// One contract checked over every load kind: DC value, roll-off, the zero-inductance limit
// equals the plain stage, the rational form equals the nodal solve, and the nodal solve
// equals a hand-derived closed form (plain and shunt here; series and tcoil in their files).
#include <doctest/doctest.h>

#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

// Every kind with element values that exercise its non-idealities.
StageCircuit example(LoadKind kind) {
  StageCircuit s = plain_stage(120.0, 60e-15);
  s.kind = kind;
  s.c_out = 20e-15;
  s.r_load = 2000.0;
  switch (kind) {
    case LoadKind::plain: break;
    case LoadKind::shunt:
    case LoadKind::series:
      s.l = 400e-12;
      s.r_l = 3.0;
      break;
    case LoadKind::tcoil:
      s.l1 = 300e-12;
      s.l2 = 250e-12;
      s.k = 0.4;
      s.cb = 8e-15;
      s.c_w = 2e-15;
      s.r_l1 = 2.0;
      s.r_l2 = 1.5;
      break;
  }
  return s;
}

// DC transimpedance from the gm current to the output: every inductor is its loss only,
// every capacitor open (derived by inspection of each schematic).
double dc_resistance(const StageCircuit& s) {
  auto parallel = [](double a, double b) { return a * b / (a + b); };
  switch (s.kind) {
    case LoadKind::plain: return parallel(s.rd, s.r_load);
    case LoadKind::shunt: return parallel(s.rd + s.r_l, s.r_load);
    // r_l and r_load divide the drain voltage: Rd r_load / (Rd + r_l + r_load).
    case LoadKind::series: return s.rd * s.r_load / (s.rd + s.r_l + s.r_load);
    // l1 carries the whole current to the tap, which sees r_load || (r_l2 + Rd).
    case LoadKind::tcoil: return parallel(s.rd + s.r_l2, s.r_load);
  }
  return 0.0;
}

}  // namespace

TEST_CASE("every kind: DC gain, roll-off, zero-inductance limit and rational = nodal") {
  for (const auto& info : all_load_kinds()) {
    CAPTURE(info.name);
    const auto s = example(info.kind);
    const auto system = build_stage_system(s);
    const auto rational = system.rational();

    // DC: the gm current flows through the load's DC path; the stage inverts.
    CHECK(rational.dc_value() == doctest::Approx(-s.gm * dc_resistance(s)).epsilon(1e-9));
    CHECK(system.transfer({0.0, 0.0}).real() == doctest::Approx(-s.gm * dc_resistance(s)).epsilon(1e-9));

    // Roll-off: capacitance to ground at the output makes |H| fall at least as 1/f far out.
    const double f_far = 1e14;
    CHECK(std::abs(system.transfer(jw(10 * f_far))) < 0.2 * std::abs(system.transfer(jw(f_far))));

    // The rational form is the nodal solve, to rounding.
    for (double f = 1e7; f < 1e13; f *= 1.7) {
      const auto exact = system.transfer(jw(f));
      CHECK(std::abs(rational.evaluate(jw(f)) / exact - 1.0) < 1e-9);
      const auto [h, dh] = system.transfer_and_derivative(jw(f));
      CHECK(std::abs(rational.log_derivative(jw(f)) - dh / h) < 1e-9 * std::abs(dh / h) + 1e-18);
    }

    // Zero inductance: every kind collapses to the plain stage with all its capacitance on one
    // node (the T-coil's Cb and c_w are then shorted) and its losses still in series.
    StageCircuit bare = s;
    bare.l = bare.l1 = bare.l2 = 0.0;
    bare.r_l = bare.r_l1 = bare.r_l2 = 0.0;
    StageCircuit flat = plain_stage(s.rd, s.c_out + s.c_node);
    flat.r_load = s.r_load;
    const auto a = build_stage_system(bare);
    const auto b = build_stage_system(flat);
    for (double f = 1e8; f < 1e12; f *= 2.3) CHECK(std::abs(a.transfer(jw(f)) / b.transfer(jw(f)) - 1.0) < 1e-10);
  }
}

TEST_CASE("plain: the nodal solve equals -gm R/(1 + s R C)") {
  auto s = plain_stage();
  s.c_out = 25e-15;
  s.r_load = 400.0;
  const double r = s.rd * s.r_load / (s.rd + s.r_load);
  const auto system = build_stage_system(s);
  for (double f = 1e8; f < 1e12; f *= 1.33)
    CHECK(std::abs(system.transfer(jw(f)) / (-s.gm * r / (1.0 + jw(f) * r * (s.c_node + s.c_out))) - 1.0) < 1e-12);
}

TEST_CASE("load contract: the output node's capacitance includes c_out exactly where the drain is the output") {
  // DESIGN.md section 2: plain and shunt take their output at the drain, series and tcoil after
  // a coil, so c_out joins the output node only for the first two (derived from the schematics).
  for (const auto& info : peakplan::all_load_kinds()) {
    peakplan::StageCircuit c;
    c.kind = info.kind;
    c.c_out = 7e-15;
    c.c_node = 30e-15;
    const bool at_drain = info.kind == peakplan::LoadKind::plain || info.kind == peakplan::LoadKind::shunt;
    INFO("kind: " << info.name);
    CHECK(peakplan::output_node_capacitance(c) == doctest::Approx(at_drain ? 37e-15 : 30e-15).epsilon(1e-15));
  }
}
