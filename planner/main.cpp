// The peakplan command line: the only code that touches argv, stdout, stderr and exit codes.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <fmt/format.h>
#include <iostream>

#include "planner/chain_graph.hpp"
#include "reports/json_report.hpp"
#include "reports/netlist.hpp"
#include "reports/plan_report.hpp"
#include "planner/planner.hpp"
#include <filesystem>
#include <fstream>
#include "reports/text_report.hpp"

namespace {

enum Exit : int { ok = 0, target_not_met = 1, bad_input = 2, internal_error = 3 };

struct AnalyzeArgs {
  std::string chain;
  bool json = false;
  int points = 201;
};

void print(const std::string& text) { std::fwrite(text.data(), 1, text.size(), stdout); }

int run_netlist(const std::string& path) {
  peakplan::Diagnostics diagnostics(path);
  const auto chain = peakplan::load_chain_file(path, diagnostics);
  if (!chain) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  print(peakplan::write_spice_netlist(*chain));
  return ok;
}

// Writes `text` to `path` whole or not at all: a temporary file beside it, then a rename.
bool write_whole_file(const std::string& path, const std::string& text, std::string& error) {
  const std::filesystem::path target(path);
  auto temporary = target;
  temporary += ".peakplan-tmp";
  {
    std::ofstream out(temporary, std::ios::binary | std::ios::trunc);
    out << text;
    out.close();
    if (!out) {
      error = "cannot write " + temporary.string();
      std::filesystem::remove(temporary);
      return false;
    }
  }
  std::error_code ec;
  std::filesystem::rename(temporary, target, ec);
  if (ec) {
    error = "cannot rename " + temporary.string() + " to " + path + ": " + ec.message();
    std::filesystem::remove(temporary);
    return false;
  }
  return true;
}

struct PlanArgs {
  std::string chain;
  bool json = false;
  std::string write;
};

int run_plan(const PlanArgs& args) {
  peakplan::Diagnostics diagnostics(args.chain);
  if (!args.write.empty()) {
    std::error_code ec;
    if (std::filesystem::exists(args.write) && std::filesystem::equivalent(args.write, args.chain, ec)) {
      std::cerr << args.write << ": error: --write would overwrite the chain file itself; choose another path\n";
      return bad_input;
    }
  }
  const auto spec = peakplan::load_chain_spec(args.chain, diagnostics);
  const auto plan = spec ? peakplan::plan_chain(*spec, diagnostics) : std::nullopt;
  if (!plan) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto options = peakplan::analysis_options(*spec);
  const auto analysis = peakplan::analyze_chain(plan->chain, options);
  const std::string text = args.json ? peakplan::plan_json(*spec, *plan, analysis).dump(2) + "\n"
                                     : peakplan::plan_text(*spec, *plan, analysis);
  if (!args.write.empty()) {
    std::string error;
    if (!write_whole_file(args.write, peakplan::planned_chain_toml(*spec, *plan), error)) {
      std::cerr << "peakplan: error: " << error << "\n";
      return internal_error;
    }
  }
  print(text);
  if (args.json) std::cerr << plan->brief() << "\n";
  return plan->termination == peakplan::Plan::Termination::met ? ok : target_not_met;
}

int run_analyze(const AnalyzeArgs& args) {
  peakplan::Diagnostics diagnostics(args.chain);
  const auto spec = peakplan::load_chain_spec(args.chain, diagnostics);
  const auto chain = spec ? peakplan::resolve_chain(*spec, diagnostics) : std::nullopt;
  if (!chain) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto options = peakplan::analysis_options(*spec, args.points);
  const auto analysis = peakplan::analyze_chain(*chain, options);
  // Build the whole document before printing, so a failure never leaves half an output.
  const std::string text = args.json ? peakplan::analysis_json(*chain, analysis, {true, options.signal}).dump(2) + "\n"
                                     : peakplan::analysis_text(*chain, analysis);
  print(text);
  return ok;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{"peakplan: plan the gain, bandwidth and peaking of a broadband amplifier chain"};
  app.set_version_flag("--version", std::string("peakplan ") + PEAKPLAN_VERSION);
  app.require_subcommand(1);

  AnalyzeArgs analyze;
  auto* analyze_cmd = app.add_subcommand("analyze", "response, metrics and per-stage figures of a chain as written");
  analyze_cmd->add_option("chain", analyze.chain, "chain file (TOML)")->required();
  analyze_cmd->add_flag("--json", analyze.json, "print one JSON document on stdout");
  analyze_cmd->add_option("--points", analyze.points, "frequency points of the reported response")
      ->check(CLI::Range(2, 100000));

  PlanArgs plan;
  auto* plan_cmd = app.add_subcommand("plan", "choose the \"auto\" values to meet [target] within [limits]");
  plan_cmd->add_option("chain", plan.chain, "chain file (TOML)")->required();
  plan_cmd->add_flag("--json", plan.json, "print one JSON document on stdout");
  plan_cmd->add_option("--write", plan.write, "write the planned chain as a complete chain file");

  std::string netlist_chain;
  auto* netlist_cmd = app.add_subcommand("netlist", "SPICE netlist of the chain on stdout");
  netlist_cmd->add_option("chain", netlist_chain, "chain file (TOML)")->required();

  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? ok : bad_input;
  }
  try {
    if (*analyze_cmd) return run_analyze(analyze);
    if (*netlist_cmd) return run_netlist(netlist_chain);
    if (*plan_cmd) return run_plan(plan);
  } catch (const std::exception& e) {
    std::cerr << "peakplan: internal error: " << e.what() << "\n";
    return internal_error;
  }
  return internal_error;
}
