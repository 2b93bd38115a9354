#include "models/variation.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>

namespace peakplan {
namespace {

// SplitMix64 (S. Vigna's public-domain mixer): a counter-based stream. Sample i's stream is
// keyed by a hash of (seed, i), so it can be produced on any thread in any order.
struct SampleStream {
  std::uint64_t state;
  std::uint64_t next() {
    std::uint64_t z = (state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
  }
  // In (0, 1]: 53 random bits, never 0 (the gaussian takes its logarithm).
  double unit() { return (static_cast<double>(next() >> 11) + 1.0) * 0x1.0p-53; }
  double uniform_pm1() { return 2.0 * unit() - 1.0; }
  // Box-Muller, one value per pair of uniforms; cut at +-6.
  double gaussian() {
    const double r = std::sqrt(-2.0 * std::log(unit()));
    const double z = r * std::cos(2.0 * std::numbers::pi * unit());
    return std::clamp(z, -6.0, 6.0);
  }
};

SampleStream stream_for(std::uint64_t seed, std::uint64_t index) {
  SampleStream keyed{seed};
  SampleStream s{keyed.next() ^ index};
  return SampleStream{s.next()};
}

// An offset of spread `spread`: +-3 sigma gaussian or half-width uniform.
double offset(SampleStream& s, Distribution d, double spread) {
  const double x = d == Distribution::gaussian ? s.gaussian() / 3.0 : s.uniform_pm1();
  return spread * x;
}

}  // namespace

std::string_view to_string(VariationClass c) {
  switch (c) {
    case VariationClass::gm: return "gm";
    case VariationClass::capacitance: return "capacitance";
    case VariationClass::inductance: return "inductance";
    case VariationClass::resistance: return "resistance";
    case VariationClass::coupling: return "coupling";
  }
  return "?";
}

std::string_view symbol(VariationClass c) {
  switch (c) {
    case VariationClass::gm: return "gm";
    case VariationClass::capacitance: return "C";
    case VariationClass::inductance: return "L";
    case VariationClass::resistance: return "R";
    case VariationClass::coupling: return "k";
  }
  return "?";
}

std::string_view to_string(Distribution d) { return d == Distribution::gaussian ? "gaussian" : "uniform"; }

Chain apply_variation(const Chain& nominal, const VariationDraw& draw) {
  Chain chain = nominal;
  auto index = [](VariationClass c) { return static_cast<size_t>(c); };
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    ClassOffsets o = draw.global;
    if (i < draw.local.size())
      for (size_t c = 0; c < variation_class_count; ++c) o[c] += draw.local[i][c];
    const double f_gm = 1.0 + o[index(VariationClass::gm)];
    const double f_c = 1.0 + o[index(VariationClass::capacitance)];
    const double f_l = 1.0 + o[index(VariationClass::inductance)];
    const double f_r = 1.0 + o[index(VariationClass::resistance)];
    auto& stage = chain.stages[i];
    auto& c = stage.circuit;
    c.gm *= f_gm;
    stage.c_in *= f_c;
    stage.c_load *= f_c;
    c.c_out *= f_c;
    c.rd *= f_r;
    c.r_load *= f_r;  // an open load (infinity) stays open
    // The kind's own elements by their dimension; the coupling factor moves by an offset.
    for (const auto& p : load_kind_info(c.kind).parameters) {
      if (!p.field || p.role == ParameterRole::alias) continue;
      double& x = c.*p.field;
      if (p.technology == TechnologyBound::coupling) x += o[index(VariationClass::coupling)];
      else if (p.dimension == Dimension::capacitance) x *= f_c;
      else if (p.dimension == Dimension::inductance) x *= f_l;
      else if (p.dimension == Dimension::resistance) x *= f_r;
    }
  }
  fill_node_capacitances(chain);
  return chain;
}

VariationDraw draw_sample(const Variation& variation, std::uint64_t seed, std::uint64_t index, size_t stages) {
  SampleStream s = stream_for(seed, index);
  VariationDraw draw;
  for (auto c : all_variation_classes)
    draw.global[static_cast<size_t>(c)] = offset(s, variation.distribution, variation.spread(c).global);
  draw.local.resize(stages);
  for (auto& local : draw.local)
    for (auto c : all_variation_classes)
      local[static_cast<size_t>(c)] = offset(s, variation.distribution, variation.spread(c).local);
  return draw;
}

Corner nominal_corner() { return {"nominal", {}, {}}; }

std::vector<Corner> extreme_corners(const Variation& variation) {
  std::vector<VariationClass> spread;
  for (auto c : all_variation_classes)
    if (variation.spread(c).global > 0.0) spread.push_back(c);
  const size_t k = spread.size();
  std::vector<Corner> corners;
  // With no global spread the one "combination" is the nominal chain itself, which every corner
  // list has already: adding it would list the nominal twice, the second time unnamed.
  if (k == 0) return corners;
  for (size_t bits = 0; bits < (size_t{1} << k); ++bits) {
    Corner corner;
    for (size_t j = 0; j < k; ++j) {
      // The first class is the most significant bit, so it varies slowest.
      const bool plus = (bits >> (k - 1 - j)) & 1u;
      const auto c = spread[j];
      const auto ci = static_cast<size_t>(c);
      corner.offset[ci] = (plus ? 1.0 : -1.0) * variation.spread(c).global;
      corner.named[ci] = true;
      corner.name += (j ? " " : "") + std::string(symbol(c)) + (plus ? "+" : "-");
    }
    corners.push_back(std::move(corner));
  }
  return corners;
}

}  // namespace peakplan
