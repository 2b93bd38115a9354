#include "planner/input/toml_text.hpp"

#include <fmt/format.h>

namespace peakplan {

std::string toml_basic_string(std::string_view text) {
  std::string out = "\"";
  for (const unsigned char ch : text) {
    if (ch == '"' || ch == '\\') {
      out += '\\';
      out += static_cast<char>(ch);
    } else if (ch < 0x20 || ch == 0x7f) {
      out += fmt::format("\\u{:04x}", ch);
    } else {
      out += static_cast<char>(ch);
    }
  }
  return out + "\"";
}

std::string toml_number(double value) { return fmt::format("{}", value); }

std::string toml_decibels(double db) { return toml_basic_string(fmt::format("{} dB", db)); }

std::string toml_percent(double fraction) {
  // 100 * fraction may round to a percentage that does not divide back to the same double;
  // a neighbour a few ulps away does, and the shortest such text is the one to write.
  std::string best;
  double below = 100.0 * fraction, above = below;
  for (int step = 0; step <= 8; ++step) {
    for (const double percent : {below, above}) {
      const std::string text = fmt::format("{}", percent);
      if (percent / 100.0 == fraction && (best.empty() || text.size() < best.size())) best = text;
    }
    below = std::nextafter(below, -HUGE_VAL);
    above = std::nextafter(above, HUGE_VAL);
  }
  if (best.empty()) best = fmt::format("{}", 100.0 * fraction);  // no percentage divides back exactly
  return toml_basic_string(best + " %");
}

}  // namespace peakplan
