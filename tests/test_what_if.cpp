// What-if tools through the real executable: --set against a hand-edited copy, override
// errors named by their option, --lock against the plan it locks to, compare against two
// analyses, sweep against analyze --set at every point and against the first-order pole.
// Plan values are never hard-coded: every plan check compares with a plan made in the test.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <numbers>
#include <sstream>
#include <string>
#include <vector>

#include "cli_json.hpp"

using nlohmann::json;
using namespace peakplan::test;

namespace {

// Every number of `a` equals the one at the same place in `b` to `relative`; every other
// value is equal. Reports the first difference by its JSON path.
void check_same_json(const json& a, const json& b, double relative, const std::string& path = "") {
  if (a.is_number() && b.is_number()) {
    CHECK_MESSAGE(close(a.get<double>(), b.get<double>(), relative), path << ": " << a << " vs " << b);
    return;
  }
  REQUIRE_MESSAGE(a.type() == b.type(), path << ": " << a << " vs " << b);
  if (a.is_object()) {
    REQUIRE_MESSAGE(a.size() == b.size(), path);
    for (auto it = a.begin(); it != a.end(); ++it) {
      REQUIRE_MESSAGE(b.contains(it.key()), path << "/" << it.key());
      check_same_json(it.value(), b.at(it.key()), relative, path + "/" + it.key());
    }
  } else if (a.is_array()) {
    REQUIRE_MESSAGE(a.size() == b.size(), path);
    for (size_t i = 0; i < a.size(); ++i) check_same_json(a[i], b[i], relative, path + "/" + std::to_string(i));
  } else {
    CHECK_MESSAGE(a == b, path << ": " << a << " vs " << b);
  }
}

// A small fixed chain, written for these tests (not a design): a shunt-peaked stage driving a
// plain one, with a signal so that eyes are computed. `rd1` is s1's Rd as written.
std::string two_stage_chain(const std::string& rd1, const std::string& extra = "") {
  return R"([chain]
name = "what-if test chain"
[input]
r_source = "50 ohm"
[signal]
bit_rate = "25 Gb/s"
pattern = "prbs7"
[[stage]]
id = "s1"
kind = "shunt"
gm = "30 mS"
rd = ")" + rd1 + R"("
c_in = "20 fF"
c_out = "10 fF"
l = "0.2 nH"
[[stage]]
id = "buffer"
kind = "plain"
gm = "20 mS"
rd = "60 ohm"
c_in = "15 fF"
c_out = "8 fF"
c_load = "30 fF"
)" + extra;
}

// Two plain stages whose Rd the planner chooses for the widest bandwidth at a gain target.
std::string two_open_stages(const std::string& gain) {
  return R"([chain]
name = "two open stages"
[target]
gain = ")" + gain + R"("
objective = "widest"
[[stage]]
id = "a"
kind = "plain"
gm = "20 mS"
rd = "auto"
c_in = "30 fF"
c_out = "20 fF"
[[stage]]
id = "b"
kind = "plain"
gm = "20 mS"
rd = "auto"
c_in = "30 fF"
c_out = "20 fF"
c_load = "50 fF"
)";
}

double chosen(const json& plan, const std::string& id, const std::string& key) {
  for (const auto& c : plan.at("chosen"))
    if (c.at("id") == id) return c.at("values").at(key).get<double>();
  FAIL("no chosen values for stage " << id);
  return 0.0;
}

const json& main_output(const json& analysis) { return analysis.at("outputs").back(); }

}  // namespace

