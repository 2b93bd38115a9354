// The planner's realistic bounds and its eye and noise limits: [limits] ber and noise_rms bind a
// plan that analyze then confirms, [technology] min_gm bounds every open gm, a coil's
// self-capacitance bounds its inductance by the self-resonance rule, and planned coils carry
// the series loss inductor_q gives them.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>
#include <string>
#include <vector>

#include "cli_json.hpp"
#include "first_plan_chain.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/plan_problem.hpp"

using nlohmann::json;
using namespace peakplan::test;

namespace {

const json* check_named(const json& plan, const std::string& name) {
  for (const auto& c : plan.at("checks"))
    if (c.at("name") == name) return &c;
  return nullptr;
}

// Written for these tests (an invented scenario, not a design): two sized plain stages behind a
// 50 ohm source at a 4 mV swing, as lean as the gain and bandwidth allow. `limits` is the body of
// its [limits] table, `technology` extra [technology] lines.
std::string lean_pair(const std::string& limits, const std::string& technology = "") {
  return R"([chain]
name = "lean pair"
[input]
r_source = "50 ohm"
[signal]
bit_rate = "25 Gb/s"
swing = "4 mV"
[target]
gain = "20 dB"
bandwidth = "12 GHz"
objective = "leanest"
[limits]
)" + limits + R"(
[technology]
ft = "300 GHz"
c_out_ratio = 0.5
)" + technology + R"(
[[stage]]
id = "a"
kind = "plain"
gm = "auto"
rd = "auto"
[[stage]]
id = "b"
kind = "plain"
gm = "auto"
rd = "auto"
c_load = "20 fF"
)";
}

}  // namespace

TEST_CASE("plan bounds: a BER limit binds a leanest plan, and analyze of the written plan gives that BER") {
  TempDir scratch("peakplan_plan_bounds");
  const auto free = run_json({"plan", scratch.write("free.toml", lean_pair("")), "--json"});
  const double free_ber = free["outputs"].back()["eye"]["ber"].get<double>();
  // Without the limit the leanest pair is noisy at 4 mV: its BER is far above 1e-12.
  REQUIRE(free_ber > 1e-9);

  const auto chain = scratch.write("ber.toml", lean_pair("ber = 1e-12"));
  const auto planned = (scratch.path / "planned.toml").string();
  const auto plan = run_json({"plan", chain, "--json", "--write", planned});
  CHECK(plan["status"] == "met");
  const auto* ber = check_named(plan, "ber");
  REQUIRE(ber != nullptr);
  CHECK((*ber)["met"] == true);
  // It binds: the planner spends gm only until the BER reaches the limit, so the plan's BER lies
  // within a factor of 2 below it (the search aims a hundredth of a decade inside), where the
  // free plan's was decades above.
  CHECK((*ber)["value"].get<double>() <= 1e-12);
  CHECK((*ber)["value"].get<double>() > 0.5e-12);
  CHECK(close(plan["outputs"].back()["eye"]["ber"].get<double>(), (*ber)["value"].get<double>(), 1e-12));
  // The written plan, analysed as written: the same statistical eye, the same BER (the plan's
  // final measurement is analyze's), and the ber limit is carried in the file.
  const auto again = run_json({"analyze", planned, "--json"});
  CHECK(close(again["outputs"].back()["eye"]["ber"].get<double>(), (*ber)["value"].get<double>(), 1e-9));
  CHECK(read_file(planned).find("ber = 1e-12") != std::string::npos);
}

