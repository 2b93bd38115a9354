#include "planner/input/diagnostics.hpp"

#include <algorithm>
#include <numeric>

namespace peakplan {

namespace {
// No file path starts with a control character, so this prefix cannot be mistaken for one.
constexpr std::string_view kCommandLineMark = "\x1f";
}  // namespace

std::string command_line_path(std::string_view origin) {
  return std::string(kCommandLineMark) + std::string(origin);
}

SourcePosition source_position(int line, int column, const std::string* path) {
  if (path && path->starts_with(kCommandLineMark))
    return {line, column, path->substr(kCommandLineMark.size())};
  return {line, column};
}

std::string Diagnostic::format() const {
  if (!where.origin.empty()) return where.origin + ": error: " + message;
  std::string out = file;
  if (where.line > 0) out += ":" + std::to_string(where.line) + ":" + std::to_string(where.column);
  return out + ": error: " + message;
}

void Diagnostics::error(SourcePosition where, std::string message) {
  if (list_.size() >= limit) {
    ++dropped_;
    return;
  }
  list_.push_back({file_, where, std::move(message)});
}

std::string Diagnostics::format() const {
  std::string out;
  for (const auto& d : list_) out += d.format() + "\n";
  if (dropped_ > 0) out += file_ + ": " + std::to_string(dropped_) + " more errors not shown\n";
  return out;
}

namespace {

size_t edit_distance(std::string_view a, std::string_view b) {
  std::vector<size_t> row(b.size() + 1);
  std::iota(row.begin(), row.end(), size_t{0});
  for (size_t i = 1; i <= a.size(); ++i) {
    size_t diagonal = row[0];
    row[0] = i;
    for (size_t j = 1; j <= b.size(); ++j) {
      const size_t substitution = diagonal + (a[i - 1] == b[j - 1] ? 0 : 1);
      diagonal = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, substitution});
    }
  }
  return row[b.size()];
}

}  // namespace

std::string closest_match(std::string_view word, const std::vector<std::string_view>& candidates) {
  std::string_view best;
  size_t best_distance = std::max<size_t>(2, word.size() / 3) + 1;
  for (auto c : candidates) {
    const size_t d = edit_distance(word, c);
    if (d < best_distance) {
      best_distance = d;
      best = c;
    }
  }
  return std::string(best);
}

}  // namespace peakplan