TEST_CASE("what-if: --set changes exactly that value, as a hand edit of the file would") {
  TempDir scratch("peakplan_what_if");
  const auto original = scratch.write("original.toml", two_stage_chain("100 ohm"));
  const auto edited = scratch.write("edited.toml", two_stage_chain("80 ohm"));
  const auto by_hand = run_json({"analyze", edited, "--json"});
  // Unquoted, TOML-quoted and plain-number spellings of the same value (plain numbers are SI).
  for (const std::string set : {"s1.rd=80ohm", "s1.rd=\"80 ohm\"", "s1.rd=80"}) {
    CAPTURE(set);
    const auto overridden = run_json({"analyze", original, "--json", "--set", set});
    // Both are the same computation on the same numbers: equal to rounding (1e-12).
    check_same_json(overridden, by_hand, 1e-12);
  }
  // The override did change something: s1's bandwidth differs from the file as written.
  const auto as_written = run_json({"analyze", original, "--json"});
  CHECK_FALSE(close(as_written["stages"][0]["bandwidth_hz"].get<double>(),
                    by_hand["stages"][0]["bandwidth_hz"].get<double>(), 1e-3));
  // A table key: [input] r_source set to 0 equals a file without the source resistance.
  std::string no_source = two_stage_chain("100 ohm");
  no_source.replace(no_source.find("r_source = \"50 ohm\""), 19, "r_source = 0");
  const auto ideal_drive = run_json({"analyze", scratch.write("ideal.toml", no_source), "--json"});
  check_same_json(run_json({"analyze", original, "--json", "--set", "input.r_source=0ohm"}), ideal_drive, 1e-12);
}

TEST_CASE("what-if: a bad override names the override, exits 2 and prints nothing on stdout") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("chain.toml", two_stage_chain("100 ohm"));
  const auto bad_value = run_cli({"analyze", chain, "--set", "s1.rd=80x"});
  CHECK(bad_value.status == 2);
  CHECK(bad_value.out.empty());
  CHECK(bad_value.err.rfind("--set s1.rd=80x: error: stage 's1': rd: ", 0) == 0);

  const auto unknown_id = run_cli({"analyze", chain, "--set", "bufer.rd=50"});
  CHECK(unknown_id.status == 2);
  CHECK(unknown_id.out.empty());
  CHECK(unknown_id.err.find("--set bufer.rd=50: error:") == 0);
  CHECK(unknown_id.err.find("did you mean 'buffer'?") != std::string::npos);

  const auto unknown_table = run_cli({"analyze", chain, "--set", "signl.bit_rate=10Gb/s"});
  CHECK(unknown_table.status == 2);
  CHECK(unknown_table.err.find("did you mean 'signal'?") != std::string::npos);

  const auto unknown_key = run_cli({"analyze", chain, "--set", "buffer.rdd=50"});
  CHECK(unknown_key.status == 2);
  CHECK(unknown_key.err.find("--set buffer.rdd=50: error: stage 'buffer': unknown key 'rdd'; did you mean 'rd'?") == 0);

  const auto malformed = run_cli({"analyze", chain, "--set", "s1rd=80"});
  CHECK(malformed.status == 2);
  CHECK(malformed.err.find("--set s1rd=80: error: expected ID.KEY=VALUE") == 0);

  const auto unknown_lock = run_cli({"plan", chain, "--lock", "bufer"});
  CHECK(unknown_lock.status == 2);
  CHECK(unknown_lock.out.empty());
  CHECK(unknown_lock.err.find("--lock bufer: error:") == 0);
  CHECK(unknown_lock.err.find("did you mean 'buffer'?") != std::string::npos);
}

