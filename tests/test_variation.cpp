// Process variation (docs/physics.md (process variation)): draws, corners, Monte Carlo statistics and yields,
// and the analyze output that carries them.
#include <doctest/doctest.h>

#include <cmath>
#include <cstdlib>
#include <fmt/format.h>
#include <nlohmann/json.hpp>
#include <numbers>
#include <set>

#include "cli_support.hpp"
#include "models/monte_carlo.hpp"
#include "models/variation.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/planner.hpp"
#include "planner/corner_envelope.hpp"
#include "planner/variation_analysis.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

struct Loaded {
  ChainSpec spec;
  Chain chain;
};

Loaded load(const std::string& text) {
  Diagnostics d("variation_test.toml");
  auto spec = parse_chain_spec(text, d);
  INFO(d.format());
  REQUIRE(spec);
  auto chain = resolve_chain(*spec, d);
  INFO(d.format());
  REQUIRE(chain);
  return {std::move(*spec), std::move(*chain)};
}

double normal_cdf(double x) { return 0.5 * std::erfc(-x / std::numbers::sqrt2); }

const MetricStats& stats_of(const VariationResult& r, std::string_view key) {
  for (const auto& s : r.monte_carlo->stats)
    if (s.key == key) return s.stats;
  FAIL("no statistics for " << key);
  throw std::logic_error("unreachable");
}

const CornerResult& corner_named(const VariationResult& r, const std::string& name) {
  for (const auto& c : r.corners)
    if (c.corner.name == name) return c;
  FAIL("no corner " << name);
  throw std::logic_error("unreachable");
}

// One plain stage: gm 20 mS, Rd 100 ohm, 50 fF on its drain, so f0 = 1/(2 pi Rd C) = 31.83 GHz.
constexpr const char* kPlainStage = R"(
[target]
bandwidth = "31 GHz"
[variation]
capacitance = { global = "8 %" }
distribution = "gaussian"
samples = 20000
seed = 7
corners = "none"
[[stage]]
id = "a1"
kind = "plain"
gm = "20 mS"
rd = "100 ohm"
c_out = "50 fF"
)";

// Two stages with explicit values everywhere (no designs, no Q-derived losses), so a corner can
// be re-analysed with --set of the same element values.
constexpr const char* kTwoStages = R"(
[signal]
bit_rate = "40 Gb/s"
[target]
gain = "14 dB"
bandwidth = "20 GHz"
[limits]
overshoot = "5 %"
peaking = "1 dB"
[variation]
gm = { global = "10 %", local = "2 %" }
capacitance = { global = "8 %", local = "1 %" }
inductance = { global = "4 %" }
resistance = { global = "15 %", local = "1 %" }
samples = 300
seed = 3
[[variation.corner]]
name = "slow"
gm = "-12 %"
capacitance = "+8 %"
inductance = "-4 %"
resistance = "+10 %"
[[stage]]
id = "a1"
kind = "shunt"
gm = "30 mS"
rd = "110 ohm"
l = "250 pH"
r_l = "6 ohm"
c_in = "30 fF"
c_out = "20 fF"
[[stage]]
id = "a2"
kind = "plain"
gm = "40 mS"
rd = "60 ohm"
c_in = "25 fF"
c_out = "15 fF"
c_load = "20 fF"
r_load = "400 ohm"
)";

}  // namespace

TEST_CASE("variation: one plain stage with a gaussian C spread has the bandwidth yield, mean and sigma the "
          "normal CDF and the delta method give") {
  // Derived (docs/references.md "Process variation"): C = C0 (1 + s z), z standard normal, s = 8 % / 3
  // (the spread is +-3 sigma). f = f0 / (1 + s z) exactly for a plain stage, so
  //   P(f >= B) = P(z <= (f0/B - 1)/s) = Phi((f0/B - 1)/s),
  // and to second order E[f] = f0 (1 + s^2), sd[f] = f0 s (the delta method).
  const auto loaded = load(kPlainStage);
  const auto r = analyze_variation(loaded.spec, loaded.chain, {std::nullopt, std::nullopt, 2, {}});
  REQUIRE(r.monte_carlo);
  const double f0 = 1.0 / (2.0 * std::numbers::pi * 100.0 * 50e-15);
  const double s = 0.08 / 3.0;
  const double bound = 31e9;
  const double expected = normal_cdf((f0 / bound - 1.0) / s);
  const int n = r.monte_carlo->samples;
  REQUIRE(n == 20000);
  REQUIRE(r.monte_carlo->yield.size() == 1);
  CHECK(r.monte_carlo->yield[0].name == "bandwidth");
  // The binomial 99 % interval of a fraction over n samples: +-2.576 sqrt(p (1 - p) / n).
  const double half_99 = 2.5758 * std::sqrt(expected * (1.0 - expected) / n);
  CHECK(std::fabs(r.monte_carlo->yield[0].fraction - expected) <= half_99);
  CHECK(std::fabs(r.monte_carlo->overall_yield - expected) <= half_99);
  const auto& bw = stats_of(r, "bandwidth_hz");
  // 1 % (the issue's bound): the Monte Carlo error of the sd is sd/sqrt(2n) = 0.5 % at n = 20,000,
  // and the delta method leaves out about 4 s^2 = 0.3 % (next term of the expansion of 1/(1 + x)).
  CHECK(bw.mean == doctest::Approx(f0 * (1.0 + s * s)).epsilon(0.01));
  CHECK(bw.std == doctest::Approx(f0 * s).epsilon(0.01));
  // The median of f0/(1 + s z) is f0 exactly (a monotone map of a symmetric z); its Monte Carlo
  // error is about 1.25 sd/sqrt(n) = 0.024 %: 0.2 % is eight of those.
  CHECK(bw.p50 == doctest::Approx(f0).epsilon(0.002));
  CHECK(bw.count == 20000u);
  // The Wilson interval brackets the estimate.
  CHECK(r.monte_carlo->ci95.lo < r.monte_carlo->overall_yield);
  CHECK(r.monte_carlo->ci95.hi > r.monte_carlo->overall_yield);
}

