#include "planner/input/plausible_range.hpp"

#include <cmath>
#include <cstdio>
#include <limits>

namespace peakplan {

// The bands are wide on purpose (several decades past anything built on a chip or a board for
// 1-200 Gb/s links) so that only a misread prefix or a missing unit falls outside them.
std::optional<PlausibleRange> plausible_range(Dimension d) {
  switch (d) {
    case Dimension::capacitance: return PlausibleRange{1e-19, 1e-8, 1e-16, 2e-12};
    case Dimension::inductance: return PlausibleRange{1e-14, 1e-5, 1e-12, 5e-9};
    case Dimension::resistance: return PlausibleRange{1e-3, 1e8, 1.0, 1e4};
    case Dimension::conductance: return PlausibleRange{1e-7, 100.0, 1e-4, 1.0};
    case Dimension::frequency: return PlausibleRange{1e3, 1e14, 1e8, 1e12};
    case Dimension::time: return PlausibleRange{1e-17, 1e-5, 1e-14, 1e-9};
    case Dimension::bit_rate: return PlausibleRange{1e3, 1e13, 1e8, 5e11};
    case Dimension::voltage: return PlausibleRange{1e-7, 100.0, 1e-3, 2.0};
    case Dimension::current: return PlausibleRange{1e-12, 10.0, 1e-5, 0.2};
    case Dimension::temperature: return PlausibleRange{1.0, 1000.0, 200.0, 450.0};
    case Dimension::noise_density: return PlausibleRange{1e-13, 1e-3, 1e-10, 1e-7};
    case Dimension::responsivity: return PlausibleRange{1e-3, 10.0, 0.05, 1.3};
    case Dimension::length: return PlausibleRange{1e-7, 1e-4, 4e-7, 2e-6};
    case Dimension::power: return PlausibleRange{1e-12, 1.0, 1e-7, 1e-2};
    case Dimension::decibels:
    case Dimension::fraction:
    case Dimension::dimensionless: return std::nullopt;
  }
  return std::nullopt;
}

namespace {

// "35 fF": the value with the SI prefix that leaves 1 <= mantissa < 1000 and no trailing zeros.
std::string prefixed(double value, std::string_view unit) {
  static constexpr const char* kPrefixes[] = {"a", "f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
  const int index = static_cast<int>(std::floor(std::log10(std::fabs(value)) / 3.0)) + 6;
  char buffer[64];
  if (index < 0 || index > 10) {  // beyond every prefix: plain scientific notation
    std::snprintf(buffer, sizeof buffer, "%.12g %.*s", value, static_cast<int>(unit.size()), unit.data());
    return buffer;
  }
  std::snprintf(buffer, sizeof buffer, "%.12g %s%.*s", value / std::pow(10.0, 3 * (index - 6)), kPrefixes[index],
                static_cast<int>(unit.size()), unit.data());
  return buffer;
}

}  // namespace

std::string implausibility(double value, Dimension d) {
  const auto range = plausible_range(d);
  const double magnitude = std::fabs(value);
  if (!range || value == 0.0 || (magnitude >= range->min && magnitude <= range->max)) return {};
  const auto unit = unit_symbol(d);
  std::string text = prefixed(value, unit) + " is outside the plausible range " +
                     prefixed(range->min, unit) + " .. " + prefixed(range->max, unit);
  // The same digits under another SI prefix, nearest (in decades) to the middle of the typical band.
  const double centre = std::sqrt(range->typical_min * range->typical_max);
  double best = std::numeric_limits<double>::quiet_NaN();
  for (int step = -8; step <= 8; ++step) {
    const double candidate = magnitude * std::pow(1e3, step);
    if (step == 0 || candidate < range->typical_min || candidate > range->typical_max) continue;
    if (std::isnan(best) || std::fabs(std::log10(candidate / centre)) < std::fabs(std::log10(best / centre)))
      best = candidate;
  }
  if (!std::isnan(best)) text += "; did you mean \"" + prefixed(std::copysign(best, value), unit) + "\"?";
  return text;
}

}  // namespace peakplan
