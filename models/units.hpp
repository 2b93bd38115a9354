// Physical quantities as written in a chain file, and engineering notation for display.
//
// Inside peakplan every value is a double in SI base units (F, H, ohm, S, Hz, s, b/s, K, V, A, W, m).
// Units matter only at the edges: parsing what a user wrote and formatting what a user reads.
#pragma once

#include <optional>
#include <string>
#include <string_view>

namespace peakplan {

enum class Dimension {
  capacitance,    // F
  inductance,     // H
  resistance,     // ohm
  conductance,    // S
  frequency,      // Hz
  time,           // s
  bit_rate,       // b/s
  voltage,        // V
  current,        // A
  temperature,    // K
  noise_density,  // V/rtHz
  responsivity,   // A/W (a photodiode's)
  length,         // m (a wavelength)
  power,          // W: "-12 dBm" or "63 uW"
  decibels,       // dB: "30 dB" (a chain file must give the unit)
  fraction,       // "5 %" = 0.05 (a chain file must give the unit)
  dimensionless,  // plain number only
};

// The unit symbol a dimension is displayed with ("F", "ohm", "dB", ...).
std::string_view unit_symbol(Dimension d);
// A human phrase for error messages: "a capacitance (F)".
std::string describe(Dimension d);

struct ParsedQuantity {
  std::optional<double> value;  // set on success, SI base units
  std::string error;            // set on failure: what was wrong and what was expected
};

// Parses "45 fF", "0.6nH", "40 mS", "150 ohm", "56 Gb/s", "30 dB", "5 %".
// A unit that does not fit the dimension is an error naming the dimension it does fit.
ParsedQuantity parse_quantity(std::string_view text, Dimension expected);

// The value of a plain number for a dimension (numbers are SI, or linear for voltage_ratio).
double from_plain_number(double x, Dimension d);

// Engineering notation with an SI prefix and `digits` significant digits: 4.5e-14 F -> "45 fF".
std::string format_si(double value, std::string_view unit, int digits = 3);

// 10*log10(P / 1 mW), and back.
double to_dbm(double watts);
double from_dbm(double dbm);

// 20*log10(|x|).
double to_db(double ratio);
double from_db(double db);

}  // namespace peakplan
