// peakplan compare A.toml B.toml [--json]
#include <algorithm>
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/chain_input.hpp"
#include "planner/input/chain_settings.hpp"
#include "planner/planner.hpp"
#include "planner/variation_analysis.hpp"
#include "planner/what_if.hpp"
#include "reports/compare_report.hpp"

namespace peakplan::cli {
namespace {

struct CompareArgs {
  std::string a, b;
  bool json = false;
};

// One side: the chain as written, or planned first when the file leaves values open.
struct Loaded {
  std::string text;
  ChainSpec spec;
  Chain chain;
  std::optional<Plan::Termination> planned;
  ChainAnalysis analysis;
  std::optional<VariationResult> variation;  // with [variation], as analyze runs it
};

std::optional<Loaded> load_side(const std::string& path, Diagnostics& diagnostics) {
  auto text = read_chain_text(path, diagnostics);
  if (!text) return std::nullopt;
  auto spec = parse_chain_spec(*text, diagnostics);
  if (!spec) return std::nullopt;
  Loaded side{std::move(*text), *spec, {}, std::nullopt, {}, std::nullopt};
  if (std::any_of(spec->stages.begin(), spec->stages.end(), has_open_values)) {
    auto plan = plan_chain(*spec, diagnostics, stopping_plan_options());
    if (!plan) return std::nullopt;
    side.planned = plan->termination;
    side.chain = std::move(plan->chain);
  } else {
    auto chain = resolve_chain(*spec, diagnostics);
    if (!chain) return std::nullopt;
    side.chain = std::move(*chain);
  }
  side.analysis = analyze_chain(side.chain, analysis_options(side.spec));
  if (side.spec.variation) {
    VariationRunOptions run;
    run.threads = default_thread_count();
    side.variation = analyze_variation(side.spec, side.chain, run);
  }
  return side;
}

int run_compare(const CompareArgs& args) {
  Diagnostics diagnostics_a(args.a), diagnostics_b(args.b);
  const auto a = load_side(args.a, diagnostics_a);
  const auto b = load_side(args.b, diagnostics_b);
  if (!a || !b) {
    std::cerr << diagnostics_a.format() << diagnostics_b.format();
    return bad_input;
  }
  const CompareSide side_a{args.a, a->chain, a->analysis, a->planned, a->variation ? &*a->variation : nullptr};
  const CompareSide side_b{args.b, b->chain, b->analysis, b->planned, b->variation ? &*b->variation : nullptr};
  const auto settings = setting_differences(a->text, b->text);
  print(args.json ? compare_json(side_a, side_b, settings).dump(2) + "\n" : compare_text(side_a, side_b, settings));
  // Like plan: a side that had to be planned and misses its target makes the comparison exit 1.
  bool missed = false;
  for (const auto* side : {&side_a, &side_b})
    if (side->planned && *side->planned != Plan::Termination::met) {
      std::cerr << "compare: " << (side == &side_a ? "A" : "B") << " (" << side->file
                << ") was planned first and does not meet its target\n";
      missed = true;
    }
  return missed ? target_not_met : ok;
}

}  // namespace

Command add_compare_command(CLI::App& app) {
  auto args = std::make_shared<CompareArgs>();
  auto* cmd = app.add_subcommand("compare", "two chains' metrics and stage values side by side, with deltas B - A");
  cmd->add_option("a", args->a, "chain file A (TOML); planned first if it leaves values open")->required();
  cmd->add_option("b", args->b, "chain file B (TOML); planned first if it leaves values open")->required();
  cmd->add_flag("--json", args->json, "print one JSON document on stdout");
  cmd->footer(help_footer("peakplan compare chains/demo_postamp.toml chains/tcoil_single_zeta.toml"));
  return {cmd, [args] { return run_compare(*args); }};
}

}  // namespace peakplan::cli
