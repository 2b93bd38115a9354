// What every reader of chain-file tables shares (the main reader in chain_file.cpp and the
// [variation] reader in variation_file.cpp): source positions, how a value is shown in a
// message, and the unknown-key check with its closest-key suggestion.
#pragma once

#include <string>
#include <string_view>
#include <toml++/toml.h>
#include <vector>

#include "planner/input/diagnostics.hpp"

namespace peakplan {

SourcePosition position(const toml::source_region& region);
// "a, b, c"
std::string quoted_list(const std::vector<std::string_view>& keys);
// A value as a message shows it: "\"5 %\"", 3, "a table", ...
std::string shown(const toml::node& node);
// Reports every key of `table` not in `allowed`, suggesting the closest allowed one.
void check_known_keys(Diagnostics& diagnostics, const toml::table& table, const std::vector<std::string_view>& allowed,
                      const std::string& context);

}  // namespace peakplan
