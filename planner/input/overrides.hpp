// Command-line changes to a chain file, made on its parsed TOML before the chain-file reader
// runs, so that every check the reader makes applies to an overridden value exactly as if it
// had been written in the file. Errors about an overridden value name the option that gave it
// ("--set a1.rd=80x: error: stage 'a1': rd: ..."), not a line of the file.
//
//   --set ID.KEY=VALUE   one key of one [[stage]] (every copy of a counted stage: the copies
//                        share their [[stage]] table) or of a top-level table: chain, input,
//                        signal, target, limits, technology (created when the file has none).
//                        A [[stage]] id wins over a table name of the same spelling.
//                        VALUE is TOML when it parses as a TOML value (80, "80 ohm", "auto",
//                        { min = "0.1 nH", max = "1 nH" }, ["shunt", "tcoil"]) and a string
//                        otherwise (80ohm, auto, 1.2nH), so shell quoting stays easy.
//   a stage replacement  a whole [[stage]] table replaced by the one of the same id in another
//                        chain file's text (the planner's output, for --lock: planner/what_if.hpp).
#pragma once

#include <optional>
#include <string>
#include <string_view>
#include <toml++/toml.h>
#include <vector>

#include "planner/input/diagnostics.hpp"

namespace peakplan {

struct Override {
  std::string origin;  // the option as the user gave it, "--set a1.rd=80x": what errors name
  std::string target;  // a [[stage]] id or a top-level table name
  std::string key;     // the key within it; empty = replace the whole [[stage]] table
  std::string value;   // the value as written; for a replacement, a chain file holding the stage
};

// The top-level tables an override may address.
const std::vector<std::string_view>& overridable_tables();

// "ID.KEY=VALUE" (the text after --set) as an Override with origin "<option> <text>"; a
// malformed one is reported under that origin and gives nullopt. KEY is what follows the last
// '.' of the left side (ids of copies contain dots; keys never do).
std::optional<Override> parse_override(std::string_view text, std::string_view option, Diagnostics& diagnostics);
// Every --set text; nullopt when any was malformed (all are reported).
std::optional<std::vector<Override>> parse_overrides(const std::vector<std::string>& texts, Diagnostics& diagnostics);

// Applies the overrides in order (a later one wins over an earlier one for the same key). An
// unknown ID is reported with the closest stage id or table name; the rest are still applied.
void apply_overrides(toml::table& root, const std::vector<Override>& overrides, Diagnostics& diagnostics);

}  // namespace peakplan
