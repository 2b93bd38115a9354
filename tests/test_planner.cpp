// The planner against classic optima, a brute-force search, and its own written output.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>

#include "planner/input/chain_graph.hpp"
#include "planner/plan_problem.hpp"
#include "planner/plan_search.hpp"
#include "planner/planner.hpp"
#include "planner/stage_value.hpp"
#include "cli_support.hpp"
#include "six_open_stages.hpp"
#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

ChainSpec spec_from(const std::string& text) {
  Diagnostics d("test.toml");
  auto spec = parse_chain_spec(text, d);
  INFO(d.format());
  REQUIRE(spec);
  return *spec;
}

Plan plan_from(const std::string& text) {
  const auto spec = spec_from(text);
  Diagnostics d("test.toml");
  auto plan = plan_chain(spec, d);
  INFO(d.format());
  REQUIRE(plan);
  return *plan;
}

FrequencyMetrics main_metrics(const Chain& chain) {
  return frequency_metrics(output_cascade(chain, chain.outputs().back()));
}

// Runs the CLI with `args` split at spaces, returning its exit status and stdout.
std::pair<int, std::string> run(const std::string& args) {
  std::vector<std::string> words;
  std::istringstream in(args);
  for (std::string word; in >> word;) words.push_back(word);
  const CliRun r = run_cli(words);
  return {r.status, r.out};
}

}  // namespace

TEST_CASE("planner: a shunt stage planned for the widest bandwidth with no peaking plans m = 0.414") {
  // Maximally flat shunt peaking, m = sqrt(2) - 1 (Lee; Shekhar et al. 2006): the widest
  // bandwidth before a peak appears.
  const auto plan = plan_from(R"(
[target]
objective = "widest"
[limits]
peaking = "0 dB"
[[stage]]
id = "s"
kind = "shunt"
gm = "20 mS"
rd = "100 ohm"
c_load = "100 fF"
l = "auto"
)");
  CHECK(plan.termination == Plan::Termination::met);
  const auto& c = plan.chain.stages[0].circuit;
  CHECK(c.l / (c.rd * c.rd * c.c_node) == doctest::Approx(std::sqrt(2.0) - 1.0).epsilon(0.01));
  CHECK(main_metrics(plan.chain).bandwidth_hz / plain_bandwidth() == doctest::Approx(1.722).epsilon(0.005));
}

TEST_CASE("planner: n identical first-order stages at a fixed total gain: n near 2 ln A, gain near sqrt(e)") {
  // B. Razavi, Design of Integrated Circuits for Optical Communications, limiting-amplifier
  // chapter (from memory): n_opt -> 2 ln A, stage gain -> sqrt(e). docs/references.md (derived): the
  // exact optimum for 40 dB is n* = 8.9, best integer 9, and the curve is flat: here 7 copies
  // give 0.3 % less bandwidth than the best count, within the planner's 0.5 % tie-break towards
  // fewer stages (planner/plan_search.hpp), so 7..10 are accepted, the plan's bandwidth must be
  // within that 0.5 % of the best of 8 and 9 copies planned alone, and a smaller count is chosen
  // only for that reason.
  const std::string chain = R"(
[target]
gain = "40 dB"
objective = "widest"
[[stage]]
id = "g"
kind = "plain"
count = COUNT
gm = "20 mS"
rd = "auto"
c_in = "60 fF"
c_out = "40 fF"
)";
  auto with = [&](const std::string& count) {
    std::string text = chain;
    text.replace(text.find("COUNT"), 5, count);
    return plan_from(text);
  };
  const auto plan = with("{ min = 2, max = 12 }");
  CHECK(plan.termination == Plan::Termination::met);
  const int n = plan.stages[0].count;
  CHECK(n >= 7);
  CHECK(n <= 10);
  double best = 0.0;
  for (const char* count : {"8", "9"}) best = std::max(best, main_metrics(with(count).chain).bandwidth_hz);
  CHECK(main_metrics(plan.chain).bandwidth_hz >= (1.0 - 0.005) * best);
  // derived: identical stages share the 40 dB equally, A^(1/n) each (1.65 = sqrt(e) at n = 9.2).
  const double stage_gain = plan.chain.stages[0].circuit.gm * plan.chain.stages[0].circuit.rd;
  CHECK(stage_gain == doctest::Approx(std::pow(100.0, 1.0 / n)).epsilon(1e-3));
  CHECK(to_db(main_metrics(plan.chain).dc_gain) == doctest::Approx(40.0).epsilon(1e-3));
}

