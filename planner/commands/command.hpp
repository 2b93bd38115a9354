// What every peakplan subcommand shares: exit codes, stopping on SIGINT/SIGTERM, the help
// footer, and the way a command registers itself with the CLI11 application. Files are
// written through planner/commands/output_files.hpp.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <memory>
#include <string>

#include "planner/commands/progress_line.hpp"
#include "planner/planner.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan::cli {

// Exit statuses (README and every --help list them). 3 is a bug in peakplan; 4 is the user's
// environment (a directory missing, read-only or full; something in the way); 130 and 143 are
// the shell's convention for a process stopped by SIGINT and SIGTERM (128 + the signal).
enum Exit : int {
  ok = 0,
  target_not_met = 1,
  bad_input = 2,
  internal_error = 3,
  cannot_write = 4,
  interrupted = 130,
  terminated = 143
};

// --effort N of plan and report (planner.hpp, with_effort): how hard the planner searches.
inline constexpr int kMaxEffort = 20;
inline constexpr const char* kEffortHelp =
    "search harder: N times the global starts, then two CRS2 runs from the best (about 5N times "
    "the time of a default plan; default 1)";

// The help footer of every subcommand: each exit status, where the chain format is described,
// and `example`, one command line.
std::string help_footer(const std::string& example);

// SIGINT and SIGTERM set a flag that plans poll (PlanOptions::stop) and commands check before
// they write; should the process not have stopped half a second later (a long analysis polls
// no flag), it exits there and then (a report being swapped in is then old or new all the
// same, planner/commands/output_files.hpp). A second signal ends it at once. SIGXFSZ is ignored, so a file-size limit is a write error
// (EFBIG) reported with exit 4, not a silent death. Call once, before any work.
void install_signal_handlers();
// Plan options that stop on those signals and show no progress.
PlanOptions stopping_plan_options();
// The signal received (SIGINT or SIGTERM), or 0.
int stop_signal();
// The exit status for the signal received (130, 143), with a note on stderr.
int exit_for_stop();

// A registered subcommand and what runs when it is chosen; the runner returns the exit status.
struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
};

// Everything goes to stdout in one write, after the whole text is built, so a failure never
// leaves half an output. Nothing is printed once a stop signal has arrived.
void print(const std::string& text);

// A running plan's progress on a ProgressLine (shown on a terminal once a second has passed,
// cleared when the display goes).
class PlanProgressLine {
 public:
  PlanOptions options() const;  // default plan options reporting to this line, stopping on a signal

 private:
  std::shared_ptr<ProgressLine> line_ = std::make_shared<ProgressLine>();
};

// The corners and Monte Carlo run of a file with [variation] (none without), on every core and
// with a progress line, as analyze and report both run it; samples and seed override the file.
std::optional<VariationResult> run_variation(const ChainSpec& spec, const Chain& chain, std::optional<int> samples,
                                             std::optional<std::uint64_t> seed);

// True when `output` names the same file as `input` (so writing it would overwrite the input).
bool same_file(const std::string& output, const std::string& input);

Command add_analyze_command(CLI::App& app);
Command add_plan_command(CLI::App& app);
Command add_netlist_command(CLI::App& app);
Command add_compare_command(CLI::App& app);
Command add_sweep_command(CLI::App& app);
Command add_report_command(CLI::App& app);

}  // namespace peakplan::cli
