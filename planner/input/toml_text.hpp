// Writing text into TOML, shared by the chain writer (planner/chain_writer.cpp) and the
// command-line overrides (planner/input/overrides.cpp), so a written name and a --set value are
// quoted alike.
#pragma once

#include <string>
#include <string_view>

namespace peakplan {

// `text` as a TOML basic string: in double quotes, with " and \ backslash-escaped and control
// characters (below U+0020, and U+007F) as \uXXXX; other bytes, UTF-8 included, unchanged.
std::string toml_basic_string(std::string_view text);

// The shortest decimal that reads back as exactly `value` ("0.07", not "0.070000000000000007").
std::string toml_number(double value);
// A dB key's value as the unit string the format requires: "30 dB".
std::string toml_decibels(double db);
// A % key's value (held as a fraction) as "5 %", chosen so that reading it back (the number
// divided by 100) gives exactly `fraction`, or the nearest double when no percentage does.
std::string toml_percent(double fraction);

}  // namespace peakplan
