// How far from a broadband chain's typical values a number in a chain file may lie before it is
// read as a mistake rather than a design: `c_load = 35` is 35 F, not 35 fF, and no on-chip
// chain holds a farad. Values outside the plausible band are errors that name the band and,
// when a different SI prefix would put the number among typical values, suggest it.
#pragma once

#include <optional>
#include <string>

#include "models/units.hpp"

namespace peakplan {

struct PlausibleRange {
  double min = 0.0, max = 0.0;                  // nonzero magnitudes outside are errors
  double typical_min = 0.0, typical_max = 0.0;  // where the suggestion looks for a prefix
};

// The band for a dimension, or nullopt when any finite value is acceptable (dB, plain numbers).
std::optional<PlausibleRange> plausible_range(Dimension d);

// An error text when a nonzero `value` of dimension `d` is outside its plausible band, empty
// otherwise: "35 F is outside the plausible range 1 aF .. 10 nF; did you mean \"35 fF\"?"
std::string implausibility(double value, Dimension d);

}  // namespace peakplan