TEST_CASE("what-if: --lock holds the locked stage at the baseline plan while a --set moves the rest") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("open.toml", two_open_stages("20 dB"));
  const auto baseline = run_json({"plan", chain, "--json"});
  REQUIRE(baseline["status"] == "met");

  // 6 dB more gain with stage a locked: a keeps the baseline's Rd to rounding (the lock
  // writes the plan's values at full precision), b takes all of it.
  const auto locked = run_json({"plan", chain, "--json", "--lock", "a", "--set", "target.gain=26dB"});
  REQUIRE(locked["status"] == "met");
  CHECK(close(chosen(locked, "a", "rd"), chosen(baseline, "a", "rd"), 1e-12));
  // Derived: a plain stage's DC gain is gm*Rd, and a's gain is fixed, so b's Rd must rise by
  // the whole 6 dB, 10^(6/20) = 1.995; the widest plan sits on the gain minimum (more Rd only
  // costs bandwidth), so the ratio is met closely (1 %).
  CHECK(chosen(locked, "b", "rd") / chosen(baseline, "b", "rd") == doctest::Approx(std::pow(10.0, 6.0 / 20.0)).epsilon(0.01));
  CHECK(main_output(locked)["dc_gain_db"].get<double>() >= 26.0 - 1e-6);

  // Without the lock the same --set moves a too (so the lock is what held it).
  const auto free = run_json({"plan", chain, "--json", "--set", "target.gain=26dB"});
  CHECK_FALSE(close(chosen(free, "a", "rd"), chosen(baseline, "a", "rd"), 0.01));

  // A --set on a locked stage wins over the lock for that key.
  const auto overridden = run_json({"plan", chain, "--json", "--lock", "a", "--set", "a.rd=150ohm"});
  CHECK(chosen(overridden, "a", "rd") == doctest::Approx(150.0).epsilon(1e-12));
}

