#include "planner/commands/progress_line.hpp"

#include <cstdio>
#include <unistd.h>

namespace peakplan::cli {

ProgressLine::ProgressLine() : terminal_(isatty(fileno(stderr)) == 1), start_(std::chrono::steady_clock::now()) {}

ProgressLine::~ProgressLine() {
  if (shown_) std::fputs("\r\033[K", stderr);
}

void ProgressLine::show(const std::string& text) {
  if (!terminal_) return;
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start_).count();
  if (seconds < 1.0) return;
  std::fputs(("\r" + text + "\033[K").c_str(), stderr);
  std::fflush(stderr);
  shown_ = true;
}

}  // namespace peakplan::cli
