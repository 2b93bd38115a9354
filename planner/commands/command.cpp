#include "planner/commands/command.hpp"

#include <csignal>
#include <cstdio>
#include <filesystem>
#include <fmt/format.h>
#include <sys/time.h>
#include <unistd.h>
#include <utility>

namespace peakplan::cli {

namespace {

volatile std::sig_atomic_t g_stop_signal = 0;

extern "C" void on_stop_signal(int signal) {
  if (g_stop_signal != 0) _exit(128 + g_stop_signal);  // a second signal: at once
  g_stop_signal = signal;
  // Should the work in hand poll no flag (a long analysis), end it half a second from now;
  // setitimer is a plain system call, safe in a handler on Linux.
  itimerval half_second{};
  half_second.it_value.tv_usec = 500000;
  setitimer(ITIMER_REAL, &half_second, nullptr);
}

extern "C" void on_stop_alarm(int) { _exit(128 + (g_stop_signal != 0 ? g_stop_signal : SIGALRM)); }

}  // namespace

void print(const std::string& text) {
  if (g_stop_signal != 0) return;  // stopping: main reports the signal instead
  std::fwrite(text.data(), 1, text.size(), stdout);
  std::fflush(stdout);
}


void install_signal_handlers() {
  struct sigaction action {};
  sigemptyset(&action.sa_mask);
  action.sa_handler = on_stop_signal;
  sigaction(SIGINT, &action, nullptr);
  sigaction(SIGTERM, &action, nullptr);
  action.sa_handler = on_stop_alarm;
  sigaction(SIGALRM, &action, nullptr);
  action.sa_handler = SIG_IGN;
  sigaction(SIGXFSZ, &action, nullptr);
}

int stop_signal() { return g_stop_signal; }

PlanOptions stopping_plan_options() {
  PlanOptions options;
  options.stop = [] { return g_stop_signal != 0; };
  return options;
}

int exit_for_stop() {
  const int signal = g_stop_signal;
  static bool noted = false;  // a command and main may both end with this
  if (!std::exchange(noted, true))
    std::fputs(signal == SIGINT ? "peakplan: interrupted (SIGINT)\n" : "peakplan: terminated (SIGTERM)\n", stderr);
  return signal == SIGTERM ? terminated : signal == SIGINT ? interrupted : 128 + signal;
}

std::string help_footer(const std::string& example) {
  return "Exit status:\n"
         "  0    success\n"
         "  1    the plan did not meet its target (the result is still given, marked)\n"
         "  2    bad input: a positioned error on stderr, nothing written\n"
         "  3    internal error: a bug in peakplan; please report it\n"
         "  4    cannot write output: the path and the system's reason on stderr, nothing half-written\n"
         "  130  stopped by SIGINT (Ctrl-C), nothing half-written\n"
         "  143  stopped by SIGTERM, nothing half-written\n"
         "The chain file format: docs/chain-format.md. A chain file given as - is read from standard input.\n"
         "Example: " +
         example + "\n";
}

PlanOptions PlanProgressLine::options() const {
  PlanOptions options;
  options.stop = [] { return g_stop_signal != 0; };
  options.progress = [line = line_](const PlanProgress& p) {
    line->show(fmt::format("planning: {} evaluations, {:.1f} s, {} search, best so far {}", p.evaluations, p.seconds,
                           p.phase, p.feasible ? "meets every limit" : "misses a limit"));
  };
  return options;
}

std::optional<VariationResult> run_variation(const ChainSpec& spec, const Chain& chain, std::optional<int> samples,
                                             std::optional<std::uint64_t> seed) {
  if (!spec.variation) return std::nullopt;
  ProgressLine progress;
  VariationRunOptions run;
  run.samples = samples;
  run.seed = seed;
  run.threads = default_thread_count();
  run.progress = [&progress](int done, int total) {
    progress.show(fmt::format("monte carlo: {} of {} samples", done, total));
  };
  return analyze_variation(spec, chain, run);
}

bool same_file(const std::string& output, const std::string& input) {
  std::error_code ec;
  return std::filesystem::exists(output, ec) && std::filesystem::equivalent(output, input, ec);
}

}  // namespace peakplan::cli