TEST_CASE("variation: with uniform global spreads the Monte Carlo extremes approach the extreme corners from "
          "inside") {
  // Derived: with global spreads only, a sample is a point of the box the extreme corners span.
  // DC gain rises with gm and bandwidth falls with C (both classes scale every stage alike), so
  // each metric is monotone in each offset and its extremes over the box are corners; the
  // samples lie inside, never outside. A uniform offset misses the edge of its range by more
  // than 1 % of the range with probability 0.99^n, about 2e-9 at n = 2000.
  auto text = std::string(kTwoStages);
  const auto cut = text.find("[variation]");
  text = text.substr(0, cut) + R"(
[variation]
gm = { global = "10 %" }
capacitance = { global = "8 %" }
distribution = "uniform"
samples = 2000
seed = 11
)" + text.substr(text.find("[[stage]]"));
  const auto loaded = load(text);
  const auto r = analyze_variation(loaded.spec, loaded.chain, {std::nullopt, std::nullopt, 2, {}});
  REQUIRE(r.corners.size() == 5);
  for (std::string key : {"dc_gain_db", "bandwidth_hz"}) {
    INFO("metric " << key);
    const CaseMetric* metric = nullptr;
    for (const auto* m : r.metrics)
      if (m->key == key) metric = m;
    REQUIRE(metric);
    double lo = INFINITY, hi = -INFINITY;
    for (const auto& c : r.corners) {
      lo = std::min(lo, metric->get(c.metrics));
      hi = std::max(hi, metric->get(c.metrics));
    }
    const auto& s = stats_of(r, key);
    const double range = hi - lo;
    REQUIRE(range > 0.0);
    // Inside, to the bisection tolerance of a bandwidth (1e-9 relative, common practice here).
    CHECK(s.min >= lo - 1e-9 * std::fabs(lo));
    CHECK(s.max <= hi + 1e-9 * std::fabs(hi));
    CHECK(s.min <= lo + 0.01 * range);
    CHECK(s.max >= hi - 0.01 * range);
  }
}

TEST_CASE("variation: corners = \"extremes\" of k classes gives 2^k corners plus nominal, each with its own signs") {
  // Derived: every +- combination of k global spreads; with k = 0 there is no combination to add
  // to the nominal case.
  for (int k = 0; k <= 3; ++k) {
    Variation v;
    const VariationClass classes[] = {VariationClass::gm, VariationClass::inductance, VariationClass::coupling};
    for (int j = 0; j < k; ++j) v.spread(classes[j]).global = 0.05;
    v.spread(VariationClass::resistance).local = 0.02;  // a local spread alone adds no corner
    const auto corners = extreme_corners(v);
    CHECK(corners.size() == (k == 0 ? 0 : size_t{1} << k));
    std::set<std::string> names;
    for (const auto& c : corners) {
      names.insert(c.name);
      for (int j = 0; j < k; ++j) CHECK(std::fabs(c.offset[static_cast<size_t>(classes[j])]) == 0.05);
      CHECK(c.offset[static_cast<size_t>(VariationClass::resistance)] == 0.0);
    }
    CHECK(names.size() == corners.size());
  }
  // Through the file: four classes with a global spread, one named corner: 16 + 1 + 1 cases.
  auto text = std::string(kTwoStages);
  const auto loaded = load(text);
  const auto r = analyze_variation(loaded.spec, loaded.chain, {1, std::nullopt, 1, {}});
  CHECK(r.corners.size() == 16 + 1 + 1);
  CHECK(r.corners.front().corner.name == "nominal");
  CHECK(r.corners[1].corner.name == "gm- C- L- R-");
  CHECK(r.corners.back().corner.name == "slow");
}