TEST_CASE("what-if: compare's deltas are the differences of the two analyses; a stage only in B is shown") {
  TempDir scratch("peakplan_what_if");
  const auto a = scratch.write("a.toml", two_stage_chain("100 ohm"));
  const auto b = scratch.write("b.toml", two_stage_chain("80 ohm", R"([[stage]]
id = "extra"
kind = "plain"
gm = "20 mS"
rd = "50 ohm"
c_in = "10 fF"
c_out = "5 fF"
)"));
  const auto analysis_a = run_json({"analyze", a, "--json"});
  const auto analysis_b = run_json({"analyze", b, "--json"});
  const auto doc = run_json({"compare", a, b, "--json"});

  CHECK(doc["a"]["planned"] == false);
  CHECK(doc["b"]["main_output"] == "extra");
  const auto& oa = main_output(analysis_a);
  const auto& ob = main_output(analysis_b);
  for (const std::string key : {"dc_gain_db", "bandwidth_hz", "peaking_db", "group_delay_s", "group_delay_ripple_s",
                                "overshoot_pct", "rise_time_s"}) {
    CAPTURE(key);
    const auto& m = doc["metrics"][key];
    CHECK(close(m["a"].get<double>(), oa[key].get<double>(), 1e-9));
    CHECK(close(m["b"].get<double>(), ob[key].get<double>(), 1e-9));
    const double expected = ob[key].get<double>() - oa[key].get<double>();
    CHECK(std::fabs(m["delta"].get<double>() - expected) <= 1e-9 * std::max(std::fabs(expected), 1e-30));
  }
  for (const std::string key : {"pda_height", "prbs_height", "prbs_width_ui"}) {
    CAPTURE(key);
    const double expected = ob["eye"][key].get<double>() - oa["eye"][key].get<double>();
    CHECK(std::fabs(doc["metrics"][key]["delta"].get<double>() - expected) <= 1e-9 * std::max(std::fabs(expected), 1e-30));
  }
  // Relative change of the bandwidth: 100 (B - A) / A.
  const double bw_a = oa["bandwidth_hz"].get<double>(), bw_b = ob["bandwidth_hz"].get<double>();
  CHECK(close(doc["metrics"]["bandwidth_hz"]["relative_pct"].get<double>(), 100.0 * (bw_b - bw_a) / bw_a, 1e-9));

  REQUIRE(doc["stages"].size() == 3);
  CHECK(doc["stages"][0]["id"] == "s1");
  CHECK(doc["stages"][0]["in"] == "both");
  CHECK(close(doc["stages"][0]["delta"]["rd"]["delta"].get<double>(), -20.0, 1e-12));
  const double stage_bw_delta = analysis_b["stages"][0]["bandwidth_hz"].get<double>() -
                                analysis_a["stages"][0]["bandwidth_hz"].get<double>();
  CHECK(close(doc["stages"][0]["delta"]["bandwidth_hz"]["delta"].get<double>(), stage_bw_delta, 1e-9));
  CHECK(doc["stages"][2]["id"] == "extra");
  CHECK(doc["stages"][2]["in"] == "b_only");
  CHECK(doc["stages"][2]["a"].is_null());
  CHECK(doc["stages"][2]["b"]["kind"] == "plain");

  const auto text = run_cli({"compare", a, b});
  CHECK(text.status == 0);
  CHECK(text.out.find("extra    only in B: plain") != std::string::npos);
}

TEST_CASE("what-if: compare lists every setting the files differ in and warns when the signals differ") {
  TempDir scratch("peakplan_what_if");
  std::string other = two_stage_chain("100 ohm");
  // Two changes the metrics alone would hide: the source resistance and the bit rate.
  other.replace(other.find("\"50 ohm\""), 8, "\"60 ohm\"");
  other.replace(other.find("\"25 Gb/s\""), 9, "\"26.5625 Gb/s\"");
  other.replace(other.find("c_load = \"30 fF\""), 16, "c_load = \"30 fF\"\nr_load = \"1 kohm\"");
  const auto a = scratch.write("a.toml", two_stage_chain("100 ohm"));
  const auto b = scratch.write("b.toml", other);
  const auto doc = run_json({"compare", a, b, "--json"});
  REQUIRE(doc["settings"].size() == 3);
  CHECK(doc["settings"][0]["key"] == "input.r_source");
  CHECK(doc["settings"][0]["a"] == "\"50 ohm\"");
  CHECK(doc["settings"][0]["b"] == "\"60 ohm\"");
  CHECK(doc["settings"][1]["key"] == "signal.bit_rate");
  CHECK(doc["settings"][2]["key"] == "stage buffer.r_load");
  CHECK(doc["settings"][2]["a"].is_null());
  CHECK(doc["signals_differ"] == true);
  const auto text = run_cli({"compare", a, b});
  CHECK(text.out.find("\"25 Gb/s\"") != std::string::npos);
  CHECK(text.out.find("26.5625 Gb/s") != std::string::npos);
  CHECK(text.out.find("driven by different signals") != std::string::npos);

  const auto same = run_json({"compare", a, a, "--json"});
  CHECK(same["settings"].empty());
  CHECK(same["signals_differ"] == false);
  CHECK(run_cli({"compare", a, a}).out.find("different signals") == std::string::npos);

  // A file and its own written form (numbers in SI where it wrote units) differ in nothing.
  std::string numeric = two_stage_chain("100 ohm");
  numeric.replace(numeric.find("\"50 ohm\""), 8, "50.0");
  numeric.replace(numeric.find("\"25 Gb/s\""), 9, "25e9");
  numeric.replace(numeric.find("\"30 fF\""), 7, "3.0000000000000004e-14");
  const auto in_numbers = run_json({"compare", a, scratch.write("numeric.toml", numeric), "--json"});
  CHECK(in_numbers["settings"].empty());
  // The same of the file's complete written form, which also writes out the defaults it left.
  const auto written = (scratch.path / "written.toml").string();
  REQUIRE(run_cli({"plan", a, "--write", written}).status == 0);
  const auto complete = run_json({"compare", a, written, "--json"});
  CHECK(complete["settings"].empty());
  CHECK(complete["signals_differ"] == false);
  // A real change to a float is shown to 9 digits, not as the writer's round-trip digits.
  numeric.replace(numeric.find("3.0000000000000004e-14"), 22, "3.1000000000000004e-14");
  const auto changed = run_json({"compare", a, scratch.write("changed.toml", numeric), "--json"});
  REQUIRE(changed["settings"].size() == 1);
  CHECK(changed["settings"][0]["b"] == "3.1e-14");
}

TEST_CASE("what-if: compare plans a file with open values first and says so") {
  TempDir scratch("peakplan_what_if");
  const auto fixed = scratch.write("fixed.toml", two_stage_chain("100 ohm"));
  const auto open = scratch.write("open.toml", two_open_stages("20 dB"));
  const auto plan = run_json({"plan", open, "--json"});
  const auto doc = run_json({"compare", fixed, open, "--json"});
  CHECK(doc["b"]["planned"] == true);
  CHECK(doc["b"]["status"] == plan["status"]);
  CHECK(close(doc["metrics"]["bandwidth_hz"]["b"].get<double>(), main_output(plan)["bandwidth_hz"].get<double>(), 1e-12));
  const auto text = run_cli({"compare", fixed, open});
  CHECK(text.out.find("planned first") != std::string::npos);
}

TEST_CASE("what-if: every sweep row equals analyze --set at that point") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("chain.toml", two_stage_chain("100 ohm"));
  const auto sweep = run_json({"sweep", chain, "--vary", "s1.rd=60ohm:140ohm:3", "--format", "json"});
  REQUIRE(sweep["rows"].size() == 3);
  const double expected_values[] = {60.0, 100.0, 140.0};  // linear from START to STOP
  for (size_t i = 0; i < 3; ++i) {
    const auto& row = sweep["rows"][i];
    CHECK(row["value"].get<double>() == doctest::Approx(expected_values[i]).epsilon(1e-12));
    char value[64];
    std::snprintf(value, sizeof value, "%.17g", row["value"].get<double>());
    const auto analysis = run_json({"analyze", chain, "--json", "--set", std::string("s1.rd=") + value});
    const auto& out = main_output(analysis);
    for (const std::string key : {"dc_gain_db", "bandwidth_hz", "peaking_db", "overshoot_pct", "group_delay_ripple_s"}) {
      CAPTURE(key);
      CHECK(close(row[key].get<double>(), out[key].get<double>(), 1e-12));
    }
    CHECK(close(row["prbs_height"].get<double>(), out["eye"]["prbs_height"].get<double>(), 1e-12));
  }

  const auto csv = run_cli({"sweep", chain, "--vary", "s1.rd=60ohm:140ohm:5", "--format", "csv"});
  REQUIRE(csv.status == 0);
  std::istringstream lines(csv.out);
  std::string header, line;
  std::getline(lines, header);
  CHECK(header == "s1.rd,dc_gain_db,bandwidth_hz,peaking_db,overshoot_pct,group_delay_ripple_s,prbs_height");
  int rows = 0;
  while (std::getline(lines, line)) {
    ++rows;
    CHECK(std::count(line.begin(), line.end(), ',') == std::count(header.begin(), header.end(), ','));
  }
  CHECK(rows == 5);
}

