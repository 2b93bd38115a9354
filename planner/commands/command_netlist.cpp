// peakplan netlist CHAIN.toml
#include <iostream>
#include <memory>

#include "planner/commands/command.hpp"
#include "planner/chain_graph.hpp"
#include "reports/netlist.hpp"

namespace peakplan::cli {

Command add_netlist_command(CLI::App& app) {
  auto chain_path = std::make_shared<std::string>();
  auto* cmd = app.add_subcommand("netlist", "SPICE netlist of the chain on stdout");
  cmd->add_option("chain", *chain_path, "chain file (TOML), or - for standard input")->required();
  cmd->footer(help_footer("peakplan netlist chains/demo_postamp.toml > chain.cir && ngspice -b chain.cir"));
  return {cmd, [chain_path] {
            Diagnostics diagnostics(*chain_path);
            const auto chain = load_chain_file(*chain_path, diagnostics);
            if (!chain) {
              std::cerr << diagnostics.format();
              return int{bad_input};
            }
            print(write_spice_netlist(*chain));
            return int{ok};
          }};
}

}  // namespace peakplan::cli
