// One self-contained HTML page for an analysed (or planned) chain: the key figures, the budget
// tables, every plot inlined with its caption, the metrics of every output, the eye figures and
// the chain file as given. No scripts, fonts or anything else fetched from a network; the CSS is
// inline and has a print layout. Every user-supplied string (chain name, stage ids, file text,
// plot captions) is HTML-escaped.
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "reports/budget.hpp"
#include "reports/plots.hpp"

namespace peakplan {

struct HtmlPlanStatus {
  bool met = false;
  std::string message;  // Plan::message
  std::vector<TableView> tables;  // plan_values_view, plan_metrics_view
};

struct HtmlReportInput {
  const Chain* chain = nullptr;
  const ChainAnalysis* analysis = nullptr;
  const Budget* budget = nullptr;
  std::vector<PlotFile> plots;
  std::string chain_file_name;  // as the user gave it
  std::string chain_file_text;
  std::optional<HtmlPlanStatus> plan;
  std::vector<TableView> variation;  // corner and yield tables of a [variation] run; empty: none
};

// & < > " ' as character references; everything else (UTF-8 included) passes through.
std::string html_escape(std::string_view text);

// The SVG element of a standalone SVG document, without any XML declaration or doctype before
// it, ready to be placed inside HTML.
std::string inline_svg(std::string_view svg_document);

std::string html_report(const HtmlReportInput& input);

}  // namespace peakplan
