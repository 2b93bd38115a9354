// The per-stage budget of an analysed chain: what each stage contributes (gain, bandwidth,
// peaking, group delay, current) and what the chain adds up to, checked against the file's
// [target] and [limits]. It reads the analysis and never recomputes a response.
//
// One numeric structure (Budget) feeds every rendering: the Markdown tables and the HTML page
// show the same display strings (budget_views), and the CSV prints the same numbers at full
// precision, so the renderings cannot disagree.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include <string_view>
#include <utility>
#include <vector>

#include "models/chain.hpp"
#include "planner/input/chain_file.hpp"
#include "planner/planner.hpp"

namespace peakplan {

// One stage of the chain (every copy of a counted stage is a row of its own). SI units; NaN
// marks a value the stage does not have (no inductor, no bandwidth inside the analysed span).
struct BudgetRow {
  std::string id;
  LoadKind kind{};  // set by whoever fills it
  double gm = 0.0, rd = 0.0;
  // The kind's main elements (parameter role element), by chain-file key in table order.
  std::vector<std::pair<std::string, double>> elements;
  double element(std::string_view key) const;  // NaN when the kind has no such element
  double c_node = 0.0;                         // every capacitance on the output node (c_out too where the drain is it)
  double gain_db = 0.0, bandwidth_hz = not_found, peaking_db = 0.0;    // the stage alone
  double group_delay_s = 0.0;                                          // the stage alone, DC
  double cumulative_gain_db = 0.0, cumulative_bandwidth_hz = not_found;  // input to this node
  bool on_main_path = true;
  double delay_share_pct = not_found;  // group_delay_s / main output's DC group delay; NaN off the main path
  double current_a = not_found;        // gm / (gm/Id) when [technology] gm_over_id is given
};

// The main output (the last stage in file order), from the chain input.
struct BudgetTotals {
  std::string node;
  double gain_db = 0.0, bandwidth_hz = not_found, peaking_db = 0.0;
  double group_delay_s = 0.0, group_delay_ripple_s = 0.0, ripple_band_hz = 0.0;
  double overshoot_pct = 0.0;
  double total_gm = 0.0;               // every stage, off the main path too: all of them draw current
  double total_current_a = not_found;  // NaN without gm_over_id
  // The part of the main output's DC group delay that no stage row accounts for: the input
  // network (r_source with the first stage's c_in). DC group delays of cascaded blocks add.
  double input_network_share_pct = 0.0;
};

struct Budget {
  std::string chain;
  std::vector<BudgetRow> rows;
  BudgetTotals totals;
  std::vector<PlanCheck> checks;  // analysis_checks of the file; empty when it sets none
  bool has_current = false;
  bool has_off_path = false;
};

Budget build_budget(const ChainSpec& spec, const Chain& chain, const ChainAnalysis& analysis);

// A table as shown to a reader: headings and display strings in engineering units.
struct TableView {
  enum class Align { left, right };
  std::string id;       // "budget", "totals", "spec", ...: the HTML element id
  std::string title;
  std::vector<std::string> headings;
  std::vector<Align> align;
  std::vector<std::vector<std::string>> rows;
  std::vector<std::string> notes;  // shown under the table
  // Per row: "" or a state the page colours ("pass", "fail", "off-path").
  std::vector<std::string> row_state;
};

// The stage table, the totals and (when the file has targets or limits) the spec block.
std::vector<TableView> budget_views(const Budget& budget);

// Markdown for a specification: a heading and the views as pipe tables.
std::string tables_markdown(const std::vector<TableView>& views);
std::string budget_markdown(const Budget& budget);

// One header row, units in the column names (gm_mS, bandwidth_GHz, ...), numbers with 9
// significant digits, ids quoted per RFC 4180 when they need it. The first column says what a
// row is: "stage", "total" (the main output) or "check" (one target or limit, its unit in
// check_unit).
std::string budget_csv(const Budget& budget);

// Before/after of a plan: each value of every [[stage]] as the file wrote it ("auto", a range,
// a kind list, a design factor or the fixed value) beside the value the planner chose.
TableView plan_values_view(const ChainSpec& spec, const Plan& plan);
// The main output's metrics after planning, and before when the file as written resolves, with
// what the plan's checks required of each (a minimum or a maximum; "-" where nothing did).
TableView plan_metrics_view(const Budget& after, const std::optional<Budget>& before,
                            const std::vector<PlanCheck>& checks);

// Shared engineering-unit display (used by the tables and the page).
std::string show_number(double value, int decimals);  // "n/a" for NaN, "-" never
std::string show_db(double value);
std::string show_ghz(double hz);
std::string show_ps(double s);
std::string show_pct(double pct);
std::string show_q(double q);      // "> 20" past 20
std::string show_ber(double ber);  // "< 1e-30" below 1e-30
std::string show_eye_height(double height);  // "closed" at or below 0 (the JSON keeps the number)

}  // namespace peakplan