TEST_CASE("what-if: a swept single plain stage's bandwidth follows 1/(2 pi Rd C)") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("one.toml", R"([chain]
name = "one plain stage"
[[stage]]
id = "s1"
kind = "plain"
gm = "20 mS"
rd = "100 ohm"
c_load = "100 fF"
)");
  const auto sweep = run_json({"sweep", chain, "--vary", "s1.rd=50:200:4", "--format", "json"});
  REQUIRE(sweep["rows"].size() == 4);
  for (const auto& row : sweep["rows"]) {
    const double rd = row["value"].get<double>();
    // Derived: gm into Rd || C is the single pole 1/(Rd C); |H| = gm Rd / sqrt(1 + (w Rd C)^2)
    // falls 3 dB at f = 1/(2 pi Rd C), and the DC gain is gm Rd. The bandwidth is solved on the
    // exact rational (measured error below 1e-14), so 1e-9 is generous.
    CHECK(close(row["bandwidth_hz"].get<double>(), 1.0 / (2.0 * std::numbers::pi * rd * 100e-15), 1e-9));
    CHECK(row["dc_gain_db"].get<double>() == doctest::Approx(20.0 * std::log10(0.02 * rd)).epsilon(1e-12));
  }
}

TEST_CASE("what-if: sweep --replan re-plans every point and reports status and the open values") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("open.toml", two_open_stages("20 dB"));
  const auto sweep =
      run_json({"sweep", chain, "--vary", "target.gain=14dB:26dB:3", "--replan", "--format", "json"});
  REQUIRE(sweep["rows"].size() == 3);
  REQUIRE(sweep["open"].size() == 2);
  CHECK(sweep["open"][0]["id"] == "a");
  CHECK(sweep["open"][0]["key"] == "rd");
  for (const auto& row : sweep["rows"]) {
    const double gain = row["value"].get<double>();
    // Each point equals a plan of the file with the gain set there.
    char value[64];
    std::snprintf(value, sizeof value, "target.gain=%.17gdB", gain);
    const auto plan = run_json({"plan", chain, "--json", "--set", value});
    CHECK(row["status"] == plan["status"]);
    CHECK(close(row["chosen"]["a.rd"].get<double>(), chosen(plan, "a", "rd"), 1e-12));
    CHECK(close(row["chosen"]["b.rd"].get<double>(), chosen(plan, "b", "rd"), 1e-12));
    CHECK(close(row["bandwidth_hz"].get<double>(), main_output(plan)["bandwidth_hz"].get<double>(), 1e-12));
    // Derived: two plain stages give gm^2 Rd_a Rd_b, and the widest plan sits on the gain minimum.
    CHECK(20.0 * std::log10(0.02 * 0.02 * row["chosen"]["a.rd"].get<double>() * row["chosen"]["b.rd"].get<double>()) ==
          doctest::Approx(gain).epsilon(1e-3));
  }
  // Without --replan the open values are planned once and held while the key varies.
  const auto held = run_json({"sweep", chain, "--vary", "b.rd=100ohm:200ohm:2", "--format", "json"});
  CHECK(held["held_plan"] == "met");
  CHECK(held["rows"][1]["dc_gain_db"].get<double>() - held["rows"][0]["dc_gain_db"].get<double>() ==
        doctest::Approx(20.0 * std::log10(2.0)).epsilon(1e-9));  // derived: gain is linear in b's Rd
}