TEST_CASE("variation: analyze lists 2^k + 1 cases for k = 1 .. 5 classes with a global spread, and the nominal "
          "alone for k = 0") {
  // Derived: corners = "extremes" adds every +- combination of the k global spreads (2^k) to the
  // nominal case; local spreads add none. A T-coil stage makes coupling an element that moves.
  const char* spreads[] = {"gm = { global = \"10 %\" }", "capacitance = { global = \"8 %\" }",
                           "inductance = { global = \"4 %\" }", "resistance = { global = \"15 %\" }",
                           "coupling = { global = 0.02 }"};
  for (int k = 0; k <= 5; ++k) {
    CAPTURE(k);
    std::string table = "[variation]\nsamples = 1\ncorners = \"extremes\"\nresistance = { local = \"1 %\" }\n";
    if (k >= 4) table = "[variation]\nsamples = 1\ncorners = \"extremes\"\n";  // resistance then has a global spread
    for (int j = 0; j < k; ++j) table += std::string(spreads[j]) + "\n";
    const auto loaded = load(table + R"(
[[stage]]
id = "a1"
kind = "tcoil"
gm = "30 mS"
rd = "110 ohm"
c_in = "30 fF"
c_out = "20 fF"
l1 = "150 pH"
l2 = "150 pH"
k = 0.5
cb = "5 fF"
r_l1 = "2 ohm"
r_l2 = "2 ohm"
[[stage]]
id = "a2"
kind = "plain"
gm = "40 mS"
rd = "60 ohm"
c_out = "15 fF"
)");
    const auto r = analyze_variation(loaded.spec, loaded.chain, {1, std::nullopt, 1, {}});
    CHECK(r.corners.size() == (k == 0 ? 1u : (size_t{1} << k) + 1));
    std::set<std::string> names;
    for (const auto& c : r.corners) names.insert(c.corner.name);
    CHECK(names.size() == r.corners.size());  // no case listed twice
    CHECK(r.corners.front().corner.name == "nominal");
  }
}

TEST_CASE("variation: a named corner equals analyze --set of the same element values to 1e-12") {
  // Derived: the corner moves each resolved value by its factor; --set writes the same doubles
  // (printed with 17 significant digits, which read back exactly) into the file.
  TempDir dir;
  const auto path = dir.write("two.toml", kTwoStages);
  const auto loaded = load(kTwoStages);
  const auto r = analyze_variation(loaded.spec, loaded.chain, {1, std::nullopt, 1, {}});
  const auto& slow = corner_named(r, "slow");
  const Chain moved = apply_variation(loaded.chain, slow.corner.draw());

  std::vector<std::string> args{"analyze", path, "--json", "--samples", "1"};
  auto set = [&](const std::string& id, const char* key, double v) {
    args.push_back("--set");
    args.push_back(fmt::format("{}.{}={:.17g}", id, key, v));
  };
  for (const auto& s : moved.stages) {
    set(s.id, "gm", s.circuit.gm);
    set(s.id, "rd", s.circuit.rd);
    set(s.id, "c_in", s.c_in);
    set(s.id, "c_out", s.circuit.c_out);
    if (s.c_load > 0.0) set(s.id, "c_load", s.c_load);
    if (std::isfinite(s.circuit.r_load)) set(s.id, "r_load", s.circuit.r_load);
    if (s.circuit.kind == LoadKind::shunt) {
      set(s.id, "l", s.circuit.l);
      set(s.id, "r_l", s.circuit.r_l);
    }
  }
  const auto run = run_cli(args);
  INFO(run.err);
  REQUIRE(run.status == 0);
  const auto doc = nlohmann::json::parse(run.out);
  const auto& out = doc["outputs"].back();
  auto close = [](double a, double b) { return std::fabs(a - b) <= 1e-12 * std::max(std::fabs(a), std::fabs(b)); };
  CHECK(close(out["dc_gain_db"].get<double>(), to_db(slow.metrics.f.dc_gain)));
  CHECK(close(out["bandwidth_hz"].get<double>(), slow.metrics.f.bandwidth_hz));
  CHECK(close(out["peaking_db"].get<double>(), slow.metrics.f.peaking_db));
  CHECK(close(out["group_delay_ripple_s"].get<double>(), slow.metrics.f.group_delay_ripple_s));
  CHECK(close(out["overshoot_pct"].get<double>(), slow.metrics.t.overshoot_pct));
  CHECK(close(out["sag_db"].get<double>(), slow.metrics.f.sag_db));
  CHECK(close(out["eye"]["prbs_height"].get<double>(), slow.metrics.eye_height));
  CHECK(close(out["eye"]["prbs_width_ui"].get<double>(), slow.metrics.eye_width_ui));
  // The corner differs from nominal, so the comparison above is not nominal against nominal.
  CHECK_FALSE(close(r.corners.front().metrics.f.bandwidth_hz, slow.metrics.f.bandwidth_hz));
  // And the nominal corner equals the analysis of the file as written.
  const auto plain_run = run_cli({"analyze", path, "--json", "--samples", "1"});
  const auto plain = nlohmann::json::parse(plain_run.out);
  CHECK(close(plain["outputs"].back()["bandwidth_hz"].get<double>(), r.corners.front().metrics.f.bandwidth_hz));
  CHECK(close(plain["variation"]["corners"][0]["metrics"]["overshoot_pct"].get<double>(),
              plain["outputs"].back()["overshoot_pct"].get<double>()));
}