TEST_CASE("planner: a free T-coil under a 4.5 % overshoot limit does at least as well as the Butterworth design") {
  // Battjes' Butterworth T-coil (k = 1/3, Cb = C/8) gives 2 sqrt 2 times 1/(2 pi R C) with 4.3 %
  // overshoot. The planner may find an asymmetric coil; it must not do worse and must meet the limit.
  const auto plan = plan_from(R"(
[target]
objective = "widest"
[limits]
overshoot = "4.5 %"
[technology]
max_inductance = "2 nH"
k_range = [0.0, 0.9]
[[stage]]
id = "t"
kind = "tcoil"
gm = "20 mS"
rd = "100 ohm"
c_load = "100 fF"
l1 = "auto"
l2 = "auto"
k = "auto"
cb = "auto"
)");
  CHECK(plan.termination == Plan::Termination::met);
  const double textbook = bandwidth(tcoil_stage(1.0 / std::sqrt(2.0)));
  CHECK(main_metrics(plan.chain).bandwidth_hz >= 0.999 * textbook);
  for (const auto& c : plan.checks) CHECK(c.met);
  // The file sets no sag: the plan is still held to the default 1 dB, and says so in its checks.
  bool sag_checked = false;
  for (const auto& c : plan.checks)
    if (c.name == "sag") sag_checked = c.limit == 1.0 && c.unit == "dB";
  CHECK(sag_checked);
  CHECK(-main_metrics(plan.chain).sag_db <= 1.0 + 1e-4);
}

TEST_CASE("planner: [limits] sag holds the in-band dip; 3 dB lifts the check") {
  // derived: a sag is a dip below DC that recovers before the -3 dB edge, so it is >= 0 dB deep
  // and a 0.1 dB limit must leave a plan whose every dip is within 0.1 dB (to the 1e-4 dB the
  // check resolves).
  const std::string chain = R"(
[target]
objective = "widest"
gain = "10 dB"
[limits]
SAG
[[stage]]
id = "a"
kind = "shunt"
gm = "40 mS"
rd = "auto"
l = "auto"
c_load = "60 fF"
[[stage]]
id = "b"
kind = "shunt"
gm = "40 mS"
rd = "auto"
l = "auto"
c_load = "60 fF"
)";
  auto with = [&](const std::string& sag) {
    std::string text = chain;
    text.replace(text.find("SAG"), 3, sag);
    return plan_from(text);
  };
  const auto tight = with("sag = \"0.1 dB\"");
  CHECK(-main_metrics(tight.chain).sag_db <= 0.1 + 1e-4);
  bool tight_checked = false;
  for (const auto& c : tight.checks)
    if (c.name == "sag") tight_checked = c.limit == doctest::Approx(0.1) && c.met;
  CHECK(tight_checked);
  const auto lifted = with("sag = \"3 dB\"");
  for (const auto& c : lifted.checks) CHECK(c.name != "sag");
}

