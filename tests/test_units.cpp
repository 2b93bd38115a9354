#include <doctest/doctest.h>

#include <cmath>
#include <limits>

#include "models/units.hpp"
#include "planner/input/toml_text.hpp"

using peakplan::Dimension;
using peakplan::parse_quantity;

TEST_CASE("units: prefixed quantities parse to SI base units") {
  CHECK(*parse_quantity("45 fF", Dimension::capacitance).value == doctest::Approx(45e-15));
  CHECK(*parse_quantity("0.6nH", Dimension::inductance).value == doctest::Approx(0.6e-9));
  CHECK(*parse_quantity("40 mS", Dimension::conductance).value == doctest::Approx(40e-3));
  CHECK(*parse_quantity("150 ohm", Dimension::resistance).value == doctest::Approx(150.0));
  CHECK(*parse_quantity("56 Gb/s", Dimension::bit_rate).value == doctest::Approx(56e9));
  CHECK(*parse_quantity("32 GHz", Dimension::frequency).value == doctest::Approx(32e9));
  CHECK(*parse_quantity("3 ps", Dimension::time).value == doctest::Approx(3e-12));
  CHECK(*parse_quantity("30 dB", Dimension::decibels).value == doctest::Approx(30.0));
  CHECK(*parse_quantity("5 %", Dimension::fraction).value == doctest::Approx(0.05));
  CHECK(*parse_quantity("1.5 kohm", Dimension::resistance).value == doctest::Approx(1500.0));
  CHECK(*parse_quantity("120 ohms", Dimension::resistance).value == doctest::Approx(120.0));
  CHECK(*parse_quantity("2 kOhms", Dimension::resistance).value == doctest::Approx(2000.0));
  CHECK(*parse_quantity("150 Ohm", Dimension::resistance).value == doctest::Approx(150.0));
  CHECK(*parse_quantity("2e-15", Dimension::capacitance).value == doctest::Approx(2e-15));
}

TEST_CASE("units: a unit that does not fit the key is an error naming both") {
  const auto r = parse_quantity("2 nH", Dimension::capacitance);
  CHECK_FALSE(r.value);
  CHECK(r.error.find("capacitance") != std::string::npos);
  CHECK(r.error.find("inductance") != std::string::npos);
  CHECK_FALSE(parse_quantity("12 furlongs", Dimension::capacitance).value);
  CHECK_FALSE(parse_quantity("fast", Dimension::frequency).value);
  // Case matters: mS is millisiemens, ms milliseconds.
  CHECK_FALSE(parse_quantity("40 ms", Dimension::conductance).value);
}

TEST_CASE("units: a prefix alone, as SPICE writes it, is an error that suggests the prefixed unit") {
  const auto f = parse_quantity("20 f", Dimension::capacitance);
  CHECK_FALSE(f.value);
  CHECK(f.error.find("did you mean \"20 fF\"?") != std::string::npos);
  // "m" is a unit of its own (metres): still an error for a gm, with the same suggestion.
  const auto m = parse_quantity("30 m", Dimension::conductance);
  CHECK_FALSE(m.value);
  CHECK(m.error.find("which is a length; did you mean \"30 mS\"?") != std::string::npos);
  // No suggestion where a prefix makes no sense (dB, %, a plain number) or the unit is a word.
  CHECK(parse_quantity("3 k", Dimension::decibels).error.find("did you mean") == std::string::npos);
  CHECK(parse_quantity("12 furlongs", Dimension::capacitance).error.find("did you mean") == std::string::npos);
}

TEST_CASE("units: engineering notation") {
  CHECK(peakplan::format_si(45e-15, "F") == "45.0 fF");
  CHECK(peakplan::format_si(4.1e10, "Hz") == "41.0 GHz");
  CHECK(peakplan::format_si(120.0, "ohm") == "120 ohm");
}

TEST_CASE("units: written chain files use the shortest decimal and unit strings that read back exactly") {
  // Derived: fmt's shortest form is the shortest decimal that rounds back to the same double.
  CHECK(peakplan::toml_number(0.07) == "0.07");
  CHECK(peakplan::toml_number(0.1 + 0.2) == "0.30000000000000004");
  CHECK(peakplan::toml_decibels(36.0) == "\"36 dB\"");
  // 0.07 * 100 is 7.000000000000001 in doubles; "7 %" reads back as 7 / 100 = 0.07 exactly.
  CHECK(peakplan::toml_percent(0.07) == "\"7 %\"");
  auto read_back = [](double fraction) {
    const std::string text = peakplan::toml_percent(fraction);
    return *peakplan::parse_quantity(text.substr(1, text.size() - 2), peakplan::Dimension::fraction).value;
  };
  for (const double fraction : {0.02, 0.05, 0.07, 0.123456789, 0.29, 1e-5})
    CHECK(read_back(fraction) == fraction);  // exact: the writer searched for a text that round-trips
  // Not every double is some double divided by 100 (near 1/3 the percentages are spaced wider
  // than 100 times the fractions): then the nearest, one ulp away.
  CHECK(std::fabs(read_back(1.0 / 3.0) - 1.0 / 3.0) <= std::numeric_limits<double>::epsilon());
}