TEST_CASE("variation: the same seed gives byte-identical JSON on 1, 2 and 3 threads; another seed does not") {
  TempDir dir;
  const auto path = dir.write("two.toml", kTwoStages);
  auto run_with = [&](const char* threads, const char* seed) {
    ::setenv("PEAKPLAN_THREADS", threads, 1);
    auto run = run_cli({"analyze", path, "--json", "--seed", seed});
    ::unsetenv("PEAKPLAN_THREADS");
    REQUIRE(run.status == 0);
    return run.out;
  };
  const auto one = run_with("1", "5");
  CHECK(one == run_with("2", "5"));
  CHECK(one == run_with("3", "5"));
  CHECK(one != run_with("2", "6"));
  const auto doc = nlohmann::json::parse(one);
  const auto& mc = doc["variation"]["monte_carlo"];
  CHECK(mc["seed"] == 5);
  CHECK(mc["samples"] == 300);
  CHECK(mc["interval"] == "wilson");
  CHECK(mc["yield_ci95"].size() == 2);
  for (const auto* key : {"dc_gain_db", "bandwidth_hz", "overshoot_pct", "prbs_height", "prbs_width_ui"}) {
    INFO(key);
    const auto& s = mc["stats"][key];
    CHECK(s["min"].get<double>() <= s["p0_135"].get<double>());
    CHECK(s["p0_135"].get<double>() <= s["p50"].get<double>());
    CHECK(s["p50"].get<double>() <= s["p99_865"].get<double>());
    CHECK(s["p99_865"].get<double>() <= s["max"].get<double>());
  }
  CHECK(doc["variation"]["worst"].contains("bandwidth_hz"));
}

TEST_CASE("variation: sample draws depend only on (seed, index), and local offsets differ per copy of a counted stage") {
  Variation v;
  v.spread(VariationClass::gm) = {0.1, 0.05};
  const auto a = draw_sample(v, 9, 123, 4);
  const auto unrelated = draw_sample(v, 9, 5, 4);  // drawing another sample in between changes nothing
  const auto b = draw_sample(v, 9, 123, 4);
  CHECK(a.global == b.global);
  CHECK(a.local == b.local);
  CHECK(unrelated.global != a.global);
  CHECK(draw_sample(v, 10, 123, 4).global != a.global);

  const auto loaded = load(R"(
[[stage]]
id = "g"
kind = "plain"
gm = "20 mS"
rd = "100 ohm"
c_out = "10 fF"
count = 3
)");
  REQUIRE(loaded.chain.stages.size() == 3);
  const Chain moved = apply_variation(loaded.chain, a);
  const auto ci = static_cast<size_t>(VariationClass::gm);
  for (size_t i = 0; i < 3; ++i)
    CHECK(moved.stages[i].circuit.gm == doctest::Approx(0.02 * (1.0 + a.global[ci] + a.local[i][ci])).epsilon(1e-15));
  CHECK(moved.stages[0].circuit.gm != moved.stages[1].circuit.gm);
  CHECK(loaded.chain.stages[0].circuit.gm == 0.02);  // the nominal chain is untouched
}

TEST_CASE("variation: gaussian draws have the +-3 sigma spread's variance and uniform draws the half-width's") {
  // Derived: a gaussian spread S is 3 sigma, so var = (S/3)^2; a uniform half-width S has
  // var = S^2/3. Over n = 40,000 draws the sample variance has a relative error of about
  // sqrt(2/n) = 0.7 % (gaussian) and sqrt(0.8/n) = 0.45 % (uniform): 3 % bounds both.
  for (auto d : {Distribution::gaussian, Distribution::uniform}) {
    Variation v;
    v.distribution = d;
    v.spread(VariationClass::resistance).global = 0.15;
    std::vector<double> x;
    for (std::uint64_t i = 0; i < 40000; ++i)
      x.push_back(draw_sample(v, 1, i, 0).global[static_cast<size_t>(VariationClass::resistance)]);
    const auto s = metric_stats(x);
    const double expected_var = d == Distribution::gaussian ? 0.05 * 0.05 : 0.15 * 0.15 / 3.0;
    CHECK(s.std * s.std == doctest::Approx(expected_var).epsilon(0.03));
    CHECK(std::fabs(s.mean) < 4.0 * std::sqrt(expected_var / 40000.0));
    if (d == Distribution::uniform) {
      CHECK(s.min >= -0.15);
      CHECK(s.max <= 0.15);
    }
  }
}

TEST_CASE("variation: the Wilson score interval of 0 in 10 and 5 in 10") {
  // Derived from the Wilson formula (E. B. Wilson, JASA 22, 1927): for k = 0 the interval is
  // [0, z^2/(n + z^2)] = [0, 3.8415/13.8415] = [0, 0.27753]; for k = n/2 it is symmetric about 1/2
  // with half-width z sqrt(n/4 + z^2/4) / (n + z^2) = 1.96 * sqrt(2.5 + 0.9604) / 13.8415 = 0.26341.
  const auto none = wilson_interval(0, 10);
  CHECK(none.lo == doctest::Approx(0.0));
  CHECK(none.hi == doctest::Approx(0.27753).epsilon(1e-4));
  const auto half = wilson_interval(5, 10);
  CHECK(half.lo == doctest::Approx(0.5 - 0.26341).epsilon(1e-4));
  CHECK(half.hi == doctest::Approx(0.5 + 0.26341).epsilon(1e-4));
}