TEST_CASE("planner: two shunt stages reach at least 99 % of a brute-force grid's best bandwidth") {
  const std::string text = R"(
[target]
objective = "widest"
[limits]
peaking = "0.5 dB"
[[stage]]
id = "a"
kind = "shunt"
gm = "30 mS"
rd = "100 ohm"
c_in = "40 fF"
c_out = "30 fF"
l = "auto"
[[stage]]
id = "b"
kind = "shunt"
gm = "30 mS"
rd = "80 ohm"
c_in = "40 fF"
c_out = "20 fF"
c_load = "50 fF"
l = "auto"
)";
  const auto plan = plan_from(text);
  CHECK(plan.termination == Plan::Termination::met);
  const double planned = main_metrics(plan.chain).bandwidth_hz;

  // The grid: both inductances over 0..1.5 nH in 80 steps each, the same limit checked exactly.
  Diagnostics d("grid.toml");
  const auto spec = spec_from(text);
  Chain chain = plan.chain;
  double best = 0.0;
  for (int i = 0; i <= 80; ++i)
    for (int j = 0; j <= 80; ++j) {
      chain.stages[0].circuit.l = 1.5e-9 * i / 80;
      chain.stages[1].circuit.l = 1.5e-9 * j / 80;
      const auto f = main_metrics(chain);
      if (f.peaking_db <= 0.5 && f.bandwidth_hz > best) best = f.bandwidth_hz;
    }
  CHECK(planned >= 0.99 * best);
}

TEST_CASE("planner: plan, write, analyze reproduces the plan's metrics and meets every limit") {
  const TempDir dir("peakplan_plan_write");
  const auto written = (dir.path / "planned.toml").string();
  const auto [plan_status, plan_out] =
      run("plan " + std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_limiting_amp.toml --json --write " + written);
  REQUIRE(plan_status == 0);
  const auto planned = nlohmann::json::parse(plan_out);
  CHECK(planned["status"] == "met");
  for (const auto& c : planned["checks"]) CHECK(c["met"] == true);
  // `binding` names the least relative margin; `binds` only when it is within 1 % of its limit.
  double least = 1e300;
  std::string least_name;
  for (const auto& c : planned["checks"]) {
    const double relative = c["margin"].get<double>() / std::fabs(c["limit"].get<double>());
    if (relative < least) least = relative, least_name = c["name"];
  }
  CHECK(planned["binding"] == least_name);
  CHECK(planned["binds"] == (least <= 0.01));
  CHECK(planned["message"].get<std::string>().find(least <= 0.01 ? least_name + " binds"
                                                                  : "none binds (" + least_name + " has the least margin)") !=
        std::string::npos);

  const auto [status, out] = run("analyze " + written + " --json");
  REQUIRE(status == 0);
  const auto analysed = nlohmann::json::parse(out);
  const auto& a = analysed["outputs"].back();
  const auto& p = planned["outputs"].back();
  for (const char* key : {"dc_gain", "bandwidth_hz", "group_delay_ripple_s", "overshoot_pct"}) {
    CAPTURE(key);
    CHECK(a[key].get<double>() == doctest::Approx(p[key].get<double>()).epsilon(1e-9));
  }
}

TEST_CASE("planner: an infeasible target exits 1, reports not_met and names the binding check") {
  // One plain stage has a fixed gain-bandwidth gm/(2 pi C) = 20 mS/(2 pi 100 fF) = 31.8 GHz, so
  // 20 dB at 10 GHz is possible and 20 dB at 40 GHz is not (derived).
  const TempDir dir("peakplan_infeasible");
  const auto file = (dir.path / "infeasible.toml").string();
  std::ofstream(file) << R"(
[target]
gain = "20 dB"
bandwidth = "40 GHz"
[[stage]]
id = "p"
kind = "plain"
gm = "20 mS"
rd = "auto"
c_load = "100 fF"
)";
  const auto [status, out] = run("plan " + file + " --json");
  CHECK(status == 1);
  const auto doc = nlohmann::json::parse(out);
  CHECK(doc["status"] == "not_met");
  const std::string binding = doc["binding"];
  CHECK((binding == "gain" || binding == "bandwidth"));
}