TEST_CASE("plan bounds: a noise_rms limit binds, and analyze of the written plan reports that noise") {
  TempDir scratch("peakplan_plan_bounds");
  const auto free = run_json({"plan", scratch.write("free.toml", lean_pair("")), "--json"});
  REQUIRE(free["outputs"].back()["noise"]["differential_rms_v"].get<double>() > 4.2e-3);
  const auto planned = (scratch.path / "planned.toml").string();
  const auto plan = run_json({"plan", scratch.write("noise.toml", lean_pair("noise_rms = \"4 mV\"")), "--json",
                              "--write", planned});
  CHECK(plan["status"] == "met");
  const auto* noise = check_named(plan, "noise_rms");
  REQUIRE(noise != nullptr);
  CHECK((*noise)["unit"] == "V");
  // Binding: within 1 % below the limit (the search aims 0.1 % inside).
  CHECK((*noise)["value"].get<double>() <= 4e-3);
  CHECK((*noise)["value"].get<double>() > 0.99 * 4e-3);
  const auto again = run_json({"analyze", planned, "--json"});
  CHECK(close(again["outputs"].back()["noise"]["differential_rms_v"].get<double>(), (*noise)["value"].get<double>(), 1e-9));
}

TEST_CASE("plan bounds: [technology] min_gm is the least gm a plan gives an open device") {
  TempDir scratch("peakplan_plan_bounds");
  const auto free = run_json({"plan", scratch.write("free.toml", lean_pair("")), "--json"});
  double least = 1.0;
  for (const auto& c : free["chosen"]) least = std::min(least, c["values"]["gm"].get<double>());
  REQUIRE(least < 5e-3);  // left alone, the leanest plan uses devices below 5 mS
  const auto bounded = run_json({"plan", scratch.write("min_gm.toml", lean_pair("", "min_gm = \"5 mS\"")), "--json"});
  CHECK(bounded["status"] == "met");
  for (const auto& c : bounded["chosen"]) {
    CAPTURE(c["id"]);
    CHECK(c["values"]["gm"].get<double>() >= 5e-3 * (1.0 - 1e-12));
    // The device rule still sizes it: c_in = gm/(2 pi ft) (docs/chain-format.md).
    CHECK(close(c["values"]["c_in"].get<double>(), c["values"]["gm"].get<double>() / (2.0 * std::numbers::pi * 300e9), 1e-12));
  }
}

namespace {

// Written for these tests (an invented scenario): a shunt-peaked stage and a plain output stage,
// every coil and Rd open, at a bandwidth the coils reach only when large.
std::string peaked_pair(const std::string& technology) {
  return R"([chain]
name = "peaked pair"
[target]
gain = "16 dB"
bandwidth = "40 GHz"
objective = "widest"
[limits]
peaking = "1 dB"
[technology]
)" + technology + R"(
[[stage]]
id = "p1"
kind = "shunt"
gm = "40 mS"
rd = "auto"
l = "auto"
c_in = "40 fF"
c_out = "30 fF"
[[stage]]
id = "p2"
kind = "shunt"
gm = "40 mS"
rd = "auto"
l = "auto"
c_in = "40 fF"
c_out = "30 fF"
c_load = "60 fF"
)";
}

}  // namespace

