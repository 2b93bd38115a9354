// The peakplan command line: the only code that touches argv, stdout, stderr and exit codes.
#include <CLI/CLI.hpp>
#include <cstdio>
#include <exception>
#include <fmt/format.h>
#include <iostream>

#include "planner/chain_graph.hpp"
#include "reports/json_report.hpp"
#include "reports/netlist.hpp"
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

int run_analyze(const AnalyzeArgs& args) {
  peakplan::Diagnostics diagnostics(args.chain);
  const auto spec = peakplan::load_chain_spec(args.chain, diagnostics);
  const auto chain = spec ? peakplan::resolve_chain(*spec, diagnostics) : std::nullopt;
  if (!chain) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  peakplan::AnalysisOptions options;
  options.points = args.points;
  if (spec->limits.ripple_band) options.ripple_band_hz = *spec->limits.ripple_band;
  const auto analysis = peakplan::analyze_chain(*chain, options);
  // Build the whole document before printing, so a failure never leaves half an output.
  const std::string text = args.json ? peakplan::analysis_json(*chain, analysis).dump(2) + "\n"
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
  } catch (const std::exception& e) {
    std::cerr << "peakplan: internal error: " << e.what() << "\n";
    return internal_error;
  }
  return internal_error;
}
