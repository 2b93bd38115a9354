// peakplan plan CHAIN.toml [--json] [--write OUT.toml] [--set ID.KEY=VALUE ...] [--lock ID,...] [--effort N]
// With [variation], the planned chain's corners follow the plan.
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/commands/output_files.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/plan_phases.hpp"
#include "planner/planner.hpp"
#include "planner/what_if.hpp"
#include "planner/variation_analysis.hpp"
#include "reports/plan_report.hpp"
#include "reports/variation_report.hpp"

namespace peakplan::cli {
namespace {

struct PlanArgs {
  std::string chain;
  bool json = false;
  std::string write;
  WhatIf what_if;
  int effort = 1;
};

int run_plan(const PlanArgs& args) {
  Diagnostics diagnostics(args.chain);
  if (!args.write.empty() && same_file(args.write, args.chain)) {
    std::cerr << args.write << ": error: --write would overwrite the chain file itself; choose another path\n";
    return bad_input;
  }
  std::optional<WhatIfSpec> what_if;
  std::optional<Plan> plan;
  {
    const PlanProgressLine progress;  // cleared before anything is printed
    const auto options = with_effort(progress.options(), args.effort);
    what_if = load_what_if(args.chain, args.what_if, diagnostics, options);
    if (what_if) plan = plan_chain(what_if->spec, diagnostics, options);
  }
  const auto* spec = what_if ? &what_if->spec : nullptr;
  if (!plan) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  if (args.effort > 1 && plan->spread.starts == 0)
    std::cerr << "peakplan: note: --effort changes nothing for this chain: its plan has no global phase (more than "
              << kGlobalValues << " open values, or none open)\n";
  for (const auto& note : plan->notes) std::cerr << "peakplan: note: " << note << "\n";
  if (what_if->baseline == Plan::Termination::not_met)
    std::cerr << "peakplan: note: --lock holds values of a plan of the file as written that does not meet its target\n";
  const auto options = analysis_options(*spec);
  const auto analysis = analyze_chain(plan->chain, options);
  std::optional<VariationResult> variation;
  if (spec->variation) {
    // The planned chain's corners, as analyze of the written chain gives them; the Monte Carlo
    // yield is left to analyze of the written plan (it can take far longer than the plan).
    VariationRunOptions run;
    run.samples = 0;
    run.threads = default_thread_count();
    variation = analyze_variation(*spec, plan->chain, run);
  }
  std::string text;
  if (args.json) {
    auto doc = plan_json(*spec, *plan, analysis);
    if (variation) doc["variation"] = variation_json(*variation);
    text = doc.dump(2) + "\n";
  } else {
    text = plan_text(*spec, *plan, analysis) + (variation ? variation_text(*variation) : std::string());
  }
  if (stop_signal() != 0) return exit_for_stop();
  if (!args.write.empty()) {
    if (const auto failed = write_file_atomically(args.write, planned_chain_toml(*spec, *plan))) {
      std::cerr << failed->format();
      return cannot_write;
    }
  }
  print(text);
  if (args.json) std::cerr << plan->brief() << "\n";
  return plan->termination == Plan::Termination::met ? ok : target_not_met;
}

}  // namespace

Command add_plan_command(CLI::App& app) {
  auto args = std::make_shared<PlanArgs>();
  auto* cmd = app.add_subcommand("plan", "choose the \"auto\" values to meet [target] within [limits]");
  cmd->add_option("chain", args->chain, "chain file (TOML), or - for standard input")->required();
  cmd->add_flag("--json", args->json, "print one JSON document on stdout");
  cmd->add_option("--write", args->write,
                  "write the planned chain as a complete chain file (whole: a temporary file, then a rename)");
  cmd->add_option("--set", args->what_if.sets, "override ID.KEY=VALUE without editing the file (repeatable)")
      ->allow_extra_args(false);
  cmd->add_option("--lock", args->what_if.locks, "fix these stages at their current values (ID,...)")
      ->delimiter(',')
      ->allow_extra_args(false);
  cmd->add_option("--effort", args->effort, kEffortHelp)->check(CLI::Range(1, kMaxEffort));
  cmd->footer(help_footer("peakplan plan chains/plan_post_tia.toml --write planned.toml"));
  return {cmd, [args] { return run_plan(*args); }};
}

}  // namespace peakplan::cli
