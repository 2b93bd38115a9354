// What every peakplan subcommand shares: exit codes, whole-file output, and the way a command
// registers itself with the CLI11 application.
#pragma once

#include <CLI/CLI.hpp>
#include <functional>
#include <memory>
#include <string>

#include "planner/planner.hpp"

namespace peakplan::cli {

enum Exit : int { ok = 0, target_not_met = 1, bad_input = 2, internal_error = 3 };

// A registered subcommand and what runs when it is chosen; the runner returns the exit status.
struct Command {
  CLI::App* app = nullptr;
  std::function<int()> run;
};

// Everything goes to stdout in one write, after the whole text is built, so a failure never
// leaves half an output.
void print(const std::string& text);

// Writes `text` to `path` whole or not at all: a temporary file beside it, then a rename.
bool write_whole_file(const std::string& path, const std::string& text, std::string& error);

// A one-line progress display of a running plan on stderr, shown only when stderr is a terminal
// and only once the plan has run for a second; the line is cleared when the display goes.
class PlanProgressLine {
 public:
  PlanProgressLine();
  ~PlanProgressLine();
  PlanProgressLine(const PlanProgressLine&) = delete;
  PlanProgressLine& operator=(const PlanProgressLine&) = delete;
  PlanOptions options() const;  // default plan options reporting to this line

 private:
  bool terminal_ = false;
  std::shared_ptr<bool> shown_;
};

// True when `output` names the same file as `input` (so writing it would overwrite the input).
bool same_file(const std::string& output, const std::string& input);

Command add_analyze_command(CLI::App& app);
Command add_plan_command(CLI::App& app);
Command add_netlist_command(CLI::App& app);
Command add_compare_command(CLI::App& app);
Command add_sweep_command(CLI::App& app);
Command add_report_command(CLI::App& app);

}  // namespace peakplan::cli