TEST_CASE("what-if: a malformed --vary is an input error naming it") {
  TempDir scratch("peakplan_what_if");
  const auto chain = scratch.write("chain.toml", two_stage_chain("100 ohm"));
  const std::pair<const char*, const char*> cases[] = {
      {"s1.rd=60ohm:140ohm", "is not START:STOP:N"},
      {"s1.rd=60ohm:140ohm:x", "N must be a whole number of points"},
      {"s1.rd=60ohm:140ohm:1", "N must be at least 2"},
      {"s1.kind=1:2:3", "is not a number that can be swept"},
      {"s1.rd=60x:140ohm:3", "stage 's1': rd: unknown unit \"x\""},
      {"s1.rd=auto:140ohm:3", "START 'auto' is not a fixed number"},
      {"s9.rd=60:140:3", "did you mean 's1'?"},
  };
  for (const auto& [vary, message] : cases) {
    CAPTURE(vary);
    const auto r = run_cli({"sweep", chain, "--vary", vary});
    CHECK(r.status == 2);
    CHECK(r.out.empty());
    CHECK(r.err.find(std::string("--vary ") + vary + ": error: ") == 0);
    CHECK(r.err.find(message) != std::string::npos);
  }
}

TEST_CASE("what-if: compare exits 1 and names the side when a side it had to plan misses its target") {
  TempDir scratch("peakplan_what_if");
  const auto fixed = scratch.write("fixed.toml", two_stage_chain("100 ohm"));
  // Two 20 mS plain stages cannot make 200 dB: the plan of B misses, as plan itself reports.
  const auto open = scratch.write("open.toml", two_open_stages("200 dB"));
  CHECK(run_cli({"plan", open}).status == 1);
  const auto run = run_cli({"compare", fixed, open});
  CHECK(run.status == 1);
  CHECK(run.err.find("B (") != std::string::npos);
  CHECK(run.out.find("NOT MET") != std::string::npos);  // the comparison is still printed
  CHECK(run_cli({"compare", fixed, fixed}).status == 0);
}

