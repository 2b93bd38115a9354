// peakplan analyze CHAIN.toml [--json] [--points N] [--set ID.KEY=VALUE ...] [--samples N] [--seed S]
#include <fmt/format.h>
#include <iostream>
#include <memory>
#include <optional>

#include "planner/commands/command.hpp"
#include "planner/commands/progress_line.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/requirements.hpp"
#include "planner/variation_analysis.hpp"
#include "planner/what_if.hpp"
#include "reports/json_report.hpp"
#include "reports/plan_report.hpp"
#include "reports/text_report.hpp"
#include "reports/variation_report.hpp"

namespace peakplan::cli {
namespace {

struct AnalyzeArgs {
  std::string chain;
  bool json = false;
  int points = 201;
  WhatIf what_if;
  std::optional<int> samples;
  std::optional<std::uint64_t> seed;
};

int run_analyze(const AnalyzeArgs& args) {
  Diagnostics diagnostics(args.chain);
  const auto what_if = load_what_if(args.chain, args.what_if, diagnostics);
  const auto* spec = what_if ? &what_if->spec : nullptr;
  const auto chain = spec ? resolve_chain(*spec, diagnostics) : std::nullopt;
  if (chain && !spec->variation && (args.samples || args.seed))
    diagnostics.error({0, 0, args.samples ? "--samples" : "--seed"},
                      "the chain file has no [variation] table to sample; add one (docs/physics.md (process variation))");
  if (!chain || !diagnostics.empty()) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  auto options = analysis_options(*spec, args.points);
  options.threads = default_thread_count();
  const auto analysis = analyze_chain(*chain, options);
  const auto variation = run_variation(*spec, *chain, args.samples, args.seed);
  if (args.json) {
    auto doc = analysis_json(*chain, analysis);
    if (variation) doc["variation"] = variation_json(*variation);
    print(doc.dump(2) + "\n");
  } else {
    const auto checks = analysis_checks(*spec, analysis.outputs.back(), total_gm(*chain));
    print(analysis_text(*chain, analysis) + checks_text(checks) +
          (variation ? variation_text(*variation) : std::string()));
  }
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
  cmd->add_option("--samples", args->samples,
                  "Monte Carlo samples of [variation] (overrides the file; threads: PEAKPLAN_THREADS, default every core)")
      ->check(CLI::Range(1, 1000000));
  cmd->add_option("--seed", args->seed, "Monte Carlo seed of [variation] (overrides the file)");
  cmd->footer(help_footer("peakplan analyze chains/demo_postamp.toml --json"));
  return {cmd, [args] { return run_analyze(*args); }};
}

}  // namespace peakplan::cli