TEST_CASE("planner: a chain with nothing to choose says so, and a miss names every failed check") {
  // One plain stage, gm = 20 mS, Rd = 100 ohm, 100 fF: gain 20*log10(2) = 6.02 dB and bandwidth
  // 1/(2 pi 100 ohm 100 fF) = 15.9 GHz (derived), so a 10 dB, 20 GHz target misses both.
  const Plan plan = plan_from(R"(
[target]
gain = "10 dB"
bandwidth = "20 GHz"
[limits]
overshoot = "5 %"
[[stage]]
id = "p"
kind = "plain"
gm = "20 mS"
rd = "100 ohm"
c_load = "100 fF"
)");
  CHECK(plan.termination == Plan::Termination::not_met);
  CHECK(plan.message == "the chain as written misses gain, bandwidth (nothing to choose: every value is fixed)");
  CHECK(plan.binding.empty());
  const Plan met = plan_from(R"(
[target]
gain = "5 dB"
[limits]
overshoot = "5 %"
[[stage]]
id = "p"
kind = "plain"
gm = "20 mS"
rd = "100 ohm"
c_load = "100 fF"
)");
  CHECK(met.termination == Plan::Termination::met);
  // No "overshoot binds" for a fixed chain with a 5-point margin: there is no binding choice.
  CHECK(met.message == "every target and limit is met (nothing to choose: every value is fixed)");
}

TEST_CASE("planner: six open stages of mixed kinds meet every limit, also when the written plan is re-analysed") {
  const auto spec = spec_from(kSixOpenStages);
  Diagnostics d("six.toml");
  const auto plan = plan_chain(spec, d);
  REQUIRE(plan);
  CHECK(plan->termination == Plan::Termination::met);
  Diagnostics rd("written.toml");
  const auto written = parse_chain_spec(planned_chain_toml(spec, *plan), rd);
  REQUIRE(written);
  const auto chain = resolve_chain(*written, rd);
  REQUIRE(chain);
  const auto analysis = analyze_chain(*chain, analysis_options(*written));
  const auto& main = analysis.outputs.back().response;
  for (const auto& c : check_targets(spec, main.frequency, main.step, total_gm(*chain))) {
    CAPTURE(c.name);
    CHECK(c.met);
  }
}

TEST_CASE("planner: a supply-current budget bounds the total gm at gm/Id") {
  // Five shunt stages that would all size up to max_gm = 80 mS (400 mS, 40 mA at gm/Id = 10/V);
  // a 25 mA budget allows 250 mS in all. Id = gm / (gm/Id) (definition).
  const auto spec = spec_from(R"(
[target]
gain = "30 dB"
bandwidth = "30 GHz"
[limits]
overshoot = "5 %"
[technology]
ft = "250 GHz"
c_out_ratio = 0.6
max_gm = "80 mS"
gm_over_id = 10
current_budget = "25 mA"
[[stage]]
id = "g"
kind = "shunt"
count = 5
gm = "auto"
rd = "auto"
l = "auto"
c_load = "20 fF"
)");
  Diagnostics d("budget.toml");
  const auto plan = plan_chain(spec, d);
  REQUIRE(plan);
  CHECK(plan->termination == Plan::Termination::met);
  const auto current = std::find_if(plan->checks.begin(), plan->checks.end(), [](const PlanCheck& c) { return c.name == "current"; });
  REQUIRE(current != plan->checks.end());
  CHECK(current->limit == doctest::Approx(25e-3));
  CHECK(current->value == doctest::Approx(total_gm(plan->chain) / 10.0).epsilon(1e-12));
  CHECK(total_gm(plan->chain) <= 0.25 * (1.0 + 1e-9));
  CHECK(current->met);
}

TEST_CASE("planner: progress is reported as the search runs, in order, up to the final count") {
  const auto spec = spec_from(kSixOpenStages);
  std::vector<PlanProgress> seen;
  PlanOptions options;
  options.progress_every = 100;
  options.progress = [&](const PlanProgress& p) { seen.push_back(p); };
  Diagnostics d("six.toml");
  const auto plan = plan_chain(spec, d, options);
  REQUIRE(plan);
  REQUIRE(seen.size() >= 3);
  for (size_t i = 1; i < seen.size(); ++i) {
    CHECK(seen[i].evaluations >= seen[i - 1].evaluations);
    CHECK(seen[i].seconds >= seen[i - 1].seconds);
  }
  CHECK(seen.front().phase == "design space");
  CHECK(seen.back().phase != "design space");
  CHECK(seen.back().evaluations + 1 == plan->evaluations);
}

