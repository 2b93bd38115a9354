#include "reports/html_report.hpp"

#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"
#include "reports/markup.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

// The page's own look: warm paper, a petrol header band, brick for failures, green for passes.
// System fonts only, so nothing is fetched; tabular figures so that columns of numbers align.
constexpr std::string_view kStyle = R"css(
:root {
  --paper: #f7f6f2; --card: #ffffff; --ink: #1e252b; --muted: #5d6a72; --rule: #dcd8cf;
  --band: #1f3a46; --band-ink: #f3f1ea; --accent: #d08c2e; --pass: #2e7d57; --fail: #b8432f;
  --zebra: #faf9f5; --planned: #fff4dc;
}
* { box-sizing: border-box; }
html { background: var(--paper); }
body {
  margin: 0; color: var(--ink); background: var(--paper);
  font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", "DejaVu Sans", sans-serif;
}
header.band {
  background: var(--band); color: var(--band-ink); padding: 22px 0 18px;
  border-bottom: 4px solid var(--accent);
}
.wrap { max-width: 1220px; margin: 0 auto; padding: 0 28px; }
header .kicker { text-transform: uppercase; letter-spacing: .14em; font-size: 12px; opacity: .75; }
header h1 { margin: 2px 0 4px; font-size: 28px; font-weight: 650; letter-spacing: -.01em; }
header .source { font-size: 13px; opacity: .8; font-family: ui-monospace, "DejaVu Sans Mono", monospace; }
.status { margin: 18px 0 0; padding: 10px 14px; border-radius: 6px; font-weight: 600;
  border-left: 6px solid; background: var(--card); }
.caution { margin: 14px 0 0; padding: 8px 14px; border-left: 6px solid var(--fail); background: var(--card);
  font-size: 14px; }
.status.met { border-color: var(--pass); color: var(--pass); }
.status.not-met { border-color: var(--fail); color: var(--fail); }
.figures { display: grid; grid-template-columns: repeat(auto-fit, minmax(140px, 1fr)); gap: 12px;
  margin: 20px 0 6px; }
.figure { background: var(--card); border: 1px solid var(--rule); border-top: 4px solid var(--rule); border-radius: 8px; padding: 8px 14px 10px; }
.figure .label { font-size: 11.5px; color: var(--muted); text-transform: uppercase; letter-spacing: .05em; white-space: nowrap; }
.figure .value { font-size: 22px; font-weight: 650; font-variant-numeric: tabular-nums; white-space: nowrap; }
.figure.pass { border-top: 4px solid var(--pass); }
.figure.fail { border-top: 4px solid var(--fail); }
section { margin: 26px 0; }
h2 { font-size: 19px; margin: 0 0 10px; padding-bottom: 4px; border-bottom: 2px solid var(--rule); }
h3 { font-size: 15px; margin: 18px 0 6px; color: var(--band); }
.table-scroll { overflow-x: auto; background: var(--card); border: 1px solid var(--rule); border-radius: 8px; }
table { border-collapse: collapse; width: 100%; font-variant-numeric: tabular-nums; font-size: 13.5px; }
th, td { padding: 6px 9px; border-bottom: 1px solid var(--rule); white-space: nowrap; }
th { background: #eef0ee; text-align: left; font-weight: 600; color: #2c3a42; vertical-align: bottom;
  white-space: normal; line-height: 1.25; }
