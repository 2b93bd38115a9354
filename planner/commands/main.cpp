// The peakplan command line: the only code that touches argv, stdout, stderr and exit codes.
// Each subcommand lives in its own planner/commands/command_<name>.cpp and registers itself here.
#include <exception>
#include <iostream>
#include <vector>

#include "planner/commands/command.hpp"

int main(int argc, char** argv) {
  using namespace peakplan::cli;
  CLI::App app{"peakplan: plan the gain, bandwidth and peaking of a broadband amplifier chain"};
  app.set_version_flag("--version", std::string("peakplan ") + PEAKPLAN_VERSION);
  app.require_subcommand(1);
  app.footer(help_footer("peakplan analyze chains/demo_postamp.toml"));

  const std::vector<Command> commands{
      add_analyze_command(app),
      add_plan_command(app),
      add_netlist_command(app),
      add_compare_command(app),
      add_sweep_command(app),
      add_report_command(app),
  };

  install_signal_handlers();
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int code = app.exit(e);
    return code == 0 ? ok : bad_input;
  }
  try {
    for (const auto& command : commands)
      if (*command.app) {
        const int status = command.run();
        return stop_signal() != 0 ? exit_for_stop() : status;
      }
  } catch (const peakplan::PlanStopped&) {
    return exit_for_stop();
  } catch (const std::exception& e) {
    if (stop_signal() != 0) return exit_for_stop();
    std::cerr << "peakplan: internal error: " << e.what() << "\n"
              << "peakplan: this is a bug in peakplan, not a fault in your input; please report it with the "
                 "command line and the chain file\n";
    return internal_error;
  }
  return internal_error;
}
