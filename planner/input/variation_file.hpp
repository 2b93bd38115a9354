// Reading the [variation] table of a chain file (docs/physics.md (process variation)) into a VariationSpec;
// called by the chain-file reader. Every error is positioned (file:line:col) in `diagnostics`.
#pragma once

#include <optional>
#include <string>
#include <toml++/toml.h>

#include "models/chain.hpp"
#include "planner/input/diagnostics.hpp"
#include "planner/input/variation_spec.hpp"

namespace peakplan {

// nullopt when the file has no [variation] table or the table has errors.
std::optional<VariationSpec> read_variation(const toml::table& root, Diagnostics& diagnostics);

// Checks that need the resolved chain: a coupling spread or corner offset that would take some
// T-coil's k out of (-1, 1). Errors at the offending spread or offset.
void check_variation(const VariationSpec& variation, const Chain& chain, Diagnostics& diagnostics);

// The [variation] table (and its [[variation.corner]] tables) as chain-file text that reads
// back to the same spec: percentages in the shortest decimal that gives the same fraction.
std::string variation_toml(const VariationSpec& variation);

}  // namespace peakplan
