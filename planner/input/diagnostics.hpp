// Input errors, collected rather than thrown one at a time, in the shape editors jump to:
//   chains/receiver.toml:14:9: error: stage 'a2': k must be in (-1, 1), saw 1.2
#pragma once

#include <string>
#include <string_view>
#include <vector>

namespace peakplan {

struct SourcePosition {
  int line = 0;    // 1-based; 0 = no position (the whole file)
  int column = 0;  // 1-based
  // Set when the value came from the command line rather than the file: the option text that
  // supplied it ("--set a1.rd=80x"). Diagnostics then name it instead of the file and line.
  std::string origin = {};
};

// TOML++ keeps a source path per parsed node. Text parsed from a command-line option is given
// the path command_line_path(origin), so that a position taken from the node can tell it from
// the file; source_position builds the SourcePosition either way.
std::string command_line_path(std::string_view origin);
SourcePosition source_position(int line, int column, const std::string* path);

struct Diagnostic {
  std::string file;
  SourcePosition where;
  std::string message;
  std::string format() const;
};

class Diagnostics {
 public:
  static constexpr size_t limit = 20;  // more than this and the rest are counted, not kept

  // A file of "-" is standard input (planner/input/chain_input.hpp) and is named "<stdin>".
  explicit Diagnostics(std::string file) : file_(file == "-" ? std::string("<stdin>") : std::move(file)) {}
  void error(SourcePosition where, std::string message);
  bool empty() const { return list_.empty() && dropped_ == 0; }
  const std::vector<Diagnostic>& list() const { return list_; }
  size_t dropped() const { return dropped_; }
  const std::string& file() const { return file_; }
  // Every message, one per line, with a count of any dropped.
  std::string format() const;

 private:
  std::string file_;
  std::vector<Diagnostic> list_;
  size_t dropped_ = 0;
};

// The candidate closest to `word` by edit distance, or empty when none is close enough
// to be a plausible misspelling.
std::string closest_match(std::string_view word, const std::vector<std::string_view>& candidates);

}  // namespace peakplan
