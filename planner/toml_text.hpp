// Writing text into TOML, shared by the chain writer (planner/chain_writer.cpp) and the
// command-line overrides (planner/overrides.cpp), so a written name and a --set value are
// quoted alike.
#pragma once

#include <string>
#include <string_view>

namespace peakplan {

// `text` as a TOML basic string: in double quotes, with " and \ backslash-escaped and control
// characters (below U+0020, and U+007F) as \uXXXX; other bytes, UTF-8 included, unchanged.
std::string toml_basic_string(std::string_view text);

}  // namespace peakplan