TEST_CASE("planner: no planned stage is a loss unless [limits] min_stage_gain allows it") {
  // derived: for the widest bandwidth at 0 dB overall, the slow stage (200 fF) would rather lose
  // gain and the fast one (10 fF) make it up, since a smaller Rd widens the slow pole; the 0 dB
  // default floor forbids the loss, and a -40 dB floor allows it.
  const std::string chain = R"(
[target]
objective = "widest"
gain = "0 dB"
[limits]
FLOOR
[[stage]]
id = "a"
kind = "plain"
gm = "40 mS"
rd = "auto"
c_load = "200 fF"
[[stage]]
id = "b"
kind = "plain"
gm = "40 mS"
rd = "auto"
c_load = "10 fF"
)";
  auto with = [&](const std::string& floor) {
    std::string text = chain;
    text.replace(text.find("FLOOR"), 5, floor);
    return plan_from(text);
  };
  const auto held = with("");
  CHECK(held.termination == Plan::Termination::met);
  for (const auto& s : held.chain.stages) CHECK(s.circuit.gm * s.circuit.rd >= 1.0 - 1e-4);
  bool checked = false;
  for (const auto& c : held.checks)
    if (c.name == "min_stage_gain") checked = c.limit == 0.0 && c.met;
  CHECK(checked);
  const auto loose = with("min_stage_gain = \"-40 dB\"");
  CHECK(loose.chain.stages[0].circuit.gm * loose.chain.stages[0].circuit.rd < 0.9);
  CHECK(main_metrics(loose.chain).bandwidth_hz > main_metrics(held.chain).bandwidth_hz);

  // A fixed output buffer into 50 ohm at a loss (36 mS x 25 ohm = 0.9, -0.92 dB) is the file's,
  // not the planner's: the floor holds the planned stages only, and the plan meets it.
  const auto buffered = plan_from(R"(
[target]
objective = "widest"
gain = "6 dB"
[[stage]]
id = "a"
kind = "plain"
gm = "40 mS"
rd = "auto"
c_load = "20 fF"
[[stage]]
id = "out"
kind = "plain"
gm = "36 mS"
rd = "50 ohm"
r_load = "50 ohm"
c_in = "30 fF"
)");
  CHECK(buffered.termination == Plan::Termination::met);
  const double planned_db = to_db(0.04 * buffered.chain.stages[0].circuit.rd);
  for (const auto& c : buffered.checks)
    if (c.name == "min_stage_gain") CHECK(c.value == doctest::Approx(planned_db).epsilon(1e-9));
}

// Limiting chains (docs/physics.md (large signals)): [target] output_swing and [limits] ddj are
// checked on the large-signal eye, with the tail currents open.
TEST_CASE("planner: open tail currents meet output_swing and ddj, and the written plan re-analysed meets both") {
  const TempDir dir("peakplan_limiting_plan");
  const auto chain = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_tail_currents.toml";
  const auto written = (dir.path / "planned.toml").string();
  const auto [status, out] = run("plan " + chain + " --json --write " + written);
  REQUIRE(status == 0);
  const auto plan = nlohmann::json::parse(out);
  CHECK(plan["status"] == "met");
  int checked = 0;
  for (const auto& c : plan["checks"])
    if (c["name"] == "output_swing" || c["name"] == "ddj") {
      CHECK(c["met"] == true);
      ++checked;
    }
  CHECK(checked == 2);
  // The file as written, analysed: analyze's own large-signal eye meets both (the file's values:
  // output_swing 1 V, ddj 0.1 ps).
  const auto [analysed, json] = run("analyze " + written + " --json");
  REQUIRE(analysed == 0);
  const auto ls = nlohmann::json::parse(json)["outputs"].back()["large_signal"];
  CHECK(ls["height_v"].get<double>() >= 1.0);
  CHECK(ls["ddj_pp_s"].get<double>() <= 0.1e-12);
  // The planned tail currents are written as fixed values within their bounds (out: 2 .. 12 mA).
  Diagnostics d(written);
  const auto spec = read_chain_spec(written, d);
  REQUIRE(spec);
  for (const auto& s : spec->stages) {
    const auto* tail = s.find("tail_current");
    REQUIRE(tail);
    CHECK(tail->is_fixed());
    if (s.id == "out") CHECK((tail->value >= 2e-3 && tail->value <= 12e-3));
  }
  // derived: stage_value (the sweep's and the budget's chosen-value column) reads the resolved
  // stage's tail current, which is the written value.
  const auto resolved = resolve_chain(*spec, d);
  REQUIRE(resolved);
  CHECK(stage_value(resolved->stages.back(), "tail_current") == spec->stages.back().find("tail_current")->value);
  CHECK(std::isnan(stage_value(resolved->stages.back(), "no_such_key")));
}

