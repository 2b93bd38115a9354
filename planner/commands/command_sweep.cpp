// peakplan sweep CHAIN.toml --vary ID.KEY=START:STOP:N [--log] [--replan] [--format text|csv|json] [--set ...]
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/sweep.hpp"
#include "reports/sweep_report.hpp"

namespace peakplan::cli {
namespace {

struct SweepArgs {
  SweepRequest request;
  std::string format = "text";
};

int run_sweep_command(const SweepArgs& args) {
  Diagnostics diagnostics(args.request.chain);
  const auto sweep = run_sweep(args.request, diagnostics);
  if (!sweep) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  if (args.format == "csv")
    print(sweep_csv(*sweep));
  else if (args.format == "json")
    print(sweep_json(*sweep).dump(2) + "\n");
  else
    print(sweep_text(*sweep));
  return ok;
}

}  // namespace

Command add_sweep_command(CLI::App& app) {
  auto args = std::make_shared<SweepArgs>();
  auto* cmd = app.add_subcommand("sweep", "the main output's metrics against one value, stepped (linearly or with --log) or listed");
  cmd->add_option("chain", args->request.chain, "chain file (TOML), or - for standard input")->required();
  cmd->add_option("--vary", args->request.vary, "ID.KEY=START:STOP:N or ID.KEY=A,B,... (a list, words too), e.g. a1.rd=80ohm:160ohm:5 or a1.response=butterworth,bessel")->required();
  cmd->add_flag("--replan", args->request.replan, "re-plan the open values at every point");
  cmd->add_flag("--log", args->request.log, "space the points geometrically (START and STOP of one sign)");
  cmd->add_option("--format", args->format, "text, csv or json")->check(CLI::IsMember({"text", "csv", "json"}));
  cmd->add_option("--set", args->request.sets, "override ID.KEY=VALUE (repeatable)")->allow_extra_args(false);
  args->request.plan_options = stopping_plan_options();
  cmd->footer(help_footer("peakplan sweep chains/demo_postamp.toml --vary a1.rd=80ohm:160ohm:5"));
  return {cmd, [args] { return run_sweep_command(*args); }};
}

}  // namespace peakplan::cli
