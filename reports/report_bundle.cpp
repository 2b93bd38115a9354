#include "reports/report_bundle.hpp"

#include <stdexcept>

#include "planner/input/chain_graph.hpp"
#include "reports/budget.hpp"
#include "reports/dynamic_range_plot.hpp"
#include "reports/html_report.hpp"
#include "reports/json_report.hpp"
#include "reports/netlist.hpp"
#include "reports/plan_report.hpp"
#include "reports/plots.hpp"
#include "reports/variation_report.hpp"
#include "reports/variation_views.hpp"

namespace peakplan {

std::vector<ReportFile> build_report(const ReportSource& source, const Chain& chain, const ChainAnalysis& analysis,
                                     const std::optional<ReportPlan>& plan, const VariationResult* variation,
                                     const CornerEnvelope* envelope, const SweepResult* dynamic_range) {
  if (!source.spec) throw std::logic_error("build_report: no chain spec");
  if (plan && !plan->plan) throw std::logic_error("build_report: a plan context without a plan");
  const auto& spec = *source.spec;
  const auto budget = build_budget(spec, chain, analysis);

  std::optional<HtmlPlanStatus> status;
  std::string markdown = budget_markdown(budget);
  if (plan) {
    std::optional<Budget> before;
    if (plan->before_chain && plan->before_analysis)
      before = build_budget(spec, *plan->before_chain, *plan->before_analysis);
    status = HtmlPlanStatus{plan->plan->termination == Plan::Termination::met, plan->plan->message,
                            {plan_metrics_view(budget, before, plan->plan->checks), plan_values_view(spec, *plan->plan)}};
    markdown += std::string("## Plan status\n\n") + (status->met ? "met: " : "NOT met: ") + status->message + "\n\n" +
                tables_markdown(status->tables);
  }

  std::vector<TableView> variation_tables;
  if (variation) {
    variation_tables = variation_views(*variation);
    markdown += tables_markdown(variation_tables);
  }

  std::vector<ReportFile> files;
  files.push_back({"budget.md", std::move(markdown)});
  files.push_back({"budget.csv", budget_csv(budget)});
  if (variation) files.push_back({"corners.csv", corners_csv(*variation)});
  auto json = plan ? plan_json(spec, *plan->plan, analysis)
                   : analysis_json(chain, analysis);
  if (variation) json["variation"] = variation_json(*variation);
  files.push_back({"result.json", json.dump(2) + "\n"});

  auto plots = chain_plots(chain, analysis);
  if (variation)
    for (auto& p : variation_plots(chain.name, *variation)) plots.push_back(std::move(p));
  if (envelope)
    for (auto& p : envelope_plots(chain.name, *envelope, plotted_frequency_span(analysis))) plots.push_back(std::move(p));
  if (dynamic_range && spec.signal && spec.signal->swing)
    for (auto& p : dynamic_range_plots(*dynamic_range, *spec.signal->swing)) plots.push_back(std::move(p));
  for (const auto& p : plots) files.push_back({p.name, p.svg});

  HtmlReportInput page;
  page.chain = &chain;
  page.analysis = &analysis;
  page.budget = &budget;
  page.plots = std::move(plots);
  page.chain_file_name = source.file_name;
  page.chain_file_text = source.file_text;
  page.plan = std::move(status);
  page.variation = std::move(variation_tables);
  files.push_back({"index.html", html_report(page)});

  NetlistOptions netlist;
  netlist.bandwidth_hz = analysis.outputs.back().response.frequency.bandwidth_hz;
  if (analysis.signal) netlist.edge_tau_s = netlist_edge_tau(*analysis.signal);
  files.push_back({"chain.cir", write_spice_netlist(chain, netlist)});
  return files;
}

}  // namespace peakplan