TEST_CASE("--set of a design replaces the stage's other design and its elements, and an element replaces a design") {
  using namespace peakplan::test;
  const std::string demo = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";
  // a1 is written with response = "bessel": zeta = 0.866 is the same design (Bessel zeta =
  // sqrt(3)/2, docs/chain-format.md), so the analysis must not move (to printing precision).
  const auto bessel = nlohmann::json::parse(run_cli({"analyze", demo, "--json"}).out);
  const auto zeta = run_cli({"analyze", demo, "--json", "--set", "a1.zeta=0.8660254037844386"});
  REQUIRE_MESSAGE(zeta.status == 0, zeta.err);
  const auto z = nlohmann::json::parse(zeta.out);
  CHECK(z["outputs"].back()["bandwidth_hz"].get<double>() ==
        doctest::Approx(bessel["outputs"].back()["bandwidth_hz"].get<double>()).epsilon(1e-12));
  // a2 is written with m = 0.38: an l given on the command line is the inductor analysed.
  const auto l = run_cli({"analyze", demo, "--json", "--set", "a2.l=150pH"});
  REQUIRE_MESSAGE(l.status == 0, l.err);
  CHECK(nlohmann::json::parse(l.out)["stages"][1]["values"]["l"].get<double>() == doctest::Approx(150e-12).epsilon(1e-12));
  // And a sweep of zeta on that stage runs point by point.
  const auto sweep = run_cli({"sweep", demo, "--vary", "a1.zeta=0.6:1.0:3", "--format", "json"});
  REQUIRE_MESSAGE(sweep.status == 0, sweep.err);
  CHECK(nlohmann::json::parse(sweep.out)["rows"].size() == 3);
}

TEST_CASE("what-if: a list sweep of a T-coil response equals analyze --set of each response") {
  const std::string demo = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";
  const auto sweep = run_json({"sweep", demo, "--vary", "a1.response=butterworth,bessel,critical", "--format", "json"});
  REQUIRE(sweep["rows"].size() == 3);
  const char* words[] = {"butterworth", "bessel", "critical"};
  for (size_t i = 0; i < 3; ++i) {
    const auto& row = sweep["rows"][i];
    CHECK(row["value"] == words[i]);  // a word key reports the word, not a number
    const auto analysis = run_json({"analyze", demo, "--json", "--set", std::string("a1.response=") + words[i]});
    const auto& out = main_output(analysis);
    for (const std::string key : {"dc_gain_db", "bandwidth_hz", "peaking_db", "overshoot_pct", "group_delay_ripple_s"}) {
      CAPTURE(key);
      CHECK(close(row[key].get<double>(), out[key].get<double>(), 1e-12));  // the same computation: equal to roundoff
    }
  }
  // Derived (Battjes' conditions, docs/physics.md): a lower zeta peaks the T-coil stage more and
  // widens it, so the chain's bandwidth falls from Butterworth (0.707) to critical damping (1).
  CHECK(sweep["rows"][0]["bandwidth_hz"].get<double>() > sweep["rows"][1]["bandwidth_hz"].get<double>());
  CHECK(sweep["rows"][1]["bandwidth_hz"].get<double>() > sweep["rows"][2]["bandwidth_hz"].get<double>());
  // A numeric list runs too, and a misspelt word is the reader's error at its point.
  CHECK(run_json({"sweep", demo, "--vary", "a2.rd=80ohm,95ohm,110ohm", "--format", "json"})["rows"].size() == 3);
  const auto bad = run_cli({"sweep", demo, "--vary", "a1.response=bessel,besel"});
  CHECK(bad.status == 2);
  CHECK(bad.err.find("(point 2: besel)") != std::string::npos);
  CHECK(bad.err.find("did you mean \"bessel\"?") != std::string::npos);
}

