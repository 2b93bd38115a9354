// What the loader makes of values written the way practitioners write them: the trade's
// spellings of enumerations and rates read as the format's own.
#include <doctest/doctest.h>

#include <string>

#include "planner/input/chain_file.hpp"
#include "planner/input/diagnostics.hpp"

namespace {

peakplan::ChainSpec spec_of(const std::string& signal) {
  peakplan::Diagnostics d("values.toml");
  const auto spec = peakplan::parse_chain_spec(signal + R"(
[[stage]]
id = "a"
kind = "Plain"
gm = "40 mS"
rd = "100 ohm"
c_load = "40 fF"
)", d);
  INFO(d.format());
  REQUIRE(spec);
  return *spec;
}

}  // namespace

TEST_CASE("chain values: enumerations are case-insensitive and read as their lower-case names") {
  const auto spec = spec_of("[signal]\nbit_rate = \"56 Gb/s\"\nmodulation = \"PAM4\"\npattern = \"PRBS15\"\n");
  CHECK(spec.signal->modulation == peakplan::Modulation::pam4);
  CHECK(spec.signal->pattern == "prbs15");
  CHECK(spec.stages.front().kinds.front() == peakplan::load_kind_from_name("plain"));
}

TEST_CASE("chain values: a symbol rate in baud is bits per symbol times the rate") {
  // PAM4 carries two bits per symbol, NRZ one (docs/physics.md (metrics): symbol rate = bit rate / 2).
  const auto pam4 = spec_of("[signal]\nbit_rate = \"53.125 GBd\"\nmodulation = \"pam4\"\n");
  CHECK(pam4.signal->bit_rate == doctest::Approx(106.25e9).epsilon(1e-15));
  const auto nrz = spec_of("[signal]\nbit_rate = \"25.78125 GBd\"\n");
  CHECK(nrz.signal->bit_rate == doctest::Approx(25.78125e9).epsilon(1e-15));
}

TEST_CASE("chain values: PRBS13, and PRBS13Q for PAM4, the usual PAM4 test patterns, are accepted") {
  const auto nrz = spec_of("[signal]\nbit_rate = \"53.125 Gb/s\"\npattern = \"prbs13\"\n");
  CHECK(nrz.signal->pattern == "prbs13");
  // PRBS13Q is PRBS13's bits paired into Gray-coded PAM4 symbols, which is what prbs13 under
  // PAM4 is here: the two names read the same.
  const auto q = spec_of("[signal]\nbit_rate = \"53.125 GBd\"\nmodulation = \"pam4\"\npattern = \"PRBS13Q\"\n");
  CHECK(q.signal->pattern == "prbs13");
  CHECK(q.signal->modulation == peakplan::Modulation::pam4);
}

TEST_CASE("chain values: a swing may be written in mVpp or mVppd; it is the differential peak-to-peak either way") {
  // The format's convention (docs/chain-format.md): swing is differential peak to peak, so the
  // suffixes say what the number already means.
  CHECK(*spec_of("[signal]\nbit_rate = \"25 Gb/s\"\nswing = \"20 mV\"\n").signal->swing == doctest::Approx(0.020));
  CHECK(*spec_of("[signal]\nbit_rate = \"25 Gb/s\"\nswing = \"20 mVpp\"\n").signal->swing == doctest::Approx(0.020));
  CHECK(*spec_of("[signal]\nbit_rate = \"25 Gb/s\"\nswing = \"20 mVppd\"\n").signal->swing == doctest::Approx(0.020));
  CHECK(*spec_of("[signal]\nbit_rate = \"25 Gb/s\"\nswing = \"0.8 Vppd\"\n").signal->swing == doctest::Approx(0.8));
  peakplan::Diagnostics d("values.toml");
  CHECK_FALSE(peakplan::parse_chain_spec("[signal]\nbit_rate = \"25 Gb/s\"\nswing = \"40 mApp\"\n[[stage]]\nid = \"a\"\n"
                                         "kind = \"plain\"\ngm = \"40 mS\"\nrd = \"100 ohm\"\n", d));
  REQUIRE_FALSE(d.list().empty());
  CHECK(d.list().front().format().find("[signal] swing") != std::string::npos);
  CHECK(d.list().front().format().find("3:9") != std::string::npos);
}

TEST_CASE("chain values: [signal] receiver_bandwidth is a frequency") {
  const auto spec = spec_of("[signal]\nbit_rate = \"56 Gb/s\"\nreceiver_bandwidth = \"42 GHz\"\n");
  REQUIRE(spec.signal->receiver_bandwidth);
  CHECK(*spec.signal->receiver_bandwidth == doctest::Approx(42e9));
}
