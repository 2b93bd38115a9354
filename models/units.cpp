#include "models/units.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <fmt/format.h>
#include <vector>

namespace peakplan {
namespace {

struct UnitSpelling {
  std::string_view text;
  Dimension dimension;
  bool takes_prefix;
};

// Longest spellings first within a dimension so that "ohm" wins over a stray "m".
constexpr std::array kSpellings{
    UnitSpelling{"F", Dimension::capacitance, true},
    UnitSpelling{"H", Dimension::inductance, true},
    UnitSpelling{"ohm", Dimension::resistance, true},
    UnitSpelling{"Ohm", Dimension::resistance, true},
    UnitSpelling{"ohms", Dimension::resistance, true},  // the plural a new user types
    UnitSpelling{"Ohms", Dimension::resistance, true},
    UnitSpelling{"\xCE\xA9", Dimension::resistance, true},  // Greek capital omega
    UnitSpelling{"S", Dimension::conductance, true},
    UnitSpelling{"A/V", Dimension::conductance, true},
    UnitSpelling{"Hz", Dimension::frequency, true},
    UnitSpelling{"s", Dimension::time, true},
    UnitSpelling{"b/s", Dimension::bit_rate, true},
    UnitSpelling{"bps", Dimension::bit_rate, true},
    UnitSpelling{"V/rtHz", Dimension::noise_density, true},
    UnitSpelling{"V/sqrtHz", Dimension::noise_density, true},
    UnitSpelling{"A/W", Dimension::responsivity, true},  // before "W" and "A"
    UnitSpelling{"dBm", Dimension::power, false},        // before "dB" and "m"
    UnitSpelling{"W", Dimension::power, true},
    UnitSpelling{"V", Dimension::voltage, true},
    UnitSpelling{"A", Dimension::current, true},  // after "A/V", which it would otherwise shadow
    UnitSpelling{"K", Dimension::temperature, false},
    UnitSpelling{"dB", Dimension::decibels, false},
    UnitSpelling{"%", Dimension::fraction, false},
    UnitSpelling{"m", Dimension::length, true},  // last: "ohm" and "dBm" end in m too
};

struct Prefix {
  std::string_view text;
  double factor;
};

constexpr std::array kPrefixes{
    Prefix{"a", 1e-18}, Prefix{"f", 1e-15}, Prefix{"p", 1e-12}, Prefix{"n", 1e-9},
    Prefix{"u", 1e-6},  Prefix{"\xC2\xB5", 1e-6},  // micro sign
    Prefix{"m", 1e-3},  Prefix{"k", 1e3},   Prefix{"M", 1e6},   Prefix{"G", 1e9},
    Prefix{"T", 1e12},  Prefix{"P", 1e15},
};

std::string_view trim(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

bool ends_with(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

// Splits "nH" into a prefix factor and a unit; nullopt if the text is no known unit.
std::optional<std::pair<double, Dimension>> match_unit(std::string_view unit) {
  for (const auto& spelling : kSpellings) {
    if (!ends_with(unit, spelling.text)) continue;
    const auto head = unit.substr(0, unit.size() - spelling.text.size());
    if (head.empty()) return std::pair{1.0, spelling.dimension};
    if (!spelling.takes_prefix) continue;
    for (const auto& prefix : kPrefixes)
      if (head == prefix.text) return std::pair{prefix.factor, spelling.dimension};
  }
  return std::nullopt;
}

}  // namespace

std::string_view unit_symbol(Dimension d) {
  switch (d) {
    case Dimension::capacitance: return "F";
    case Dimension::inductance: return "H";
    case Dimension::resistance: return "ohm";
    case Dimension::conductance: return "S";
    case Dimension::frequency: return "Hz";
    case Dimension::time: return "s";
    case Dimension::bit_rate: return "b/s";
    case Dimension::voltage: return "V";
    case Dimension::current: return "A";
    case Dimension::temperature: return "K";
    case Dimension::noise_density: return "V/rtHz";
    case Dimension::responsivity: return "A/W";
    case Dimension::length: return "m";
    case Dimension::power: return "W";
    case Dimension::decibels: return "dB";
    case Dimension::fraction: return "%";
    case Dimension::dimensionless: return "";
  }
  return "";
}

std::string describe(Dimension d) {
  switch (d) {
    case Dimension::capacitance: return "a capacitance (F, e.g. \"45 fF\")";
    case Dimension::inductance: return "an inductance (H, e.g. \"0.6 nH\")";
    case Dimension::resistance: return "a resistance (ohm, e.g. \"150 ohm\")";
    case Dimension::conductance: return "a transconductance (S, e.g. \"40 mS\")";
    case Dimension::frequency: return "a frequency (Hz, e.g. \"32 GHz\")";
    case Dimension::time: return "a time (s, e.g. \"3 ps\")";
    case Dimension::bit_rate: return "a bit rate (b/s, e.g. \"56 Gb/s\")";
    case Dimension::voltage: return "a voltage (V, e.g. \"400 mV\")";
    case Dimension::current: return "a current (A, e.g. \"20 mA\")";
    case Dimension::temperature: return "a temperature (K, e.g. 300)";
    case Dimension::noise_density: return "a noise density (V/rtHz, e.g. \"10 nV/rtHz\")";
    case Dimension::responsivity: return "a responsivity (A/W, e.g. \"0.8 A/W\")";
    case Dimension::length: return "a length (m, e.g. \"1310 nm\")";
    case Dimension::power: return "an optical power (W or dBm, e.g. \"-12 dBm\")";
    case Dimension::decibels: return "a level in dB (e.g. \"30 dB\")";
    case Dimension::fraction: return "a percentage (e.g. \"5 %\")";
    case Dimension::dimensionless: return "a plain number";
  }
  return "a value";
}

double from_plain_number(double x, Dimension /*d*/) { return x; }

ParsedQuantity parse_quantity(std::string_view text, Dimension expected) {
  const auto body = trim(text);
  double number = 0.0;
  const auto* first = body.data();
  const auto* last = body.data() + body.size();
  // from_chars rejects a leading '+'; accept it since people write "+3 dB".
  if (first != last && *first == '+') ++first;
  const auto [end, ec] = std::from_chars(first, last, number);
  if (ec != std::errc{} || end == first)
    return {std::nullopt, "expected " + describe(expected) + ", saw \"" + std::string(text) +
                              "\" which does not start with a number"};
  if (!std::isfinite(number))
    return {std::nullopt, "expected a finite number, saw \"" + std::string(text) + "\""};
  const auto unit = trim(std::string_view(end, static_cast<size_t>(last - end)));
  if (unit.empty()) return {from_plain_number(number, expected), {}};

  // A prefix alone, as SPICE writes it ("20 f", "30 m"): the value with the prefix and the unit.
  const auto symbol = unit_symbol(expected);
  const bool scalable = !symbol.empty() && expected != Dimension::decibels && expected != Dimension::fraction &&
                        expected != Dimension::temperature;
  const std::string hint = unit.size() == 1 && std::string_view("afpnumkMGT").find(unit[0]) != std::string_view::npos &&
                                   scalable
                               ? fmt::format("; did you mean \"{} {}{}\"?", std::string_view(first, end), unit, symbol)
                               : std::string();
  const auto matched = match_unit(unit);
  if (!matched)
    return {std::nullopt, "unknown unit \"" + std::string(unit) + "\" in \"" + std::string(text) +
                              "\"; expected " + describe(expected) + hint};
  const auto [factor, dimension] = *matched;
  if (dimension != expected)
    return {std::nullopt, "expected " + describe(expected) + ", saw \"" + std::string(text) +
                              "\", which is " + describe(dimension).substr(0, describe(dimension).find(" (")) + hint};
  switch (dimension) {
    case Dimension::decibels: return {number, {}};
    case Dimension::fraction: return {number / 100.0, {}};
    case Dimension::power:
      if (unit == "dBm") return {from_dbm(number), {}};
      return {number * factor, {}};
    default: return {number * factor, {}};
  }
}

std::string format_si(double value, std::string_view unit, int digits) {
  if (!std::isfinite(value)) return std::isnan(value) ? "n/a" : (value > 0 ? "inf" : "-inf");
  if (value == 0.0) return "0 " + std::string(unit);
  static constexpr std::array<std::pair<int, const char*>, 11> kSteps{{
      {-18, "a"}, {-15, "f"}, {-12, "p"}, {-9, "n"}, {-6, "u"}, {-3, "m"},
      {0, ""}, {3, "k"}, {6, "M"}, {9, "G"}, {12, "T"}}};
  const double magnitude = std::fabs(value);
  int exponent = static_cast<int>(std::floor(std::log10(magnitude) / 3.0)) * 3;
  exponent = std::clamp(exponent, -18, 12);
  const char* prefix = "";
  for (const auto& [e, p] : kSteps)
    if (e == exponent) prefix = p;
  const double scaled = value / std::pow(10.0, exponent);
  const int integer_digits = std::fabs(scaled) >= 100 ? 3 : std::fabs(scaled) >= 10 ? 2 : 1;
  const int decimals = std::max(0, digits - integer_digits);
  char buffer[64];
  std::snprintf(buffer, sizeof buffer, "%.*f %s%.*s", decimals, scaled, prefix,
                static_cast<int>(unit.size()), unit.data());
  return buffer;
}

double to_dbm(double watts) { return 10.0 * std::log10(watts / 1e-3); }
double from_dbm(double dbm) { return 1e-3 * std::pow(10.0, dbm / 10.0); }

double to_db(double ratio) { return 20.0 * std::log10(std::fabs(ratio)); }
double from_db(double db) { return std::pow(10.0, db / 20.0); }

}  // namespace peakplan