TEST_CASE("variation: analyze prints the corner table and the yield with its Wilson interval; --samples needs "
          "[variation]") {
  TempDir dir;
  const auto path = dir.write("two.toml", kTwoStages);
  const auto run = run_cli({"analyze", path, "--samples", "50"});
  INFO(run.err);
  REQUIRE(run.status == 0);
  CHECK(run.err.empty());  // no progress line when stderr is not a terminal
  CHECK(run.out.find("corners (main output") != std::string::npos);
  CHECK(run.out.find("slow ") != std::string::npos);
  CHECK(run.out.find("monte carlo (50 samples, seed 3") != std::string::npos);
  CHECK(run.out.find("95 % Wilson score interval") != std::string::npos);

  auto text = std::string(kTwoStages);
  text = text.substr(0, text.find("[variation]")) + text.substr(text.find("[[stage]]"));
  const auto bare = dir.write("bare.toml", text);
  const auto bad = run_cli({"analyze", bare, "--json", "--samples", "10"});
  CHECK(bad.status == 2);
  CHECK(bad.out.empty());
  CHECK(bad.err.find("--samples") != std::string::npos);
  CHECK(bad.err.find("no [variation]") != std::string::npos);
}

namespace {

// The two-stage chain with its load resistors and inductor left to the planner.
std::string two_stages_open(const std::string& plan_for) {
  std::string text = kTwoStages;
  auto replace = [&](const std::string& from, const std::string& to) {
    const auto at = text.find(from);
    REQUIRE(at != std::string::npos);
    text.replace(at, from.size(), to);
  };
  replace("rd = \"110 ohm\"", "rd = \"auto\"");
  replace("rd = \"60 ohm\"", "rd = \"auto\"");
  replace("l = \"250 pH\"", "l = \"auto\"");
  replace("[limits]", "plan_for = \"" + plan_for + "\"\n[limits]");
  return text;
}

// Plans `text`, writes the plan, analyzes the written file and returns the analysis document;
// `printed`, when given, receives what analyze prints (text) for the written file.
nlohmann::json plan_write_and_analyze(const std::string& text, Plan& plan, std::string* printed = nullptr) {
  Diagnostics d("corner_plan.toml");
  const auto spec = parse_chain_spec(text, d);
  REQUIRE(spec);
  auto planned = plan_chain(*spec, d);
  INFO(d.format());
  REQUIRE(planned);
  plan = *planned;
  TempDir dir;
  const auto written = dir.write("planned.toml", planned_chain_toml(*spec, plan));
  const auto run = run_cli({"analyze", written, "--json", "--samples", "200"});
  INFO(run.err);
  REQUIRE(run.status == 0);
  if (printed) {
    const auto shown = run_cli({"analyze", written, "--samples", "200"});
    REQUIRE(shown.status == 0);
    *printed = shown.out;
  }
  return nlohmann::json::parse(run.out);
}

void check_every_corner_met(const nlohmann::json& doc, size_t corners) {
  const auto& list = doc["variation"]["corners"];
  CHECK(list.size() == corners);
  for (const auto& c : list) {
    INFO("corner " << c["name"].get<std::string>());
    CHECK(c["met"] == true);
    CHECK_FALSE(c["checks"].empty());
    for (const auto& check : c["checks"]) {
      INFO("check " << check["name"].get<std::string>());
      CHECK(check["met"] == true);
    }
  }
}

}  // namespace

TEST_CASE("variation: a plan for corners, written and re-analysed, meets every check at every corner (a T-coil "
          "chain and a shunt chain)") {
  // The planner's own claim checked the way a user would: the written plan (every value fixed,
  // the [variation] table kept) analysed on its own, each corner measured like analyze measures.
  SUBCASE("the shipped T-coil example") {
    // The README's example: planned for corners, every corner meets every check, and analyze of
    // the plan prints the corner table and the yield with its interval.
    Plan plan;
    std::string printed;
    const auto doc = plan_write_and_analyze(read_file(std::string(PEAKPLAN_SOURCE_DIR) + "/chains/variation_post_amp.toml"),
                                            plan, &printed);
    CHECK(plan.termination == Plan::Termination::met);
    CHECK(plan.for_corners);
    CHECK(plan.corner_count == 10);  // 2^3 extremes of gm, C, R, nominal and "slow"
    CHECK_FALSE(plan.binding_corner.empty());
    check_every_corner_met(doc, 10);
    CHECK(printed.find("corners (main output; every target and limit checked at each)") != std::string::npos);
    CHECK(printed.find("10 of 10 corners meet every check") != std::string::npos);
    CHECK(printed.find("overall (every check)") != std::string::npos);
    CHECK(printed.find("(95 % Wilson score interval ") != std::string::npos);
    const auto& ci = doc["variation"]["monte_carlo"]["yield_ci95"];
    REQUIRE(ci.size() == 2);
    CHECK(ci[0].get<double>() <= doc["variation"]["monte_carlo"]["overall_yield"].get<double>());
    CHECK(doc["variation"]["monte_carlo"]["overall_yield"].get<double>() <= ci[1].get<double>());
  }
  SUBCASE("a shunt and a plain stage") {
    Plan plan;
    const auto doc = plan_write_and_analyze(two_stages_open("corners"), plan);
    CHECK(plan.termination == Plan::Termination::met);
    CHECK(plan.corner_count == 18);  // 2^4 extremes, nominal and "slow"
    REQUIRE(plan.nominal_checks.size() == plan.checks.size());
    for (size_t i = 0; i < plan.checks.size(); ++i) {
      // The worst corner is never better than nominal.
      CHECK(plan.checks[i].margin <= plan.nominal_checks[i].margin + 1e-12 * std::fabs(plan.checks[i].limit));
    }
    check_every_corner_met(doc, 18);

    // The same chain planned for nominal sits on the edge of a limit and misses it at some corner.
    Plan nominal;
    const auto nominal_doc = plan_write_and_analyze(two_stages_open("nominal"), nominal);
    CHECK(nominal.termination == Plan::Termination::met);
    CHECK_FALSE(nominal.for_corners);
    bool some_corner_fails = false;
    for (const auto& c : nominal_doc["variation"]["corners"]) some_corner_fails = some_corner_fails || c["met"] == false;
    CHECK(some_corner_fails);
  }
}

