// The [variation] table of a chain file (docs/physics.md (process variation)) as read, with source positions:
// the spreads (models/variation.hpp), the Monte Carlo settings and the corners to analyse.
#pragma once

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include "models/variation.hpp"
#include "planner/input/diagnostics.hpp"

namespace peakplan {

struct NamedCornerSpec {
  Corner corner;  // offsets as fractions (coupling absolute)
  SourcePosition where;  // its name
  std::array<SourcePosition, variation_class_count> offset_where{};
};

struct VariationSpec {
  Variation variation;
  std::array<bool, variation_class_count> given{};  // classes the table names
  std::array<SourcePosition, variation_class_count> class_where{};
  int samples = 1000;            // default when the table gives none
  std::uint64_t seed = 1;
  bool extremes = true;          // corners = "extremes" (default) or "none"
  std::vector<NamedCornerSpec> corners;
  SourcePosition where;          // the [variation] header
};

}  // namespace peakplan
