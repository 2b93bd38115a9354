// Process variation of a resolved chain (docs/physics.md (process variation)): classes of elements, their
// chip-to-chip (global) and stage-to-stage (local) spreads, the draws of a Monte Carlo run and
// the corners, and the chain a draw makes of the nominal one.
//
// A value of a relative class moves as  v = v0 * (1 + g + l)  where g is the chip's global
// offset of that class (every stage alike) and l the stage copy's own local offset; coupling is
// absolute:  k = k0 + g + l.  A spread is +-3 sigma (gaussian) or the half-width (uniform).
// Gaussian draws are cut at +-6 sigma (twice the spread; a cut that moves no statistic a run of
// any practical size can resolve: P(|z| > 6) = 2e-9), so a reader can bound every value.
// r_source is off chip and held; c_in and c_out do not follow gm (both are capacitances).
#pragma once

#include <array>
#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "models/chain.hpp"

namespace peakplan {

enum class VariationClass { gm, capacitance, inductance, resistance, coupling };
inline constexpr size_t variation_class_count = 5;
inline constexpr std::array<VariationClass, variation_class_count> all_variation_classes{
    VariationClass::gm, VariationClass::capacitance, VariationClass::inductance, VariationClass::resistance,
    VariationClass::coupling};

// The chain-file key: "gm", "capacitance", "inductance", "resistance", "coupling".
std::string_view to_string(VariationClass c);
// The short symbol corner names use: "gm", "C", "L", "R", "k".
std::string_view symbol(VariationClass c);
// Relative classes take fractions (0.1 = 10 %); coupling is absolute.
inline bool is_relative(VariationClass c) { return c != VariationClass::coupling; }

enum class Distribution { gaussian, uniform };
std::string_view to_string(Distribution d);

// +-3 sigma (gaussian) or half-width (uniform); fractions for relative classes.
struct ClassSpread {
  double global = 0.0;
  double local = 0.0;
};

struct Variation {
  std::array<ClassSpread, variation_class_count> spreads{};
  Distribution distribution = Distribution::gaussian;
  const ClassSpread& spread(VariationClass c) const { return spreads[static_cast<size_t>(c)]; }
  ClassSpread& spread(VariationClass c) { return spreads[static_cast<size_t>(c)]; }
};

using ClassOffsets = std::array<double, variation_class_count>;

// One manufactured chip: its global offset per class and each stage copy's local offsets
// (indexed like Chain::stages; empty when there are none).
struct VariationDraw {
  ClassOffsets global{};
  std::vector<ClassOffsets> local;
};

// The nominal chain with every element moved by the draw; node capacitances are refilled from
// the moved c_in and c_load. Pure: the nominal chain is not touched.
Chain apply_variation(const Chain& nominal, const VariationDraw& draw);

// The draw of Monte Carlo sample `index`: a function of (seed, index) only, whatever else runs
// or in which order, so results do not depend on the thread count. Every class and stage is
// drawn whether or not it has a spread, so that the same sample moves the same way when a
// spread is changed (common random numbers).
VariationDraw draw_sample(const Variation& variation, std::uint64_t seed, std::uint64_t index, size_t stages);

// A corner: global offsets only; `named` says which classes the corner names (for display).
struct Corner {
  std::string name;
  ClassOffsets offset{};
  std::array<bool, variation_class_count> named{};
  VariationDraw draw() const { return {offset, {}}; }
};

// The nominal case (no offsets), named "nominal".
Corner nominal_corner();
// Every +- combination of the global spreads of the classes that have one: 2^k corners, in a
// fixed order (the first class in all_variation_classes varies slowest, minus before plus),
// each named by its signs ("gm- C+ L-"); none when no class has a global spread (k = 0: the
// nominal case, which callers list first, is the only one).
std::vector<Corner> extreme_corners(const Variation& variation);

}  // namespace peakplan
