// The one line every human-readable output carries: what peakplan's numbers are and what they
// are not. Kept in one place so the text, the page, the budget and the netlist say the same.
#pragma once

#include <string_view>

namespace peakplan {

inline constexpr std::string_view kPlanningCaution =
    "Planning estimates from small-signal and behavioural models: confirm them by circuit simulation and silicon measurement.";

}  // namespace peakplan
