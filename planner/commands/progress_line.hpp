// A one-line progress display on stderr for long runs (PlanProgressLine in command.hpp feeds it
// a plan's progress): shown only when stderr is a terminal and once the run has taken a second,
// cleared when the object goes. Nothing is ever written to stdout.
#pragma once

#include <chrono>
#include <string>

namespace peakplan::cli {

class ProgressLine {
 public:
  ProgressLine();
  ~ProgressLine();
  ProgressLine(const ProgressLine&) = delete;
  ProgressLine& operator=(const ProgressLine&) = delete;
  // Replaces the line with `text` (when stderr is a terminal and a second has passed).
  void show(const std::string& text);

 private:
  bool terminal_ = false;
  bool shown_ = false;
  std::chrono::steady_clock::time_point start_;
};

}  // namespace peakplan::cli