TEST_CASE("plan bounds: with coil_c_per_nh every planned coil resonates at 3x the band or above, in the circuit") {
  TempDir scratch("peakplan_plan_bounds");
  // Derived: f_SR = 1/(2 pi sqrt(L C)) with C = c L gives f_SR = 1/(2 pi L sqrt(c)); f_SR >= 3 B
  // is L <= 1/(2 pi 3 B sqrt(c)). For c = 20 fF/nH = 2e-5 F/H and B = 40 GHz: 296.6 pH.
  peakplan::Diagnostics d("bounds.toml");
  const auto spec = peakplan::parse_chain_spec(peaked_pair("coil_c_per_nh = \"20 fF\""), d);
  REQUIRE(spec);
  const double limit = 1.0 / (2.0 * std::numbers::pi * 3.0 * 40e9 * std::sqrt(2e-5));
  CHECK(close(peakplan::coil_inductance_limit(*spec), limit, 1e-12));
  CHECK(close(limit, 296.6e-12, 1e-3));

  const auto ideal = run_json({"plan", scratch.write("ideal.toml", peaked_pair("")), "--json"});
  const auto planned = (scratch.path / "planned.toml").string();
  const auto real = run_json({"plan", scratch.write("real.toml", peaked_pair("coil_c_per_nh = \"20 fF\"")), "--json",
                              "--write", planned});
  double widest_ideal = 0.0;
  for (const auto& c : ideal["chosen"]) widest_ideal = std::max(widest_ideal, c["values"]["l"].get<double>());
  REQUIRE(widest_ideal > limit);  // ideal coils would be planned past the rule
  for (const auto& c : real["chosen"]) {
    CAPTURE(c["id"]);
    CHECK(c["values"]["l"].get<double>() <= limit * (1.0 + 1e-12));
  }
  // The self-capacitance is in the planned circuit: the written file carries it and analyze
  // reproduces the plan's response from it exactly.
  CHECK(read_file(planned).find("coil_c_per_nh = ") != std::string::npos);
  const auto again = run_json({"analyze", planned, "--json"});
  CHECK(close(again["outputs"].back()["bandwidth_hz"].get<double>(), real["outputs"].back()["bandwidth_hz"].get<double>(), 1e-12));
}

TEST_CASE("plan bounds: planned coils carry the loss inductor_q gives them at their stage's bandwidth") {
  TempDir scratch("peakplan_plan_bounds");
  const auto plan = run_json({"plan", scratch.write("q.toml", peaked_pair("inductor_q = 8")), "--json"});
  for (const auto& stage : plan["stages"]) {
    CAPTURE(stage["id"]);
    const auto& v = stage["values"];
    REQUIRE(v["r_l"].get<double>() > 0.0);
    // Derived (docs/chain-format.md, inductor_q): r = 2 pi f L / Q with f the stage's own -3 dB
    // bandwidth found with a lossless coil, here recomputed from the stage's planned values.
    peakplan::StageCircuit c;
    c.kind = peakplan::LoadKind::shunt;
    c.gm = v["gm"].get<double>();
    c.rd = v["rd"].get<double>();
    c.l = v["l"].get<double>();
    c.c_out = v["c_out"].get<double>();
    c.c_node = v["c_node"].get<double>();
    peakplan::ScanResolution edge;
    edge.bandwidth_only = true;
    const double f =
        peakplan::frequency_metrics(peakplan::Cascade({peakplan::build_stage_system(c).rational()}), peakplan::not_found, edge)
            .bandwidth_hz;
    CHECK(close(v["r_l"].get<double>(), 2.0 * std::numbers::pi * f * c.l / 8.0, 1e-9));
  }
}

TEST_CASE("plan bounds: an open value whose bounds meet is that value, not an internal error") {
  TempDir scratch("peakplan_plan_bounds");
  // A range with min = max (this was exit 3, "zero step size", from the search).
  const auto pinned = scratch.write("pinned.toml", R"([target]
gain = "10 dB"
[[stage]]
id = "a"
kind = "plain"
gm = "40 mS"
rd = { min = "100 ohm", max = "100 ohm" }
c_load = "30 fF"
)");
  const auto plan = run_json({"plan", pinned, "--json"});
  CHECK(close(plan["chosen"][0]["values"]["rd"].get<double>(), 100.0, 1e-15));  // the one value the range holds
  // A coil capacitance so large that the self-resonance bound falls below the least coil the
  // planner considers (1 pH): the coils sit at 1 pH and the plan is a result (met or not).
  const auto r = run_cli({"plan", scratch.write("dense.toml", peaked_pair("coil_c_per_nh = \"10 nF\"")), "--json"});
  INFO(r.err);
  CHECK((r.status == 0 || r.status == 1));
  const auto doc = json::parse(r.out);
  for (const auto& c : doc["chosen"]) CHECK(close(c["values"]["l"].get<double>(), 1e-12, 1e-15));
}

