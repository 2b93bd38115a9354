// One contract checked over every load kind: DC value, roll-off, the zero-inductance limit
// equals the plain stage, the rational form equals the nodal solve, and the nodal solve
// equals a hand-derived closed form (plain and shunt here; series and tcoil in their files).
#include <doctest/doctest.h>

#include <algorithm>
#include <string>
#include <utility>
#include <vector>

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
    case LoadKind::tia:
      s.rf = 800.0;
      s.cf = 2e-15;
      s.core_stages = 3.0;
      s.c_cell_in = 30e-15;
      s.c_pd = 150e-15;
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
    case LoadKind::tia: break;  // a transimpedance, not a load: test_tia.cpp
  }
  return 0.0;
}

}  // namespace

TEST_CASE("every kind: DC gain, roll-off, zero-inductance limit and rational = nodal") {
  for (const auto& info : all_load_kinds()) {
    CAPTURE(info.name);
    if (info.current_input) continue;  // a transimpedance stage has its own checks (test_tia.cpp)
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
  // docs/physics.md (circuits): plain and shunt take their output at the drain, series and tcoil after
  // a coil, so c_out joins the output node only for those two, and for a tia, whose output is its
  // last core cell's drain (derived from the schematics).
  for (const auto& info : peakplan::all_load_kinds()) {
    peakplan::StageCircuit c;
    c.kind = info.kind;
    c.c_out = 7e-15;
    c.c_node = 30e-15;
    const bool at_drain = info.kind == peakplan::LoadKind::plain || info.kind == peakplan::LoadKind::shunt ||
                          info.kind == peakplan::LoadKind::tia;
    INFO("kind: " << info.name);
    CHECK(peakplan::output_node_capacitance(c) == doctest::Approx(at_drain ? 37e-15 : 30e-15).epsilon(1e-15));
  }
}

namespace {

// A stage of any kind with every element of its table set to a plausible value by dimension,
// so the checks below need no knowledge of the kind.
StageCircuit from_table(const LoadKindInfo& info) {
  StageCircuit s = plain_stage(120.0, 40e-15);
  s.kind = info.kind;
  s.c_out = 15e-15;
  for (const auto& p : info.parameters) {
    if (!p.field || p.role == ParameterRole::alias) continue;
    double& x = s.*(p.field);
    if (p.dimension == Dimension::inductance) x = 350e-12;
    if (p.dimension == Dimension::capacitance) x = 6e-15;
    if (p.dimension == Dimension::resistance) x = 2.5;
    if (p.dimension == Dimension::dimensionless) x = 0.45;  // a coupling factor inside (-1, 1)
  }
  return s;
}

// Records what a kind's netlist hook writes.
struct RecordingSink final : ElementSink {
  int gm_cells = 0;
  std::vector<std::pair<std::string, double>> resistors, capacitors, inductors;
  void gm_cell(std::string_view) override { ++gm_cells; }
  void inner_gm_cell(std::string_view, std::string_view, std::string_view, double) override { ++inner_cells; }
  int inner_cells = 0;
  void resistor(std::string_view name, std::string_view, std::string_view, double ohms) override {
    resistors.emplace_back(name, ohms);
  }
  void capacitor(std::string_view name, std::string_view, std::string_view, double farads) override {
    capacitors.emplace_back(name, farads);
  }
  bool inductor(std::string_view name, std::string_view, std::string_view, double henries, double) override {
    inductors.emplace_back(name, henries);
    return true;
  }
  void coupling(std::string_view, std::string_view, std::string_view, double) override {}
};

}  // namespace

TEST_CASE("every kind in the table: passive load, DC resistance hook, netlist hook and a consistent table") {
  for (const auto& info : all_load_kinds()) {
    CAPTURE(info.name);
    // The table: unique keys; every element and loss has a field; a loss names a coil of its kind.
    for (const auto& p : info.parameters) {
      CAPTURE(p.key);
      int same = 0;
      for (const auto& q : info.parameters) same += q.key == p.key;
      CHECK(same == 1);
      if (p.role == ParameterRole::design) CHECK(p.field == nullptr);
      else CHECK(p.field != nullptr);
      if (p.role == ParameterRole::element) CHECK(p.plan_hi > p.plan_lo);
      if (p.role == ParameterRole::loss) {
        const auto* coil = find_parameter(info, p.loss_of);
        REQUIRE(coil != nullptr);
        CHECK(coil->dimension == Dimension::inductance);
      }
    }
    CHECK((info.design == DesignFactor::none) == !info.apply_design);

    const auto s = from_table(info);
    const auto system = build_stage_system(s);
    // Passivity: a network of positive R, L, C and coils coupled with |k| < 1 has a positive-real
    // driving-point impedance, so Re Z(j w) >= 0 at the drain at every frequency (derived: the
    // power it absorbs, 1/2 Re Z |I|^2, is the sum of its resistors' dissipation).
    // A transimpedance stage's feedback core is active: its input impedance need not be passive.
    for (double f = 1e6; f < 1e13 && !info.current_input; f *= 1.5) {
      const auto z = system.impedance(drain_node, jw(f));
      CHECK(z.real() >= -1e-9 * std::abs(z));
    }
    // DC: coils are their losses, capacitors open; with r_load open the drain sees the
    // kind's DC resistance (the hook), and the gain is -gm times what reaches the output.
    REQUIRE(static_cast<bool>(info.dc_resistance));
    CHECK(system.impedance(drain_node, {0.0, 0.0}).real() == doctest::Approx(info.dc_resistance(s)).epsilon(1e-9));
    // The netlist hook writes one gm cell, Rd and c_out, and one L per coil of the table.
    RecordingSink sink;
    REQUIRE(static_cast<bool>(info.netlist));
    info.netlist(s, sink);
    CHECK(sink.gm_cells == 1);
    CHECK(std::count(sink.resistors.begin(), sink.resistors.end(), std::pair<std::string, double>{"Rd", s.rd}) == 1);
    CHECK(std::count(sink.capacitors.begin(), sink.capacitors.end(), std::pair<std::string, double>{"Cout", s.c_out}) == 1);
    size_t coils = 0;
    for (const auto& p : info.parameters) coils += p.role == ParameterRole::element && p.dimension == Dimension::inductance;
    CHECK(sink.inductors.size() == coils);
  }
}
