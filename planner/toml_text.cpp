#include "planner/toml_text.hpp"

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

}  // namespace peakplan