TEST_CASE("variation: a corner plan is the same on 1 and 2 threads (written file byte for byte, JSON but its time)") {
  // Derived: each corner is measured into its own slot (planner/plan_problem.cpp) and combined in
  // corner order, so the search sees the same numbers whatever the thread count.
  TempDir dir;
  const auto path = dir.write("open.toml", two_stages_open("corners"));
  auto plan_with = [&](const char* threads, const std::string& written) {
    ::setenv("PEAKPLAN_THREADS", threads, 1);
    auto run = run_cli({"plan", path, "--json", "--write", written});
    ::unsetenv("PEAKPLAN_THREADS");
    INFO(run.err);
    REQUIRE(run.status == 0);
    auto doc = nlohmann::json::parse(run.out);
    REQUIRE(doc.contains("plan_time_s"));
    doc.erase("plan_time_s");  // wall-clock time, the one thing that may differ
    return doc;
  };
  const auto one = plan_with("1", (dir.path / "one.toml").string());
  const auto two = plan_with("2", (dir.path / "two.toml").string());
  CHECK(one == two);
  CHECK(one["status"] == "met");
  CHECK(read_file(dir.path / "one.toml") == read_file(dir.path / "two.toml"));
}

TEST_CASE("variation: plan_for = \"corners\" without a [variation] table is bad input at plan_for") {
  TempDir dir;
  std::string text = two_stages_open("corners");
  text = text.substr(0, text.find("[variation]")) + text.substr(text.find("[[stage]]"));
  const auto path = dir.write("no_variation.toml", text);
  const auto run = run_cli({"plan", path, "--json"});
  CHECK(run.status == 2);
  CHECK(run.out.empty());
  const auto line = 1 + std::count(text.begin(), text.begin() + static_cast<long>(text.find("plan_for")), '\n');
  CHECK(run.err.rfind(path + ":" + std::to_string(line) + ":12: error: [target] plan_for = \"corners\" needs a [variation]", 0) == 0);
}

TEST_CASE("variation: sweep shows each point's worst corner and yield exactly as analyze --set of that point") {
  // common practice: a sweep row is the analysis of the chain with the point applied, so its
  // worst-corner values are the extreme of analyze's corners and its yield is analyze's overall
  // yield (same samples and seed: the samples depend only on the seed and their index).
  TempDir dir;
  const auto path = dir.write("two.toml", kTwoStages);
  const auto sweep = run_cli({"sweep", path, "--vary", "a2.rd=50ohm:70ohm:2", "--format", "json"});
  REQUIRE(sweep.status == 0);
  const auto rows = nlohmann::json::parse(sweep.out)["rows"];
  REQUIRE(rows.size() == 2);
  const char* points[] = {"50ohm", "70ohm"};
  for (size_t i = 0; i < 2; ++i) {
    CAPTURE(i);
    const auto run = run_cli({"analyze", path, "--json", "--set", std::string("a2.rd=") + points[i]});
    REQUIRE(run.status == 0);
    const auto variation = nlohmann::json::parse(run.out)["variation"];
    const auto& v = rows[i]["variation"];
    CHECK(v["corners"] == variation["corners"].size());
    CHECK(v["overall_yield"].get<double>() == variation["monte_carlo"]["overall_yield"].get<double>());
    for (const auto* key : {"dc_gain_db", "bandwidth_hz", "overshoot_pct", "group_delay_ripple_s", "prbs_height"}) {
      CAPTURE(key);
      const bool higher_is_worse = std::string(key) == "overshoot_pct" || std::string(key) == "group_delay_ripple_s";
      double worst = variation["corners"][0]["metrics"][key].get<double>();
      for (const auto& c : variation["corners"]) {
        const double x = c["metrics"][key].get<double>();
        worst = higher_is_worse ? std::max(worst, x) : std::min(worst, x);
      }
      CHECK(v["worst"][key].get<double>() == doctest::Approx(worst).scale(0.0).epsilon(1e-12));
    }
  }
  // The text table carries the same columns beside the nominal ones.
  const auto text = run_cli({"sweep", path, "--vary", "a2.rd=50ohm:70ohm:2"});
  REQUIRE(text.status == 0);
  CHECK(text.out.find("worst gain") != std::string::npos);
  CHECK(text.out.find("yield") != std::string::npos);
}

