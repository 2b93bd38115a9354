// peakplan netlist CHAIN.toml [--prbs]
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/overrides.hpp"
#include "reports/netlist.hpp"

namespace peakplan::cli {
namespace {

struct NetlistArgs {
  std::string chain;
  bool prbs = false;
};

int run_netlist(const NetlistArgs& args) {
  Diagnostics diagnostics(args.chain);
  const auto spec = read_chain_spec(args.chain, diagnostics);
  const auto chain = spec ? resolve_chain(*spec, diagnostics) : std::nullopt;
  if (!chain) {
    std::cerr << diagnostics.format();
    return bad_input;
  }
  const auto signal = analysis_options(*spec).signal;
  if (args.prbs && !signal) {
    std::cerr << args.chain << ": error: --prbs drives the netlist with the chain's [signal], and the file has "
              << "none; add a [signal] table with bit_rate (and swing)\n";
    return bad_input;
  }
  NetlistOptions options = args.prbs ? prbs_netlist_drive(*signal) : NetlistOptions{};
  if (signal) options.edge_tau_s = netlist_edge_tau(*signal);
  print(write_spice_netlist(*chain, options));
  return ok;
}

}  // namespace

Command add_netlist_command(CLI::App& app) {
  auto args = std::make_shared<NetlistArgs>();
  auto* cmd = app.add_subcommand("netlist", "SPICE netlist of the chain on stdout");
  cmd->add_option("chain", args->chain, "chain file (TOML), or - for standard input")->required();
  cmd->add_flag("--prbs", args->prbs,
                "drive .tran with the [signal]'s PRBS (one period, at most 2047 symbols, half-circuit levels "
                "+-swing/4) instead of a 0 -> 1 V step");
  cmd->footer(help_footer("peakplan netlist chains/demo_postamp.toml > chain.cir && ngspice -b chain.cir"));
  return {cmd, [args] { return run_netlist(*args); }};
}

}  // namespace peakplan::cli
