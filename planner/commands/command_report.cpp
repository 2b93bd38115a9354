// peakplan report CHAIN.toml --out DIR [--plan] [--samples N] [--seed S]
//
// Everything is built in memory first; only then is DIR created (when missing) and the report
// set replaced as one whole (planner/commands/output_files.hpp: the set is written into a new
// version beside the old one and swapped in with one rename, so DIR shows the complete old set
// or the complete new one, whatever happens to the process). Bad input writes nothing and
// leaves DIR as it was; files in DIR that are not part of the report are never touched.
#include <filesystem>
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/commands/output_files.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/overrides.hpp"
#include "planner/planner.hpp"
#include "planner/corner_envelope.hpp"
#include "planner/sweep.hpp"
#include "planner/input/toml_text.hpp"
#include "planner/variation_analysis.hpp"
#include "reports/dynamic_range_plot.hpp"
#include "planner/commands/progress_line.hpp"
#include <fmt/format.h>
#include "reports/report_bundle.hpp"
#include "planner/input/chain_input.hpp"

namespace peakplan::cli {
namespace {

namespace fs = std::filesystem;

struct ReportArgs {
  std::string chain;
  std::string out;
  bool plan = false;
  std::optional<int> samples;
  std::optional<std::uint64_t> seed;
  int effort = 1;
};

int run_report(const ReportArgs& args) {
  Diagnostics diagnostics(args.chain);
  const auto spec = read_chain_spec(args.chain, diagnostics);
  if (!spec) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto text = read_chain_text(args.chain, diagnostics);
  if (text && !spec->variation && (args.samples || args.seed))
    diagnostics.error({0, 0, args.samples ? "--samples" : "--seed"},
                      "the chain file has no [variation] table to sample; add one (docs/physics.md (process variation))");
  if (!text || !diagnostics.empty()) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  auto options = analysis_options(*spec);
  options.threads = default_thread_count();

  std::optional<Plan> plan;
  std::optional<Chain> chain;
  std::optional<Chain> before_chain;
  std::optional<ChainAnalysis> before_analysis;
  if (args.plan) {
    const PlanProgressLine progress;
    plan = plan_chain(*spec, diagnostics, with_effort(progress.options(), args.effort));
    if (!plan) {
      std::cerr << diagnostics.format();
      return bad_input;
    }
    for (const auto& note : plan->notes) std::cerr << "peakplan: note: " << note << "\n";
    chain = plan->chain;
    // The file as written has a response of its own only when every value is fixed; the
    // diagnostics of trying are not the user's concern here.
    Diagnostics scratch(args.chain);
    before_chain = resolve_chain(*spec, scratch);
    if (before_chain) before_analysis = analyze_chain(*before_chain, options);
  } else {
    chain = resolve_chain(*spec, diagnostics);
    if (!chain) {
      std::cerr << diagnostics.format();
      return bad_input;
    }
  }
  const auto analysis = analyze_chain(*chain, options);
  // The corners and Monte Carlo run exactly as analyze runs them (the same code, samples, seed).
  const auto variation = run_variation(*spec, *chain, args.samples, args.seed);
  std::optional<CornerEnvelope> envelope;
  if (variation) envelope = corner_envelope(*variation, *chain, analysis, options);

  // A limiting chain's dynamic range: the file's swing /10 to x10, swept as `sweep --vary
  // signal.swing=... --log` sweeps it (the planned chain when planned; no [variation] per point).
  std::optional<SweepResult> dynamic_range;
  if (analysis.outputs.back().large_signal && spec->signal && spec->signal->swing) {
    const double swing = *spec->signal->swing;
    SweepRequest sweep;
    sweep.chain = args.chain;
    sweep.chain_text = plan ? planned_chain_toml(*spec, *plan) : *text;
    sweep.vary = "signal.swing=" + toml_number(swing / kDynamicRangeDecade) + ":" +
                 toml_number(swing * kDynamicRangeDecade) + ":" + std::to_string(kDynamicRangePoints);
    sweep.log = true;
    sweep.variation = false;
    dynamic_range = run_sweep(sweep, diagnostics);
    if (!dynamic_range) {
      std::cerr << diagnostics.format();
      return bad_input;
    }
  }

  std::optional<ReportPlan> plan_context;
  if (plan)
    plan_context = ReportPlan{&*plan, before_chain ? &*before_chain : nullptr,
                              before_analysis ? &*before_analysis : nullptr};
  const auto files = build_report({&*spec, diagnostics.file(), *text}, *chain, analysis, plan_context,
                                  variation ? &*variation : nullptr,
                                  envelope ? &*envelope : nullptr, dynamic_range ? &*dynamic_range : nullptr);

  const fs::path dir(args.out);
  for (const auto& f : files) {
    if (same_file((dir / f.name).string(), args.chain)) {
      std::cerr << (dir / f.name).string() << ": error: the report would overwrite the chain file itself; "
                << "choose another --out directory\n";
      return bad_input;
    }
  }
  if (stop_signal() != 0) return exit_for_stop();
  std::vector<OutputFile> outputs;
  for (const auto& f : files) outputs.push_back({f.name, f.contents});
  if (const auto failed = write_report_directory(dir, outputs)) {
    std::cerr << failed->format();
    return cannot_write;
  }
  std::string summary = "report of '" + chain->name + "' in " + dir.string() + "/:";
  for (const auto& f : files) summary += " " + f.name;
  summary += "\n";
  if (plan) summary += plan->brief() + "\n";
  print(summary);
  return !plan || plan->termination == Plan::Termination::met ? ok : target_not_met;
}

}  // namespace

Command add_report_command(CLI::App& app) {
  auto args = std::make_shared<ReportArgs>();
  auto* cmd = app.add_subcommand("report", "budget tables, plots, HTML page, JSON and netlist in a directory");
  cmd->add_option("chain", args->chain, "chain file (TOML), or - for standard input")->required();
  cmd->add_option("--out", args->out, "directory to write the report into (created if missing)")->required();
  auto* plan = cmd->add_flag("--plan", args->plan, "plan the chain first and report the planned chain, before and after");
  cmd->add_option("--effort", args->effort, kEffortHelp)->check(CLI::Range(1, kMaxEffort))->needs(plan);
  cmd->add_option("--samples", args->samples,
                  "Monte Carlo samples of [variation] (overrides the file; threads: PEAKPLAN_THREADS, default every core)")
      ->check(CLI::Range(1, 1000000));
  cmd->add_option("--seed", args->seed, "Monte Carlo seed of [variation] (overrides the file)");
  cmd->footer(help_footer("peakplan report chains/demo_postamp.toml --out demo_report"));
  return {cmd, [args] { return run_report(*args); }};
}

}  // namespace peakplan::cli