TEST_CASE("variation: compare shows each file's worst corner and yield as analyze reports them") {
  // common practice: compare reads each side's own analysis, so its worst-corner values are the
  // values at the corners analyze --json names in `worst`, and its yield is analyze's.
  TempDir dir;
  const auto a = dir.write("a.toml", kTwoStages);
  auto text = std::string(kTwoStages);
  text.replace(text.find("rd = \"60 ohm\""), 13, "rd = \"70 ohm\"");
  const auto b = dir.write("b.toml", text);
  const auto run = run_cli({"compare", a, b, "--json"});
  REQUIRE(run.status == 0);
  const auto v = nlohmann::json::parse(run.out)["variation"];
  for (const auto& [side, path] : {std::pair{"a", a}, std::pair{"b", b}}) {
    CAPTURE(side);
    const auto analyzed = run_cli({"analyze", path, "--json"});
    REQUIRE(analyzed.status == 0);
    const auto variation = nlohmann::json::parse(analyzed.out)["variation"];
    CHECK(v["overall_yield"][side].get<double>() == variation["monte_carlo"]["overall_yield"].get<double>());
    for (const auto* key : {"dc_gain_db", "bandwidth_hz", "overshoot_pct"}) {
      CAPTURE(key);
      const auto corner = variation["worst"][key].get<std::string>();
      CHECK(v["worst"][key][std::string(side) + "_corner"] == corner);
      for (const auto& c : variation["corners"])
        if (c["name"] == corner) CHECK(v["worst"][key][side].get<double>() == c["metrics"][key].get<double>());
    }
  }
  const auto shown = run_cli({"compare", a, b});
  REQUIRE(shown.status == 0);
  CHECK(shown.out.find("at the worst corner") != std::string::npos);
  CHECK(shown.out.find("yield (every check)") != std::string::npos);
}

TEST_CASE("variation: the per-sample values a report draws are in sample order, the same for every thread count, "
          "and their statistics are the summary's") {
  // Derived: sample i is measured from its own draw (models/monte_carlo.hpp), so the list
  // gathered by index cannot depend on the threads; the stats are metric_stats of that list.
  const auto loaded = load(kPlainStage);
  const auto one = analyze_variation(loaded.spec, loaded.chain, {500, std::nullopt, 1, {}});
  const auto three = analyze_variation(loaded.spec, loaded.chain, {500, std::nullopt, 3, {}});
  REQUIRE(one.monte_carlo);
  REQUIRE(three.monte_carlo);
  REQUIRE(one.monte_carlo->stats.size() == three.monte_carlo->stats.size());
  for (size_t i = 0; i < one.monte_carlo->stats.size(); ++i) {
    const auto& a = one.monte_carlo->stats[i];
    INFO(a.key);
    CHECK(a.values.size() == 500);
    CHECK(a.values == three.monte_carlo->stats[i].values);
    const auto again = metric_stats(a.values);
    CHECK(again.count == a.stats.count);
    if (again.count > 0) CHECK(again.mean == a.stats.mean);
  }
}

TEST_CASE("variation: the corner envelope a report draws contains the nominal curve at every point and spreads with C") {
  // Derived: the nominal is one of the corners and is read on its own grid exactly, so
  // lo <= nominal <= hi at every point; the C spread of this file moves the plain stage's pole
  // (f = 1/(2 pi R C)), so far beyond the bandwidth |H| ~ gm/(2 pi f C) and the C- and C+
  // corners differ by 20 log10(1.08/0.92) = 1.39 dB; more than 1 dB is asked.
  std::string text = kPlainStage;
  const auto at = text.find("corners = \"none\"");
  REQUIRE(at != std::string::npos);
  text.replace(at, 16, "corners = \"extremes\"");
  const auto loaded = load(text);
  const auto r = analyze_variation(loaded.spec, loaded.chain, {1, std::nullopt, 1, {}});
  const auto options = analysis_options(loaded.spec);
  const auto nominal = analyze_chain(loaded.chain, options);
  const auto e = corner_envelope(r, loaded.chain, nominal, options);
  CHECK(e.corners == static_cast<int>(r.corners.size()));
  REQUIRE(e.frequency_hz.size() == e.magnitude_db.size());
  REQUIRE(e.time_s.size() == e.step.size());
  double widest = 0.0;
  for (size_t k = 0; k < e.frequency_hz.size(); ++k) {
    CHECK(e.magnitude_lo_db[k] <= e.magnitude_db[k]);
    CHECK(e.magnitude_db[k] <= e.magnitude_hi_db[k]);
    widest = std::max(widest, e.magnitude_hi_db[k] - e.magnitude_lo_db[k]);
  }
  for (size_t k = 0; k < e.time_s.size(); ++k) {
    CHECK(e.step_lo[k] <= e.step[k]);
    CHECK(e.step[k] <= e.step_hi[k]);
  }
  CHECK(widest > 1.0);
}

namespace {

// kPlainStage with its C+ and C- extremes: three cases whose poles sit at f0/1.08, f0 and f0/0.92.
std::string plain_stage_extremes() {
  std::string text = kPlainStage;
  const auto at = text.find("corners = \"none\"");
  REQUIRE(at != std::string::npos);
  text.replace(at, 16, "corners = \"extremes\"");
  return text;
}

}  // namespace

