// `peakplan report`: the real executable writing real directories. What is checked:
//   - the budget (budget.csv, and budget.md to its printed decimals) says what the analysis
//     document (result.json) says, stage by stage and for the main output;
//   - user strings reach the page only escaped;
//   - a report replaces whole files and leaves other files alone; a failed one changes nothing;
//   - every shipped chain reports, and --plan adds the before/after comparison.
// Tolerances come from how the numbers are printed: the CSV has 9 significant digits, so a
// value read back is within 5e-9 relative of the one printed; kCsvRelative = 1e-8 covers that
// (the absolute floor kCsvAbsolute covers values printed near zero, such as 1e-15 dB peaking).
// budget.md shows dB with 2 decimals: within 0.005 dB, plus 1e-9 for the binary rounding.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "cli_support.hpp"
#include "reports/budget.hpp"
#include "reports/svg_chart.hpp"

using namespace peakplan::test;

namespace {

namespace fs = std::filesystem;

constexpr double kCsvRelative = 1e-8;
constexpr double kCsvAbsolute = 1e-12;
constexpr double kMarkdownDb = 0.005 + 1e-9;

const fs::path kSource = PEAKPLAN_SOURCE_DIR;
const fs::path kDemo = kSource / "chains" / "demo_postamp.toml";

// `peakplan report CHAIN --out DIR [extra]`, stdout and stderr captured.
CliRun run_report(const fs::path& chain, const fs::path& out_dir, const std::string& extra = "") {
  std::vector<std::string> args{"report", chain.string(), "--out", out_dir.string()};
  if (!extra.empty()) args.push_back(extra);
  return run_cli(args);
}

// RFC 4180: fields separated by commas, records by CRLF, quoted fields may hold both and "".
std::vector<std::vector<std::string>> parse_csv(const std::string& text) {
  std::vector<std::vector<std::string>> records(1);
  std::string field;
  bool quoted = false, was_quoted = false;
  for (size_t i = 0; i < text.size(); ++i) {
    const char c = text[i];
    if (quoted) {
      if (c == '"' && i + 1 < text.size() && text[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        quoted = false;
      } else {
        field += c;
      }
    } else if (c == '"' && field.empty() && !was_quoted) {
      quoted = was_quoted = true;
    } else if (c == ',') {
      records.back().push_back(field);
      field.clear();
      was_quoted = false;
    } else if (c == '\r' && i + 1 < text.size() && text[i + 1] == '\n') {
      records.back().push_back(field);
      field.clear();
      was_quoted = false;
      records.emplace_back();
      ++i;
    } else {
      field += c;
    }
  }
  if (records.back().empty()) records.pop_back();
  return records;
}

struct CsvTable {
  std::vector<std::string> header;
  std::vector<std::vector<std::string>> rows;
  size_t column(const std::string& name) const {
    const auto it = std::find(header.begin(), header.end(), name);
    REQUIRE_MESSAGE(it != header.end(), "budget.csv has no column " << name);
    return static_cast<size_t>(it - header.begin());
  }
  std::vector<const std::vector<std::string>*> of_kind(const std::string& row) const {
    std::vector<const std::vector<std::string>*> out;
    for (const auto& r : rows)
      if (!r.empty() && r[0] == row) out.push_back(&r);
    return out;
  }
};

CsvTable read_csv(const fs::path& path) {
  auto records = parse_csv(read_file(path));
  REQUIRE(records.size() >= 2);
  CsvTable t{records.front(), {records.begin() + 1, records.end()}};
  for (const auto& r : t.rows) REQUIRE_MESSAGE(r.size() == t.header.size(), "a budget.csv row has a wrong field count");
  return t;
}

double number(const std::string& field) {
  REQUIRE_MESSAGE(!field.empty(), "an empty CSV field where a number was expected");
  return std::stod(field);
}

// A CSV value in its display unit against the JSON value in SI.
void check_csv(const std::string& field, double scale, const nlohmann::json& json_value, const std::string& what) {
  if (json_value.is_null()) {
    CHECK_MESSAGE(field.empty(), what << ": JSON null, CSV '" << field << "'");
    return;
  }
  const double expected = json_value.get<double>();
  const double got = number(field) * scale;
  CHECK_MESSAGE(std::fabs(got - expected) <= kCsvRelative * std::fabs(expected) + kCsvAbsolute * scale,
                what << ": CSV " << got << " vs JSON " << expected);
}

// Body rows of the first Markdown pipe table after `heading`, split into trimmed cells.
std::vector<std::vector<std::string>> markdown_table(const std::string& md, const std::string& heading) {
  const auto at = md.find(heading);
  REQUIRE_MESSAGE(at != std::string::npos, "no heading " << heading);
  std::istringstream in(md.substr(at));
  std::vector<std::vector<std::string>> rows;
  int line_no = 0;
  for (std::string line; std::getline(in, line);) {
    const bool table_line = !line.empty() && line[0] == '|';
    if (!table_line && line_no > 0) break;  // the table has ended
    if (!table_line) continue;              // the heading and the blank line after it
    ++line_no;
    if (line_no <= 2) continue;  // headings and the alignment row
    std::vector<std::string> cells;
    std::string cell;
    for (size_t i = 1; i < line.size(); ++i) {
      if (line[i] == '\\' && i + 1 < line.size() && line[i + 1] == '|') {
        cell += '|';
        ++i;
      } else if (line[i] == '|') {
        const auto a = cell.find_first_not_of(' '), b = cell.find_last_not_of(' ');
        cells.push_back(a == std::string::npos ? "" : cell.substr(a, b - a + 1));
        cell.clear();
      } else {
        cell += line[i];
      }
    }
    rows.push_back(cells);
  }
  return rows;
}

const std::vector<std::string> kAlwaysWritten{"budget.md", "budget.csv", "result.json", "magnitude.svg",
                                              "group_delay.svg", "step.svg", "pole_zero.svg", "index.html",
                                              "chain.cir"};

void check_budget_against_json(const fs::path& dir) {
  const auto csv = read_csv(dir / "budget.csv");
  const auto doc = nlohmann::json::parse(read_file(dir / "result.json"));
  const auto stages = csv.of_kind("stage");
  REQUIRE(stages.size() == doc["stages"].size());
  const size_t id = csv.column("id"), gain = csv.column("gain_dB"), bw = csv.column("bandwidth_GHz"),
               peak = csv.column("peaking_dB"), delay = csv.column("group_delay_ps"), gm = csv.column("gm_mS"),
               rd = csv.column("rd_ohm"), c_node = csv.column("c_node_fF"), share = csv.column("delay_share_pct");
  const auto& main = doc["outputs"].back();
  for (size_t i = 0; i < stages.size(); ++i) {
    const auto& row = *stages[i];
    const auto& js = doc["stages"][i];
    INFO("stage " << js["id"].get<std::string>());
    CHECK(row[id] == js["id"].get<std::string>());
    check_csv(row[gain], 1.0, js["dc_gain_db"], "gain");
    check_csv(row[bw], 1e9, js["bandwidth_hz"], "bandwidth");
    check_csv(row[peak], 1.0, js["peaking_db"], "peaking");
    check_csv(row[delay], 1e-12, js["group_delay_s"], "group delay");
    check_csv(row[gm], 1e-3, js["values"]["gm"], "gm");
    check_csv(row[rd], 1.0, js["values"]["rd"], "rd");
    check_csv(row[c_node], 1e-15, js["values"]["c_output_node"], "c_node");  // every capacitance on the node
    check_csv(row[csv.column("cumulative_gain_dB")], 1.0, js["cumulative"]["dc_gain_db"], "cumulative gain");
    check_csv(row[csv.column("cumulative_bandwidth_GHz")], 1e9, js["cumulative"]["bandwidth_hz"], "cumulative bandwidth");
    // Derived: the share is the stage's DC group delay over the main output's, in percent.
    if (row[share] != "off_main_path")
      check_csv(row[share], 1.0, nlohmann::json(100.0 * js["group_delay_s"].get<double>() /
                                                main["group_delay_s"].get<double>()),
                "delay share");
  }
  const auto totals = csv.of_kind("total");
  REQUIRE(totals.size() == 1);
  const auto& t = *totals.front();
  CHECK(t[id] == main["node"].get<std::string>());
  check_csv(t[gain], 1.0, main["dc_gain_db"], "total gain");
  check_csv(t[bw], 1e9, main["bandwidth_hz"], "total bandwidth");
  check_csv(t[peak], 1.0, main["peaking_db"], "total peaking");
  check_csv(t[delay], 1e-12, main["group_delay_s"], "total group delay");
  check_csv(t[csv.column("group_delay_ripple_ps")], 1e-12, main["group_delay_ripple_s"], "total ripple");
  check_csv(t[csv.column("overshoot_pct")], 1.0, main["overshoot_pct"], "total overshoot");
  double total_gm = 0.0;
  for (const auto& s : doc["stages"]) total_gm += s["values"]["gm"].get<double>();
  check_csv(t[gm], 1e-3, nlohmann::json(total_gm), "total gm");

  // budget.md shows the same stage numbers, rounded to 2 decimals.
  const auto md_rows = markdown_table(read_file(dir / "budget.md"), "## Stage budget");
  REQUIRE(md_rows.size() == stages.size());
  for (size_t i = 0; i < md_rows.size(); ++i) {
    const auto& js = doc["stages"][i];
    INFO("budget.md stage " << js["id"].get<std::string>());
    REQUIRE(md_rows[i].size() >= 9);
    CHECK(md_rows[i][0] == js["id"].get<std::string>());
    CHECK(std::fabs(std::stod(md_rows[i][6]) - js["dc_gain_db"].get<double>()) <= kMarkdownDb);
    CHECK(std::fabs(std::stod(md_rows[i][8]) - js["peaking_db"].get<double>()) <= kMarkdownDb);
  }
}

}  // namespace

TEST_CASE("report: the budget's numbers are the analysis document's (demo chain)") {
  TempDir dir("peakplan_report");
  const auto run = run_report(kDemo, dir.path / "out");
  REQUIRE_MESSAGE(run.status == 0, run.err);
  check_budget_against_json(dir.path / "out");
}

TEST_CASE("report: the budget's numbers are the analysis document's, and a branch off the main path is marked") {
  TempDir dir("peakplan_report");
  const auto run = run_report(kSource / "chains" / "fanout_tap.toml", dir.path / "out");
  REQUIRE_MESSAGE(run.status == 0, run.err);
  check_budget_against_json(dir.path / "out");
  const auto csv = read_csv(dir.path / "out" / "budget.csv");
  for (const auto* row : csv.of_kind("stage"))
    CHECK(((*row)[csv.column("delay_share_pct")] == "off_main_path") == ((*row)[csv.column("id")] == "detect"));
  CHECK(read_file(dir.path / "out" / "budget.md").find("off main path") != std::string::npos);
}

TEST_CASE("report: user strings reach the page escaped, and ids round-trip through the CSV quoting") {
  TempDir dir("peakplan_report");
  std::string text = read_file(kDemo);
  const std::string evil_id = "<script>alert(\"a2,x\")</script>";
  const auto at = text.find("id = \"a2\"");
  REQUIRE(at != std::string::npos);
  text.replace(at, 9, "id = '" + evil_id + "'");
  const auto name_at = text.find("name = \"demo post-amplifier\"");
  REQUIRE(name_at != std::string::npos);
  text.replace(name_at, 29, "name = \"demo <b>& co\"");
  const fs::path chain = dir.path / "evil.toml";
  write_file(chain, text);
  const auto run = run_report(chain, dir.path / "out");
  REQUIRE_MESSAGE(run.status == 0, run.err);

  const auto html = read_file(dir.path / "out" / "index.html");
  CHECK(html.find("<script") == std::string::npos);
  CHECK(html.find("<b>&") == std::string::npos);
  CHECK(html.find("&lt;script&gt;alert(&quot;a2,x&quot;)&lt;/script&gt;") != std::string::npos);
  CHECK(html.find("demo &lt;b&gt;&amp; co") != std::string::npos);

  const auto csv = read_csv(dir.path / "out" / "budget.csv");
  std::set<std::string> ids;
  for (const auto* row : csv.of_kind("stage")) ids.insert((*row)[csv.column("id")]);
  CHECK(ids.count(evil_id) == 1);
}

TEST_CASE("report: an existing directory gets whole files; other files stay as they were") {
  TempDir dir("peakplan_report");
  const fs::path out = dir.path / "out";
  fs::create_directories(out);
  write_file(out / "budget.md", std::string(200000, 'x') + "\nold junk that must not survive\n");
  write_file(out / "notes.txt", "the designer's own notes\n");
  const auto run = run_report(kDemo, out);
  REQUIRE_MESSAGE(run.status == 0, run.err);

  const auto fresh = run_report(kDemo, dir.path / "fresh");
  REQUIRE(fresh.status == 0);
  CHECK(read_file(out / "budget.md") == read_file(dir.path / "fresh" / "budget.md"));
  CHECK(read_file(out / "notes.txt") == "the designer's own notes\n");
  // A report keeps its versions in DIR/.peakplan and shows them through links
  // (planner/commands/output_files.hpp): what a reader sees is every name outside it.
  const auto visible = [](std::map<std::string, std::string> files) {
    std::erase_if(files, [](const auto& file) { return file.first.starts_with(".peakplan/"); });
    return files;
  };
  auto expected = visible(files_below(dir.path / "fresh"));
  expected["notes.txt"] = "the designer's own notes\n";
  const auto actual = visible(files_below(out));
  std::multiset<std::string> store;
  for (const auto& e : fs::directory_iterator(out / ".peakplan"))
    store.insert(e.path().filename().string().starts_with("r-") ? "r-" : e.path().filename().string());
  CHECK(store == std::multiset<std::string>{"current", "lock", "r-"});  // one version, nothing temporary
  std::vector<std::string> names, expected_names;
  for (const auto& [name, _] : actual) names.push_back(name);
  for (const auto& [name, _] : expected) expected_names.push_back(name);
  CHECK(names == expected_names);  // no temporary file is left behind
  for (const auto& name : names) CHECK_MESSAGE(name.find("tmp") == std::string::npos, name);
  CHECK(actual == expected);
}

TEST_CASE("report: bad input exits 2 and leaves the directory exactly as it was") {
  TempDir dir("peakplan_report");
  const fs::path out = dir.path / "out";
  fs::create_directories(out);
  write_file(out / "budget.md", "an earlier budget\n");
  write_file(out / "index.html", "<p>an earlier page</p>\n");
  write_file(out / "notes.txt", "notes\n");
  const auto before = files_below(out);
  const fs::path bad = kSource / "tests" / "bad_chains" / "missing_gm.toml";
  const auto run = run_report(bad, out);
  CHECK(run.status == 2);
  CHECK(run.out.empty());
  CHECK(run.err.find("error: ") != std::string::npos);
  CHECK(files_below(out) == before);

  SUBCASE("a missing directory is not created") {
    const fs::path missing = dir.path / "not" / "there";
    CHECK(run_report(bad, missing).status == 2);
    CHECK_FALSE(fs::exists(dir.path / "not"));
  }
  SUBCASE("a chain that leaves values to the planner, reported without --plan, writes nothing") {
    const auto planned = run_report(kSource / "tests" / "bad_chains" / "auto_value_in_analyze.toml", out);
    CHECK(planned.status == 2);
    CHECK(files_below(out) == before);
  }
}

TEST_CASE("report: a report file that is the chain file itself is refused") {
  TempDir dir("peakplan_report");
  const fs::path chain = dir.path / "chain.cir";  // the chain file under a report file's name
  fs::copy_file(kDemo, chain);
  const auto run = run_report(chain, dir.path);
  CHECK(run.status == 2);
  CHECK(run.err.find("overwrite the chain file") != std::string::npos);
  CHECK(read_file(chain) == read_file(kDemo));
  CHECK_FALSE(fs::exists(dir.path / "budget.md"));
}

TEST_CASE("report: every shipped chain produces every file") {
  for (const auto& entry : fs::directory_iterator(kSource / "chains")) {
    if (entry.path().extension() != ".toml") continue;
    const std::string text = read_file(entry.path());
    // A chain that leaves values to the planner can only be reported planned.
    const bool needs_plan = text.find("\"auto\"") != std::string::npos;
    INFO(entry.path().filename().string() << (needs_plan ? " --plan" : ""));
    TempDir dir("peakplan_report");
    const auto run = run_report(entry.path(), dir.path / "out", needs_plan ? "--plan" : "");
    CHECK_MESSAGE(run.status == 0, run.err);
    auto expected = kAlwaysWritten;
    if (text.find("[signal]") != std::string::npos) expected.push_back("eye.svg");
    for (const auto& name : expected) {
      const fs::path p = dir.path / "out" / name;
      CHECK_MESSAGE(fs::exists(p), name);
      if (fs::exists(p)) CHECK_MESSAGE(fs::file_size(p) > 100, name);
      CHECK_MESSAGE(run.out.find(name) != std::string::npos, "the summary names " << name);
    }
  }
}

TEST_CASE("report: --plan shows the values as written beside the planned ones, and the plan status") {
  TempDir dir("peakplan_report");
  const auto run = run_report(kSource / "chains" / "plan_limiting_amp.toml", dir.path / "out", "--plan");
  const auto doc = nlohmann::json::parse(read_file(dir.path / "out" / "result.json"));
  REQUIRE(doc.contains("status"));
  CHECK((doc["status"] == "met" || doc["status"] == "not_met"));
  CHECK(run.status == (doc["status"] == "met" ? 0 : 1));

  const auto md = read_file(dir.path / "out" / "budget.md");
  const auto values = markdown_table(md, "## Plan: values as written and as planned");
  bool rd_auto = false, count_fixed = false;
  for (const auto& row : values) {
    REQUIRE(row.size() == 4);
    if (row[1] == "rd" && row[2] == "auto" && row[3].find("Ω") != std::string::npos) rd_auto = true;
    if (row[1] == "count" && row[2] == "5" && row[3] == "5") count_fixed = true;
  }
  CHECK(rd_auto);
  CHECK(count_fixed);
  CHECK(md.find("no response of its own") != std::string::npos);  // every gm is "auto": no before
  // With no before, the table still says what the plan was asked for: each check's requirement.
  const auto metrics = markdown_table(md, "## Plan: the main output before and after");
  bool gain_required = false;
  for (const auto& row : metrics) {
    REQUIRE(row.size() == 3);
    if (row[0] == "gain") gain_required = row[1].starts_with("≥ ") && row[1].ends_with(" dB");
  }
  CHECK(gain_required);
  const auto html = read_file(dir.path / "out" / "index.html");
  CHECK(html.find("id=\"plan-values\"") != std::string::npos);
  CHECK(html.find("id=\"plan-metrics\"") != std::string::npos);
  // 5 copies, each a row of the budget.
  CHECK(read_csv(dir.path / "out" / "budget.csv").of_kind("stage").size() == 5);
}

TEST_CASE("report: --plan on a chain with every value fixed compares before and after") {
  TempDir dir("peakplan_report");
  const auto run = run_report(kDemo, dir.path / "out", "--plan");
  CHECK(run.status <= 1);
  const auto md = read_file(dir.path / "out" / "budget.md");
  const auto metrics = markdown_table(md, "## Plan: the main output before and after");
  REQUIRE_FALSE(metrics.empty());
  // Nothing to choose: the planned chain is the chain as written, so both columns agree.
  for (const auto& row : metrics) {
    REQUIRE(row.size() == 4);
    CHECK_MESSAGE(row[2] == row[3], row[0]);
    // The demo's [limits]: overshoot "5 %", peaking "1 dB"; it has no targets.
    if (row[0] == "step overshoot") CHECK(row[1] == "≤ 5.00 %");
    if (row[0] == "peaking") CHECK(row[1] == "≤ 1.00 dB");
    if (row[0] == "gain") CHECK(row[1] == "-");
  }
}

TEST_CASE("report: with [technology] gm_over_id every stage shows Id = gm / (gm/Id), and the current budget is checked") {
  TempDir dir("peakplan_report");
  std::string text = read_file(kDemo);
  const auto at = text.find("inductor_q = 12");
  REQUIRE(at != std::string::npos);
  constexpr double gm_over_id = 12.5;  // 1/V, an arbitrary test value
  text.insert(at, "gm_over_id = 12.5\ncurrent_budget = \"20 mA\"\n");
  const fs::path chain = dir.path / "current.toml";
  write_file(chain, text);
  const auto run = run_report(chain, dir.path / "out");
  REQUIRE_MESSAGE(run.status == 0, run.err);

  const auto csv = read_csv(dir.path / "out" / "budget.csv");
  const auto doc = nlohmann::json::parse(read_file(dir.path / "out" / "result.json"));
  const size_t current = csv.column("current_mA");
  const auto stages = csv.of_kind("stage");
  REQUIRE(stages.size() == doc["stages"].size());
  double total_gm = 0.0;
  for (size_t i = 0; i < stages.size(); ++i) {
    // Derived: Id = gm / (gm/Id), in mA.
    const double gm = doc["stages"][i]["values"]["gm"].get<double>();
    total_gm += gm;
    check_csv((*stages[i])[current], 1e-3, nlohmann::json(gm / gm_over_id), "stage current");
  }
  check_csv((*csv.of_kind("total").front())[current], 1e-3, nlohmann::json(total_gm / gm_over_id), "total current");
  bool checked = false;
  for (const auto* row : csv.of_kind("check")) {
    if ((*row)[csv.column("id")] != "current") continue;
    checked = true;
    CHECK((*row)[csv.column("check_unit")] == "mA");
    check_csv((*row)[csv.column("check_value")], 1.0, nlohmann::json(1e3 * total_gm / gm_over_id), "current check");
    CHECK((*row)[csv.column("check_met")] == (total_gm / gm_over_id <= 20e-3 ? "pass" : "fail"));
  }
  CHECK(checked);
  CHECK(read_file(dir.path / "out" / "budget.md").find("| Id (mA) |") != std::string::npos);
}

TEST_CASE("report: every output a user reads says once that its numbers are planning estimates") {
  // The brief's rule: text, page, budget table and netlist header each carry the caution line.
  const std::string caution = "Planning estimates from small-signal and behavioural models: confirm them by circuit simulation";
  const std::string chain = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";
  auto count = [](const std::string& text, const std::string& what) {
    size_t n = 0;
    for (size_t at = text.find(what); at != std::string::npos; at = text.find(what, at + 1)) ++n;
    return n;
  };
  for (const std::vector<std::string>& args :
       {std::vector<std::string>{"analyze", chain}, {"netlist", chain}, {"compare", chain, chain},
        {"sweep", chain, "--vary", "a4.rd=50ohm:60ohm:2"}}) {
    const auto run = run_cli(args);
    INFO("command: " << args.front());
    REQUIRE(run.status == 0);
    CHECK(count(run.out, caution) == 1);
  }
  TempDir out("peakplan_caution");
  REQUIRE(run_cli({"report", chain, "--out", out.path.string()}).status == 0);
  CHECK(count(read_file(out.path / "budget.md"), caution) == 1);
  CHECK(count(read_file(out.path / "chain.cir"), caution) == 1);
  const std::string page = read_file(out.path / "index.html");
  CHECK(count(page, caution) == 1);
  // Near the top: before the first table of the page.
  CHECK(page.find(caution) < page.find("<table"));
}

TEST_CASE("report: display rules: no -0.00, missing values without a unit, Q and BER past their useful range, closed eyes") {
  using namespace peakplan;
  CHECK(show_number(-0.001, 2) == "0.00");
  CHECK(show_number(-0.006, 2) == "-0.01");
  CHECK(show_ps(std::nan("")) == "n/a");
  CHECK(show_ps(3.2e-12) == "3.20 ps");
  CHECK(show_q(451.67) == "> 20");
  CHECK(show_q(7.03) == "7.03");
  CHECK(show_ber(0.0) == "< 1e-30");
  CHECK(show_ber(4.4e-281) == "< 1e-30");
  CHECK(show_ber(1.0e-12) == "1.0e-12");
  CHECK(show_eye_height(-0.2) == "closed");
  CHECK(show_eye_height(0.929) == "0.929");
}

TEST_CASE("report: the demo report shipped in docs/demo-report is what the tool writes today") {
  // The README links to it as the tool's output: it must not drift from the code. After a
  // change that moves it, regenerate it with the command in the README.
  // Run as the README does, from the repository with a relative path (the page shows it).
  TempDir dir("peakplan_report");
  const auto run = run_cli({"report", "chains/demo_postamp.toml", "--out", (dir.path / "out").string()}, kSource.string());
  REQUIRE_MESSAGE(run.status == 0, run.err);
  const fs::path shipped = kSource / "docs" / "demo-report";
  std::set<std::string> written, kept;
  for (const auto& e : fs::directory_iterator(dir.path / "out"))
    if (e.path().filename().string()[0] != '.') written.insert(e.path().filename().string());
  for (const auto& e : fs::directory_iterator(shipped)) kept.insert(e.path().filename().string());
  CHECK(written == kept);
  for (const auto& name : written) {
    CAPTURE(name);
    CHECK_MESSAGE(read_file(dir.path / "out" / name) == read_file(shipped / name),
                  "docs/demo-report/" << name << " differs: regenerate it (README, \"the whole generated report\")");
  }
}

// [variation] in a report: the corner table, corners.csv and result.json come from one run, and
// the worst corner is where the metric is worst. A small Monte Carlo run (--samples) keeps the
// case fast; the chain is planned first because the shipped file leaves its loads to the planner.
TEST_CASE("report: with [variation] the worst bandwidth corner is the minimum over result.json's corners, in every file") {
  TempDir dir("peakplan_report");
  const auto out = dir.path / "out";
  const auto run = run_cli({"report", (kSource / "chains" / "variation_post_amp.toml").string(), "--out", out.string(),
                            "--plan", "--samples", "300"});
  REQUIRE_MESSAGE(run.status == 0, run.err);
  const auto doc = nlohmann::json::parse(read_file(out / "result.json"));
  REQUIRE(doc.contains("variation"));
  const auto& v = doc["variation"];
  // The worst bandwidth is the lowest (derived: a lower bandwidth is worse, docs/physics.md
  // (process variation)); the named corner carries the minimum over every corner.
  double lowest = INFINITY;
  std::string lowest_name;
  for (const auto& c : v["corners"])
    if (c["metrics"]["bandwidth_hz"].get<double>() < lowest) {
      lowest = c["metrics"]["bandwidth_hz"].get<double>();
      lowest_name = c["name"].get<std::string>();
    }
  REQUIRE(v["worst"]["bandwidth_hz"].is_string());
  const std::string worst = v["worst"]["bandwidth_hz"].get<std::string>();
  double worst_bw = NAN;
  for (const auto& c : v["corners"])
    if (c["name"] == worst) worst_bw = c["metrics"]["bandwidth_hz"].get<double>();
  CHECK(worst_bw == lowest);  // the same double: both are the one corner's measured value

  // corners.csv: the worst row names the same corner, and its bandwidth is the JSON's to 9 digits.
  const auto records = parse_csv(read_file(out / "corners.csv"));
  REQUIRE(records.size() > 2);
  const auto& header = records.front();
  const auto col = [&](const std::string& name) {
    const auto it = std::find(header.begin(), header.end(), name);
    REQUIRE_MESSAGE(it != header.end(), "corners.csv has no column " << name);
    return static_cast<size_t>(it - header.begin());
  };
  size_t corner_rows = 0;
  bool worst_row = false, overall_row = false;
  for (size_t i = 1; i < records.size(); ++i) {
    const auto& r = records[i];
    REQUIRE(r.size() == header.size());
    if (r[0] == "corner") {
      const auto& c = v["corners"][corner_rows++];
      CHECK(r[1] == c["name"].get<std::string>());
      CHECK(number(r[col("bandwidth_hz")]) ==
            doctest::Approx(c["metrics"]["bandwidth_hz"].get<double>()).epsilon(kCsvRelative));
    }
    if (r[0] == "worst" && r[1] == "bandwidth_hz") {
      worst_row = true;
      CHECK(r[col("corner")] == worst);
    }
    if (r[0] == "overall") {
      overall_row = true;
      CHECK(number(r[col("samples")]) == 300);
      CHECK(number(r[col("fraction")]) ==
            doctest::Approx(v["monte_carlo"]["overall_yield"].get<double>()).epsilon(kCsvRelative));
      CHECK(number(r[col("ci95_lo")]) == doctest::Approx(v["monte_carlo"]["yield_ci95"][0].get<double>()).epsilon(kCsvRelative));
      // The fraction is the count over the samples (derived: the definition of a yield).
      CHECK(number(r[col("met_samples")]) / 300.0 == doctest::Approx(number(r[col("fraction")])).epsilon(kCsvRelative));
    }
  }
  CHECK(corner_rows == v["corners"].size());
  CHECK(worst_row);
  CHECK(overall_row);

  // budget.md and the page name it as the worst bandwidth corner, and the page has both tables.
  const auto md = read_file(out / "budget.md");
  CHECK(md.find("bandwidth: " + worst) != std::string::npos);
  const auto page = read_file(out / "index.html");
  CHECK(page.find("<table id=\"corners\"") != std::string::npos);
  CHECK(page.find("<table id=\"yield\"") != std::string::npos);
  // The histograms count every sample (the bandwidth is reached in each: stats count = 300).
  CHECK(v["monte_carlo"]["stats"]["bandwidth_hz"]["count"].get<int>() == 300);
  for (const auto* name : {"mc_bandwidth.svg", "mc_overshoot.svg", "mc_eye_height.svg"}) {
    INFO(name);
    const auto svg = read_file(out / name);
    CHECK(svg.find("300 Monte Carlo samples") != std::string::npos);
    CHECK(page.find(std::string("data-plot=\"") + std::string(name).substr(0, std::string(name).size() - 4) + "\"") !=
          std::string::npos);
  }
  // The bandwidth target (25 GHz in the file) is drawn and labelled on its histogram.
  CHECK(read_file(out / "mc_bandwidth.svg").find("target \u2265 25 GHz") != std::string::npos);
}

TEST_CASE("report: --samples on a chain without [variation] is refused and writes nothing") {
  TempDir dir("peakplan_report");
  const auto run = run_cli({"report", kDemo.string(), "--out", (dir.path / "out").string(), "--samples", "10"});
  CHECK(run.status == 2);
  CHECK(run.err.find("--samples") != std::string::npos);
  CHECK(!fs::exists(dir.path / "out"));
}

// A limiting chain's dynamic range: the report's sweep of the swing passes through the file's
// own swing (the middle of 21 log-spaced points from swing/10 to swing*10), where the clipped eye
// height must be the one `analyze --json` gives (the same simulation by another path: analyze of
// the file against a sweep point written back as an override), to the 3 digits the plot prints.
TEST_CASE("report: a limiting chain's dynamic-range plot and clipped eye show analyze's clipped eye height at the file's swing") {
  const auto chain = kSource / "chains" / "limiting_dynamic_range.toml";
  TempDir dir("peakplan_report");
  const auto out = dir.path / "out";
  const auto run = run_cli({"report", chain.string(), "--out", out.string()});
  REQUIRE_MESSAGE(run.status == 0, run.err);
  const auto analyzed = run_cli({"analyze", chain.string(), "--json"});
  REQUIRE(analyzed.status == 0);
  const auto doc = nlohmann::json::parse(analyzed.out);
  const double height = doc["outputs"].back()["large_signal"]["height_v"].get<double>();
  const double ddj = doc["outputs"].back()["large_signal"]["ddj_pp_s"].get<double>();
  const auto svg = read_file(out / "dynamic_range.svg");
  CHECK(svg.find(peakplan::svg::engineering(height, "V") + " at the file&apos;s swing 20 mV") != std::string::npos);
  CHECK(svg.find("21 points, log-spaced from 2 mV to 200 mV") != std::string::npos);
  CHECK(read_file(out / "dynamic_range_ddj.svg").find(peakplan::svg::engineering(ddj, "s") + " at the file&apos;s swing") !=
        std::string::npos);
  // The clipped eye beside the linear one, labelled with the same height to the 3 digits it prints.
  CHECK(read_file(out / "eye_clipped.svg").find(">height " + peakplan::svg::engineering(height, "V") + "<") !=
        std::string::npos);
  const auto page = read_file(out / "index.html");
  CHECK(page.find("data-plot=\"eye_clipped\"") != std::string::npos);
  CHECK(page.find("data-plot=\"eye_clipped\"") > page.find("data-plot=\"eye\""));
  CHECK(page.find("data-plot=\"dynamic_range\"") != std::string::npos);
  CHECK(page.find("data-plot=\"dynamic_range_ddj\"") != std::string::npos);
  // A linear chain (the demo) has no large-signal eye and gets no dynamic-range plot.
  TempDir demo("peakplan_report");
  REQUIRE(run_report(kDemo, demo.path / "out").status == 0);
  CHECK(!fs::exists(demo.path / "out" / "dynamic_range.svg"));
  CHECK(!fs::exists(demo.path / "out" / "eye_clipped.svg"));
}
