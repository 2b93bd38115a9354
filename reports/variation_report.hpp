// The [variation] part of analyze's output (docs/physics.md (process variation)): the `variation` object of
// the JSON document and the corner table and Monte Carlo summary of the text view.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "planner/variation_analysis.hpp"

namespace peakplan {

// {spreads, corners: [{name, offsets, metrics, checks, met}], worst: {metric -> corner},
//  monte_carlo: {samples, seed, distribution, stats, yield, overall_yield, yield_ci95, interval}}.
// Offsets are fractions (coupling absolute); metrics in the keys and units of an output.
nlohmann::json variation_json(const VariationResult& result);
std::string variation_text(const VariationResult& result);

}  // namespace peakplan