TEST_CASE("variation: the corner envelope holds every corner at every point of the nominal grid, the first and the "
          "last included") {
  // Derived: the plain stage is -gm Rd / (1 + s Rd C), so a corner moving C by the offset o has
  //   |H(f)| = gm Rd / sqrt(1 + (2 pi f Rd C0 (1 + o))^2)
  // and, divided by its DC gain, the step 1 - exp(-t / (Rd C0 (1 + o))). The band at each point
  // must be the least and greatest of the three corners' values there. The C- corner's own
  // natural span starts above the nominal grid's first point (its pole is higher), so a corner
  // read off its own grid would be missing there: the check below makes sure of that first.
  const auto loaded = load(plain_stage_extremes());
  const auto r = analyze_variation(loaded.spec, loaded.chain, {1, std::nullopt, 1, {}});
  REQUIRE(r.corners.size() == 3);
  const auto options = analysis_options(loaded.spec);
  const auto nominal = analyze_chain(loaded.chain, options);
  const auto e = corner_envelope(r, loaded.chain, nominal, options);
  REQUIRE(e.frequency_hz.size() >= 2);
  REQUIRE(e.time_s.size() >= 2);

  const double gm = 0.02, rd = 100.0, c0 = 50e-15;
  std::vector<double> offsets;
  bool some_corner_starts_higher = false;
  for (const auto& c : r.corners) {
    offsets.push_back(c.corner.offset[static_cast<size_t>(VariationClass::capacitance)]);
    const auto own = analyze_chain(apply_variation(loaded.chain, c.corner.draw()), options);
    some_corner_starts_higher = some_corner_starts_higher ||
                                own.outputs.back().response.sampled.frequency_hz.front() > e.frequency_hz.front();
  }
  CHECK(some_corner_starts_higher);

  auto band_of = [&](auto value) {
    double lo = INFINITY, hi = -INFINITY;
    for (double o : offsets) {
      lo = std::min(lo, value(o));
      hi = std::max(hi, value(o));
    }
    return std::pair{lo, hi};
  };
  // The nodal solve of a one-node circuit is exact to rounding (about 1e-15 relative, 1e-14 dB):
  // 1e-9 dB leaves room and is far below the 0.007 dB the C- corner moves the first point by.
  for (size_t k = 0; k < e.frequency_hz.size(); ++k) {
    const double f = e.frequency_hz[k];
    const auto [lo, hi] = band_of([&](double o) {
      const double x = 2.0 * std::numbers::pi * f * rd * c0 * (1.0 + o);
      return 20.0 * std::log10(gm * rd / std::sqrt(1.0 + x * x));
    });
    INFO("f = " << f);
    CHECK(std::fabs(e.magnitude_lo_db[k] - lo) <= 1e-9);
    CHECK(std::fabs(e.magnitude_hi_db[k] - hi) <= 1e-9);
  }
  // The step: each corner's record is read by linear interpolation, whose error is at most
  // dt^2 max|y''| / 8 = (dt/tau)^2 / 8 <= (12/4000)^2 / 8 = 1.1e-6 (models/step_response.cpp:
  // dt <= duration/4000, duration = 14 tau); past its own record (14 tau of the C- corner, shorter
  // than the nominal's) a corner holds its last value, within e^-14 = 8.3e-7 of 1. 1e-5 bounds
  // both with the time-stepping's own error.
  for (size_t k = 0; k < e.time_s.size(); ++k) {
    const double t = e.time_s[k];
    const auto [lo, hi] = band_of([&](double o) { return 1.0 - std::exp(-t / (rd * c0 * (1.0 + o))); });
    INFO("t = " << t);
    CHECK(std::fabs(e.step_lo[k] - lo) <= 1e-5);
    CHECK(std::fabs(e.step_hi[k] - hi) <= 1e-5);
  }
}

TEST_CASE("variation: the report's magnitude envelope spans the frequencies of its magnitude plot") {
  // Derived: both plots draw the same chain's main output, so a reader lays one over the other;
  // corners_magnitude.svg is given magnitude.svg's frequency axis (reports/plots.hpp
  // plotted_frequency_span), which ends at the decade above five times the widest bandwidth,
  // not at the top of the sampled grid (a decade above the chain's highest root). The demo
  // chain's T-coil puts that top at 3 THz, past the 1 THz the magnitude plot stops at.
  TempDir dir;
  const auto path = dir.write("demo.toml", read_file(std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml") +
                                               "\n[variation]\ncapacitance = { global = \"8 %\" }\n");
  const auto out = dir.path / "report";
  const auto run = run_cli({"report", path, "--out", out.string(), "--samples", "20"});
  INFO(run.err);
  REQUIRE(run.status == 0);
  auto x_domain = [&](const char* file) {
    const auto svg = read_file(out / file);
    const auto at = svg.find("data-x-domain=\"");
    REQUIRE(at != std::string::npos);
    const auto from = at + 15;
    return svg.substr(from, svg.find('"', from) - from);
  };
  const auto envelope = x_domain("corners_magnitude.svg");
  CHECK(envelope == x_domain("magnitude.svg"));
  // The sampled grid runs past the axis, so an envelope drawn over its own grid would not match.
  const auto doc = nlohmann::json::parse(read_file(out / "result.json"));
  const double grid_top = doc["outputs"].back()["response"]["frequency_hz"].back().get<double>();
  const double top = std::stod(envelope.substr(envelope.find(' ') + 1));
  CHECK(grid_top > 2.0 * top);
}
