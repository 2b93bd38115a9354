// peakplan plan CHAIN.toml [--json] [--write OUT.toml]
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/chain_graph.hpp"
#include "planner/planner.hpp"
#include "reports/plan_report.hpp"

namespace peakplan::cli {
namespace {

struct PlanArgs {
  std::string chain;
  bool json = false;
  std::string write;
};

int run_plan(const PlanArgs& args) {
  Diagnostics diagnostics(args.chain);
  if (!args.write.empty() && same_file(args.write, args.chain)) {
    std::cerr << args.write << ": error: --write would overwrite the chain file itself; choose another path\n";
    return bad_input;
  }
  const auto spec = load_chain_spec(args.chain, diagnostics);
  const auto plan = spec ? plan_chain(*spec, diagnostics) : std::nullopt;
  if (!plan) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto options = analysis_options(*spec);
  const auto analysis = analyze_chain(plan->chain, options);
  const std::string text = args.json ? plan_json(*spec, *plan, analysis).dump(2) + "\n"
                                     : plan_text(*spec, *plan, analysis);
  if (!args.write.empty()) {
    std::string error;
    if (!write_whole_file(args.write, planned_chain_toml(*spec, *plan), error)) {
      std::cerr << "peakplan: error: " << error << "\n";
      return internal_error;
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
  cmd->add_option("chain", args->chain, "chain file (TOML)")->required();
  cmd->add_flag("--json", args->json, "print one JSON document on stdout");
  cmd->add_option("--write", args->write, "write the planned chain as a complete chain file");
  return {cmd, [args] { return run_plan(*args); }};
}

}  // namespace peakplan::cli