TEST_CASE("what-if: a held-plan sweep of an open gm resizes the device: c_in = gm/(2 pi fT), c_out = ratio c_in") {
  TempDir scratch("peakplan_what_if");
  // Written for this test (not a design): a sized plain stage driving a fixed plain stage.
  const auto chain = scratch.write("sized.toml", R"([chain]
name = "sized device"
[target]
gain = "12 dB"
objective = "leanest"
[technology]
ft = "200 GHz"
c_out_ratio = 0.5
[[stage]]
id = "a"
kind = "plain"
gm = "auto"
rd = "100 ohm"
[[stage]]
id = "b"
kind = "plain"
gm = "20 mS"
rd = "80 ohm"
c_in = "30 fF"
c_out = "10 fF"
c_load = "40 fF"
)");
  const auto sweep = run_json({"sweep", chain, "--vary", "a.gm=20mS:60mS:3", "--format", "json"});
  REQUIRE(sweep["held_plan"] == "met");
  REQUIRE(sweep["rows"].size() == 3);
  const auto planned = (scratch.path / "planned.toml").string();
  REQUIRE(run_cli({"plan", chain, "--write", planned}).status == 0);
  for (const auto& row : sweep["rows"]) {
    const double gm = row["value"].get<double>();
    const double c_in = gm / (2.0 * std::numbers::pi * 200e9), c_out = 0.5 * c_in;  // the file's device rule
    char set_gm[64], set_in[64], set_out[64];
    std::snprintf(set_gm, sizeof set_gm, "a.gm=%.17g", gm);
    std::snprintf(set_in, sizeof set_in, "a.c_in=%.17g", c_in);
    std::snprintf(set_out, sizeof set_out, "a.c_out=%.17g", c_out);
    const auto analysis = run_json({"analyze", planned, "--json", "--set", set_gm, "--set", set_in, "--set", set_out});
    const auto& out = main_output(analysis);
    for (const std::string key : {"dc_gain_db", "bandwidth_hz", "group_delay_ripple_s"}) {
      CAPTURE(key);
      CHECK(close(row[key].get<double>(), out[key].get<double>(), 1e-12));  // the same computation
    }
    // Derived: two plain stages driven by an ideal source are two real poles, a's at
    // 1/(2 pi 100 (30 fF + c_out)) and b's at 1/(2 pi 80 (10 + 40) fF); |H|^2 halves where
    // (1 + f^2/p1^2)(1 + f^2/p2^2) = 2, a quadratic in f^2. Solved exactly, so 1e-9.
    const double p1 = 1.0 / (2.0 * std::numbers::pi * 100.0 * (30e-15 + c_out));
    const double p2 = 1.0 / (2.0 * std::numbers::pi * 80.0 * 50e-15);
    const double a = 1.0 / (p1 * p1 * p2 * p2), b = 1.0 / (p1 * p1) + 1.0 / (p2 * p2);
    const double f2 = (-b + std::sqrt(b * b + 4.0 * a)) / (2.0 * a);
    CHECK(close(row["bandwidth_hz"].get<double>(), std::sqrt(f2), 1e-9));
  }
  // The bigger device loads a's node more: the bandwidth falls as gm grows.
  CHECK(sweep["rows"][0]["bandwidth_hz"].get<double>() > sweep["rows"][2]["bandwidth_hz"].get<double>());
}

TEST_CASE("analyze: the text checks the file's targets and limits, each with its margin, and a miss is not an error") {
  const std::string demo = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";
  // The demo's ripple (970.4 fs) against a 0.5 ps limit set on the command line: NOT MET by
  // 470.4 fs, and exit 0 (an analysis reports; only plan and compare fail on a miss).
  const auto r = run_cli({"analyze", demo, "--set", "limits.group_delay_ripple=0.5ps"});
  CHECK(r.status == 0);
  CHECK(r.out.find("targets and limits (as written: analyze checks them") != std::string::npos);
  const auto row = r.out.find("  group_delay_ripple");
  REQUIRE(row != std::string::npos);
  const std::string line = r.out.substr(row, r.out.find('\n', row) - row);
  CHECK(line.find("<= 500.0 fs") != std::string::npos);
  CHECK(line.find("-470.4 fs") != std::string::npos);
  CHECK(line.find("NOT MET") != std::string::npos);
  // The JSON document is unchanged: the checks are the text's (and the report's budget).
  CHECK(!run_json({"analyze", demo, "--json"}).contains("checks"));
}
