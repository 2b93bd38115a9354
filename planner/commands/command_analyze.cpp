// peakplan analyze CHAIN.toml [--json] [--points N] [--set ID.KEY=VALUE ...]
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/chain_graph.hpp"
#include "planner/what_if.hpp"
#include "reports/json_report.hpp"
#include "reports/text_report.hpp"

namespace peakplan::cli {
namespace {

struct AnalyzeArgs {
  std::string chain;
  bool json = false;
  int points = 201;
  WhatIf what_if;
};

int run_analyze(const AnalyzeArgs& args) {
  Diagnostics diagnostics(args.chain);
  const auto what_if = load_what_if(args.chain, args.what_if, diagnostics);
  const auto* spec = what_if ? &what_if->spec : nullptr;
  const auto chain = spec ? resolve_chain(*spec, diagnostics) : std::nullopt;
  if (!chain) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto options = analysis_options(*spec, args.points);
  const auto analysis = analyze_chain(*chain, options);
  print(args.json ? analysis_json(*chain, analysis, {true, options.signal}).dump(2) + "\n"
                  : analysis_text(*chain, analysis));
  return ok;
}

}  // namespace

Command add_analyze_command(CLI::App& app) {
  auto args = std::make_shared<AnalyzeArgs>();
  auto* cmd = app.add_subcommand("analyze", "response, metrics and per-stage figures of a chain as written");
  cmd->add_option("chain", args->chain, "chain file (TOML), or - for standard input")->required();
  cmd->add_flag("--json", args->json, "print one JSON document on stdout");
  cmd->add_option("--points", args->points, "frequency points of the reported response")
      ->check(CLI::Range(2, 100000));
  cmd->add_option("--set", args->what_if.sets, "override ID.KEY=VALUE without editing the file (repeatable)")
      ->allow_extra_args(false);
  cmd->footer(help_footer("peakplan analyze chains/demo_postamp.toml --json"));
  return {cmd, [args] { return run_analyze(*args); }};
}

}  // namespace peakplan::cli