TEST_CASE("plan bounds: a stage with open values and no capacitance at all is an input error, not a plan") {
  // A new user's first plan (first_plan_chain.hpp) as first written: no c_out_ratio, no c_load.
  // The last copy then has no capacitance at all, nothing bounds its bandwidth, and the planner
  // once returned eight T-coils whose last one resonated 252 dB above DC out of band, with "every
  // target met". The file must say what the output drives.
  TempDir scratch("peakplan_plan_bounds");
  const auto bare = scratch.write("bare.toml", first_plan_chain());
  const auto r = run_cli({"plan", bare, "--json"});
  CHECK(r.status == 2);
  CHECK(r.out.empty());
  CHECK(r.err.find(bare + ":10:1: error: stage 'a': it carries no capacitance") != std::string::npos);
  CHECK(r.err.find("give c_load") != std::string::npos);
  // c_load = 0 written out is the same error, at its value.
  const auto zero = run_cli({"plan", scratch.write("zero.toml", first_plan_chain("", "c_load = 0\n"))});
  CHECK(zero.status == 2);
  CHECK(zero.err.find("zero.toml:16:10: error: stage 'a'") != std::string::npos);
  // With the load it drives, the same file plans, and no stage peaks out of band: the worst
  // peaking of any stage alone stays within a few dB (a load of 20 fF on every copy).
  const auto loaded = run_json({"plan", scratch.write("loaded.toml", first_plan_chain("", "c_load = \"20 fF\"\n")), "--json"});
  CHECK(loaded["status"].get<std::string>() == "met");
  for (const auto& stage : loaded["stages"]) {
    CAPTURE(stage["id"]);
    CHECK(stage["peaking_db"].get<double>() < 10.0);
  }
}

TEST_CASE("plan bounds: a planned T-coil whose drain carries no capacitance gets a note, and with c_out none") {
  // The suite's free T-coil (tests/planning/p02) is the textbook problem: an ideal current source
  // into the coil, c_out = 0. Planned so, a T-coil can extend far past what a device gives (one
  // was planned to 1.9 THz with ft = 200 GHz), so plan says what the file leaves ideal; with the
  // device's drain capacitance given it has nothing to say.
  const std::string free_tcoil = std::string(PEAKPLAN_SOURCE_DIR) + "/tests/planning/p02_free_tcoil.toml";
  const auto ideal = run_cli({"plan", free_tcoil});
  CHECK(ideal.status == 0);
  CHECK(ideal.err.find("peakplan: note: stage 't': its drain node carries no capacitance (c_out is 0)") !=
        std::string::npos);
  const auto real = run_cli({"plan", free_tcoil, "--set", "t.c_out=20fF"});
  CHECK(real.status == 0);
  CHECK(real.err.find("note") == std::string::npos);
}

TEST_CASE("plan bounds: open values with nothing in [target] to plan for are an input error, except for widest") {
  // A new user's plan without a [target]: flattest then planned a 0 dB stage with a 6 pH coil and
  // said "every target and limit is met".
  TempDir scratch("peakplan_plan_bounds");
  const std::string chain = R"(# Invented for this test.
[[stage]]
id = "a"
kind = "shunt"
gm = "30 mS"
rd = "auto"
l = "auto"
c_out = "20 fF"
c_load = "30 fF"
)";
  const auto bare = scratch.write("bare.toml", chain);
  const auto r = run_cli({"plan", bare});
  CHECK(r.status == 2);
  CHECK(r.out.empty());
  CHECK(r.err.find(bare + ":6:6: error: stage 'a' has values for the planner to choose, but [target] gives nothing "
                          "to plan for") != std::string::npos);
  // widest aims at the bandwidth itself, and a gain target is something to plan for.
  CHECK(run_cli({"plan", scratch.write("widest.toml", "[target]\nobjective = \"widest\"\n" + chain)}).status == 0);
  CHECK(run_cli({"plan", scratch.write("gain.toml", "[target]\ngain = \"6 dB\"\n" + chain)}).status == 0);
}
