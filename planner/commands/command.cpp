#include "planner/commands/command.hpp"

#include <cstdio>
#include <filesystem>
#include <fmt/format.h>
#include <fstream>
#include <unistd.h>

namespace peakplan::cli {

void print(const std::string& text) {
  std::fwrite(text.data(), 1, text.size(), stdout);
  std::fflush(stdout);
}

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

PlanProgressLine::PlanProgressLine()
    : terminal_(isatty(fileno(stderr)) == 1), shown_(std::make_shared<bool>(false)) {}

PlanProgressLine::~PlanProgressLine() {
  if (*shown_) std::fputs("\r\033[K", stderr);
}

PlanOptions PlanProgressLine::options() const {
  PlanOptions options;
  if (!terminal_) return options;
  options.progress = [shown = shown_](const PlanProgress& p) {
    if (p.seconds < 1.0) return;
    const auto line = fmt::format("\rplanning: {} evaluations, {:.1f} s, {} search, best so far {}\033[K",
                                  p.evaluations, p.seconds, p.stage, p.feasible ? "meets every limit" : "misses a limit");
    std::fputs(line.c_str(), stderr);
    std::fflush(stderr);
    *shown = true;
  };
  return options;
}

bool same_file(const std::string& output, const std::string& input) {
  std::error_code ec;
  return std::filesystem::exists(output, ec) && std::filesystem::equivalent(output, input, ec);
}

}  // namespace peakplan::cli