#budget td:nth-child(5) { white-space: normal; min-width: 13em; }
td.r, th.r { text-align: right; }
tbody tr:nth-child(even) td { background: var(--zebra); }
tbody tr:last-child td { border-bottom: none; }
tr.off-path td { color: var(--muted); font-style: italic; }
tr.pass td:last-child { color: var(--pass); font-weight: 650; }
tr.fail td:last-child { color: var(--fail); font-weight: 700; }
tr.planned td { background: var(--planned) !important; }
td.id { font-family: ui-monospace, "DejaVu Sans Mono", monospace; font-size: 13px; }
.note { color: var(--muted); font-size: 13px; margin: 6px 2px 0; }
.two { display: grid; grid-template-columns: minmax(280px, 1fr) minmax(280px, 1fr); gap: 18px; align-items: start; }
.plots { display: grid; grid-template-columns: repeat(2, minmax(0, 1fr)); gap: 18px; }
figure { margin: 0; background: var(--card); border: 1px solid var(--rule); border-radius: 8px; padding: 10px; }
figure svg { display: block; width: 100%; height: auto; }
/* An odd plot out (the pole-zero map of a chain with an eye) sits centred under the pairs. */
.plots figure:last-child:nth-child(odd) { grid-column: 1 / -1; justify-self: center; width: calc(50% - 9px); }
figcaption { font-size: 13px; color: var(--muted); margin-top: 6px; }
figcaption b { color: var(--ink); }
pre.chain-file { background: #22272b; color: #e8e4da; padding: 14px 16px; border-radius: 8px;
  overflow-x: auto; font: 12.5px/1.5 ui-monospace, "DejaVu Sans Mono", monospace; }
