#include <doctest/doctest.h>

#include "models/units.hpp"

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

TEST_CASE("units: engineering notation") {
  CHECK(peakplan::format_si(45e-15, "F") == "45.0 fF");
  CHECK(peakplan::format_si(4.1e10, "Hz") == "41.0 GHz");
  CHECK(peakplan::format_si(120.0, "ohm") == "120 ohm");
}