TEST_CASE("planner: an output_swing beyond I_T Rd of the largest tail current is not met, exit 1") {
  // derived: the last pair's half-circuit current is bounded by +-I_T/2, so the settled output
  // levels by +-I_T Rd/2 and the differential eye height by I_T Rd: at most 3 mA x 100 ohm =
  // 300 mV, short of 400 mV whatever tail current in 1 .. 3 mA the planner picks.
  const TempDir dir("peakplan_limiting_infeasible");
  const auto file = (dir.path / "infeasible.toml").string();
  std::ofstream(file) << R"(
[signal]
bit_rate = "10 Gb/s"
swing = "100 mV"
[target]
output_swing = "400 mV"
[[stage]]
id = "la"
kind = "plain"
gm = "40 mS"
rd = "100 ohm"
c_load = "50 fF"
tail_current = { min = "2.1 mA", max = "3 mA" }
)";
  const auto [status, out] = run("plan " + file + " --json");
  CHECK(status == 1);
  const auto doc = nlohmann::json::parse(out);
  CHECK(doc["status"] == "not_met");
  CHECK(doc["binding"] == "output_swing");
}

TEST_CASE("planner: the global phase's starts draw a tia's Rf over its range and meet a transimpedance target") {
  // The shipped receiver (an invented scenario): Rf, the tia core's gm and Rd and two shunt
  // stages open, for a 5 kohm transimpedance target and no gain target.
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_optical_receiver.toml";
  Diagnostics d(path);
  const auto spec = read_chain_spec(path, d);
  REQUIRE(spec);
  const auto combo = combinations(*spec).front();
  const auto graph = build_stage_graph(*spec, d, &combo.counts);
  REQUIRE(graph);
  const Problem problem(*spec, combo, *graph);
  const auto& variables = problem.variables();
  const auto rf = std::find_if(variables.begin(), variables.end(), [](const Variable& v) { return v.key == "rf"; });
  REQUIRE(rf != variables.end());
  const size_t rf_index = static_cast<size_t>(rf - variables.begin());

  const auto cube = latin_hypercube(std::vector<double>(problem.start_dimensions(), 0.0),
                                    std::vector<double>(problem.start_dimensions(), 1.0), 16, 1234u);
  double rf_lo = rf->hi, rf_hi = rf->lo;
  int on_target = 0;
  for (const auto& point : cube) {
    const auto u = problem.start_point(point);
    const double r = rf->to_value(u[rf_index]);
    rf_lo = std::min(rf_lo, r);
    rf_hi = std::max(rf_hi, r);
    const Chain chain = problem.build(u);
    const double zt = std::fabs(output_cascade(chain, chain.outputs().back()).dc_value());
    on_target += std::fabs(20.0 * std::log10(zt / 5e3)) <= 0.05;
  }
  // Derived: Rf is drawn log-uniformly and 16 Latin-hypercube points put one in the lowest and
  // one in the highest sixteenth of the range, so they span at least 14/16 of it in log terms.
  CHECK(std::log(rf_hi / rf_lo) >= 0.875 * std::log(rf->hi / rf->lo));
  // The secant shift reaches 0.05 dB within its six steps unless an Rd bound stops it (derived:
  // the transimpedance is monotonic in the shift): measured, 14 of these 16 reach it and two
  // stop at an Rd bound. Without the shift the starts miss by 5-50 dB.
  CHECK(on_target >= 12);
}
