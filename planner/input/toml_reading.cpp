#include "planner/input/toml_reading.hpp"

#include <algorithm>
#include <sstream>

namespace peakplan {

SourcePosition position(const toml::source_region& region) {
  return source_position(static_cast<int>(region.begin.line), static_cast<int>(region.begin.column),
                         region.path.get());
}

std::string quoted_list(const std::vector<std::string_view>& keys) {
  std::string out;
  for (size_t i = 0; i < keys.size(); ++i) out += (i ? ", " : "") + std::string(keys[i]);
  return out;
}

std::string shown(const toml::node& node) {
  std::ostringstream out;
  if (node.is_string())
    out << '"' << node.as_string()->get() << '"';
  else if (node.is_table())
    out << "a table";
  else if (node.is_array())
    out << "an array";
  else if (const auto* i = node.as_integer())
    out << i->get();
  else if (const auto* f = node.as_floating_point())
    out << f->get();
  else if (const auto* b = node.as_boolean())
    out << (b->get() ? "true" : "false");
  else
    out << "a date or time";
  return out.str();
}

void check_known_keys(Diagnostics& diagnostics, const toml::table& table, const std::vector<std::string_view>& allowed,
                      const std::string& context) {
  for (auto&& [key, node] : table) {
    if (std::find(allowed.begin(), allowed.end(), key.str()) != allowed.end()) continue;
    const auto suggestion = closest_match(key.str(), allowed);
    diagnostics.error(position(key.source()), context + "unknown key '" + std::string(key.str()) + "'" +
                                                  (suggestion.empty() ? "; expected one of: " + quoted_list(allowed)
                                                                      : "; did you mean '" + suggestion + "'?"));
  }
}

}  // namespace peakplan