footer { color: var(--muted); font-size: 12px; padding: 10px 0 30px; }
@media (max-width: 900px) { .plots, .two { grid-template-columns: 1fr; } .plots figure:last-child:nth-child(odd) { width: auto; } }
@media print {
  @page { size: A4 landscape; margin: 12mm; }
  html, body { background: #fff; font-size: 11px; }
  header.band, .status, th, tr.planned td { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  .wrap { max-width: none; padding: 0; }
  header.band { padding: 10px 12px; }
  section, figure, .table-scroll, .figures { break-inside: avoid; }
  .plots { grid-template-columns: repeat(2, minmax(0, 1fr)); }
  .table-scroll { overflow: visible; border: none; }
  th, td { white-space: normal; padding: 3px 6px; }
  pre.chain-file { background: #fff; color: #000; border: 1px solid var(--rule); white-space: pre-wrap; }
}
)css";

using Align = TableView::Align;

std::string table_html(const TableView& v, bool first_column_is_id) {
  std::string out = "<h3>" + html_escape(v.title) + "</h3>\n<div class=\"table-scroll\"><table";
  if (!v.id.empty()) out += " id=\"" + html_escape(v.id) + "\"";
  out += ">\n<thead><tr>";
  for (size_t i = 0; i < v.headings.size(); ++i) {
    const bool right = i < v.align.size() && v.align[i] == Align::right;
    out += right ? "<th class=\"r\">" : "<th>";
    out += html_escape(v.headings[i]) + "</th>";
  }
  out += "</tr></thead>\n<tbody>\n";
  for (size_t r = 0; r < v.rows.size(); ++r) {
    const std::string state = r < v.row_state.size() ? v.row_state[r] : "";
    out += state.empty() ? "<tr>" : "<tr class=\"" + html_escape(state) + "\">";
    for (size_t i = 0; i < v.rows[r].size(); ++i) {
      std::string cls = i < v.align.size() && v.align[i] == Align::right ? "r" : "";
      if (i == 0 && first_column_is_id) cls += cls.empty() ? "id" : " id";
      out += cls.empty() ? "<td>" : "<td class=\"" + cls + "\">";
      out += html_escape(v.rows[r][i]) + "</td>";
    }
    out += "</tr>\n";
  }
  out += "</tbody></table></div>\n";
  for (const auto& n : v.notes) out += "<p class=\"note\">" + html_escape(n) + "</p>\n";
  return out;
}

TableView outputs_view(const Chain& chain, const ChainAnalysis& analysis) {
  TableView v;
  v.id = "outputs";
  v.title = "Every output node, from the chain input";
  v.headings = {"node", "gain", "polarity", "bandwidth", "peaking", "group delay", "GD ripple", "overshoot",
                "rise 10-90 %", "settling 1 %"};
  v.align = {Align::left};
  v.align.resize(v.headings.size(), Align::right);
  for (const auto& o : analysis.outputs) {
    const auto& f = o.response.frequency;
    const auto& t = o.response.step;
    v.rows.push_back({chain.stages[static_cast<size_t>(o.stage)].id, show_db(to_db(f.dc_gain)),
                      f.dc_gain < 0 ? "inverting" : "non-inverting", show_ghz(f.bandwidth_hz), show_db(f.peaking_db),
                      show_ps(f.group_delay_s), show_ps(f.group_delay_ripple_s), show_pct(t.overshoot_pct),
                      show_ps(t.rise_time_s), show_ps(t.settling_time_s)});
    v.row_state.push_back("");
  }
  return v;
}

std::optional<TableView> eye_view(const Chain& chain, const ChainAnalysis& analysis) {
  TableView v;
  v.id = "eyes";
  v.title = "Eye estimates (heights as a fraction of the ideal eye)";
  v.headings = {"node", "PDA height", "PRBS height", "PRBS width", "DDJ p-p", "noise rms (differential)", "noise BW", "Q",
                "BER"};
  v.align = {Align::left};
  v.align.resize(v.headings.size(), Align::right);
  bool truncated = false;
  for (const auto& o : analysis.outputs) {
    if (!o.eye) continue;
    const auto& e = *o.eye;
    const auto& p = e.estimate.prbs;
    truncated = truncated || p.pattern_truncated;
    v.rows.push_back({chain.stages[static_cast<size_t>(o.stage)].id, show_eye_height(e.estimate.pda.height),
                      show_eye_height(p.eye.height), show_number(p.eye.width_ui, 3) + " UI", show_ps(p.ddj_pp_s),
                      format_si(e.noise.differential_rms_v, "V", 3), show_ghz(e.noise.noise_bandwidth_hz),
                      e.statistical ? show_q(e.statistical->q) : "-",
                      e.statistical ? show_ber(e.statistical->ber) : "-"});
    v.row_state.push_back("");
  }
  if (v.rows.empty()) return std::nullopt;
  if (truncated) v.notes.push_back("The pattern is longer than the simulation bound; a bounded number of symbols was overlaid.");
  return v;
}

std::string figure_card(const std::string& label, const std::string& value, const std::string& state = "") {
  return "<div class=\"figure" + (state.empty() ? "" : " " + state) + "\"><div class=\"label\">" +
         html_escape(label) + "</div><div class=\"value\">" + html_escape(value) + "</div></div>\n";
}

// The key figures at the top, coloured by their check when the file sets one.
std::string key_figures(const Budget& b, const ChainAnalysis& analysis) {
  auto state_of = [&](std::string_view name) {
    for (const auto& c : b.checks)
      if (c.name == name) return std::string(c.met ? "pass" : "fail");
    return std::string();
  };
  const auto& t = b.totals;
  std::string out = "<div class=\"figures\">\n";
  out += figure_card("gain", show_db(t.gain_db), state_of("gain"));
  out += figure_card("bandwidth", show_ghz(t.bandwidth_hz), state_of("bandwidth"));
  out += figure_card("peaking", show_db(t.peaking_db), state_of("peaking"));
  out += figure_card("overshoot", show_pct(t.overshoot_pct), state_of("overshoot"));
  out += figure_card("GD ripple", show_ps(t.group_delay_ripple_s), state_of("group_delay_ripple"));
  if (const auto& eye = analysis.outputs.back().eye) {
    const auto& p = eye->estimate.prbs;
    out += figure_card("eye height", show_number(100.0 * p.eye.height, 1) + " %");
    out += figure_card("eye width", show_number(p.eye.width_ui, 3) + " UI");
  }
  return out + "</div>\n";
}

}  // namespace

std::string html_escape(std::string_view text) { return escape_markup(text, "&#39;"); }

std::string inline_svg(std::string_view svg) {
  const auto start = svg.find("<svg");
  if (start == std::string_view::npos) throw std::logic_error("inline_svg: the plot has no <svg> element");
  auto body = svg.substr(start);
  while (!body.empty() && (body.back() == '\n' || body.back() == ' ')) body.remove_suffix(1);
  return std::string(body);
}

std::string html_report(const HtmlReportInput& in) {
  if (!in.chain || !in.analysis || !in.budget) throw std::logic_error("html_report: missing chain, analysis or budget");
  const auto& chain = *in.chain;
  const auto& budget = *in.budget;
  const std::string name = html_escape(chain.name);

  std::string out = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
                    "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
                    "<title>peakplan report: " + name + "</title>\n<style>" + std::string(kStyle) +
                    "</style>\n</head>\n<body>\n";
  out += "<header class=\"band\"><div class=\"wrap\">\n<div class=\"kicker\">peakplan gain-chain report" +
         std::string(in.plan ? " &middot; planned" : "") + "</div>\n<h1>" + name + "</h1>\n<div class=\"source\">" +
         html_escape(in.chain_file_name) + " &middot; " + std::to_string(chain.stages.size()) + " stages &middot; main output " +
         html_escape(budget.totals.node) + "</div>\n</div></header>\n<main class=\"wrap\">\n";
  out += "<p class=\"caution\" id=\"caution\">" + html_escape(std::string(kPlanningCaution)) + "</p>\n";

  if (in.plan) {
    out += std::string("<div class=\"status ") + (in.plan->met ? "met" : "not-met") + "\">" +
           (in.plan->met ? "Plan met: " : "Plan NOT met: ") + html_escape(in.plan->message) + "</div>\n";
  }
  out += key_figures(budget, *in.analysis);

  const auto views = budget_views(budget);
  out += "<section id=\"budget-section\">\n<h2>Budget</h2>\n";
  out += table_html(views.front(), true);
  out += "<div class=\"two\">\n";
  for (size_t i = 1; i < views.size(); ++i) out += "<div>\n" + table_html(views[i], false) + "</div>\n";
  out += "</div>\n</section>\n";

  if (in.plan && !in.plan->tables.empty()) {
    out += "<section id=\"plan-section\">\n<h2>Before and after planning</h2>\n";
    out += "<div class=\"two\">\n";
    for (const auto& t : in.plan->tables) out += "<div>\n" + table_html(t, t.id == "plan-values") + "</div>\n";
    out += "</div>\n</section>\n";
  }

  if (!in.variation.empty()) {
    out += "<section id=\"variation-section\">\n<h2>Process variation</h2>\n";
    for (const auto& t : in.variation) out += table_html(t, false);
    out += "</section>\n";
  }

  if (!in.plots.empty()) {
    out += "<section id=\"plots\">\n<h2>Plots</h2>\n<div class=\"plots\">\n";
    for (const auto& p : in.plots) {
      out += "<figure id=\"plot-" + html_escape(p.name) + "\">\n" + inline_svg(p.svg) + "\n<figcaption><b>" +
             html_escape(p.name) + "</b> &middot; " + html_escape(p.title) + "</figcaption>\n</figure>\n";
    }
    out += "</div>\n</section>\n";
  }

  out += "<section id=\"metrics\">\n<h2>Chain metrics</h2>\n" + table_html(outputs_view(chain, *in.analysis), true);
  if (auto eyes = eye_view(chain, *in.analysis)) out += table_html(*eyes, true);
  out += "</section>\n";

  out += "<section id=\"chain-file\">\n<h2>Chain file</h2>\n<pre class=\"chain-file\">" +
         html_escape(in.chain_file_text) + "</pre>\n</section>\n";
  out += "</main>\n<footer class=\"wrap\">Written by peakplan report. Values in engineering units; the JSON "
         "document result.json holds the same results in SI units.</footer>\n</body>\n</html>\n";
  return out;
}

}  // namespace peakplan
