// Escaping text for markup, shared by the SVG writer (reports/svg_chart.hpp) and the HTML page
// (reports/html_report.hpp) so that both escape the same characters.
#pragma once

#include <string>
#include <string_view>

namespace peakplan {

// & < > " and ' as entities; everything else (UTF-8 included) passes through. The apostrophe's
// entity is the caller's: "&apos;" in XML, "&#39;" in HTML, where &apos; is not HTML 4.
inline std::string escape_markup(std::string_view text, std::string_view apostrophe) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&': out += "&amp;"; break;
      case '<': out += "&lt;"; break;
      case '>': out += "&gt;"; break;
      case '"': out += "&quot;"; break;
      case '\'': out += apostrophe; break;
      default: out += c;
    }
  }
  return out;
}

}  // namespace peakplan
