// Cascades of identical stages against textbook closed forms.
#include <doctest/doctest.h>

#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

TEST_CASE("cascade: n identical first-order stages shrink bandwidth by sqrt(2^(1/n) - 1)") {
  // Textbook derivation (B. Razavi, Design of Integrated Circuits for Optical Communications,
  // limiting-amplifier chapter): 0.6436, 0.5098, 0.4350, 0.3499 for n = 2, 3, 4, 6.
  const auto block = build_stage_system(plain_stage()).rational();
  for (int n : {2, 3, 4, 6}) {
    CAPTURE(n);
    Cascade c;
    for (int i = 0; i < n; ++i) c.append(block);
    CHECK(frequency_metrics(c).bandwidth_hz / plain_bandwidth() ==
          doctest::Approx(std::sqrt(std::pow(2.0, 1.0 / n) - 1.0)).epsilon(1e-9));
    CHECK(c.dc_value() == doctest::Approx(std::pow(-2.0, n)));
  }
}

TEST_CASE("cascade: a first-order stage rises in 2.197 RC and delays by RC") {
  // 10-90 % rise of 1 - exp(-t/RC) is RC ln 9 = 2.1972 RC; group delay at DC is RC (derived).
  const auto c = alone(plain_stage());
  const double rc = 100.0 * 100e-15;
  const auto f = frequency_metrics(c);
  const auto t = step_metrics(step_response(c, choose_time_axis(c, f.bandwidth_hz)));
  CHECK(t.rise_time_s == doctest::Approx(std::log(9.0) * rc).epsilon(1e-4));
  CHECK(f.group_delay_s == doctest::Approx(rc).epsilon(1e-12));
  CHECK(t.overshoot_pct == doctest::Approx(0.0));
  CHECK(t.settling_time_s == doctest::Approx(std::log(100.0) * rc).epsilon(1e-4));  // 1 % band: RC ln 100
}

TEST_CASE("cascade: two Butterworth T-coil stages follow (2^(1/n) - 1)^(1/4)") {
  // n identical second-order Butterworth stages: BW_n/BW_1 = (2^(1/n) - 1)^(1/4) (derived).
  const auto block = build_stage_system(tcoil_stage(1.0 / std::sqrt(2.0))).rational();
  const double one = frequency_metrics(Cascade({block})).bandwidth_hz;
  for (int n : {2, 3}) {
    Cascade c;
    for (int i = 0; i < n; ++i) c.append(block);
    CHECK(frequency_metrics(c).bandwidth_hz / one == doctest::Approx(std::pow(std::pow(2.0, 1.0 / n) - 1.0, 0.25)).epsilon(1e-9));
  }
}

TEST_CASE("cascade: the step response of two defective T-coil poles is exact") {
  // Two identical critically damped stages: (1 + s/w)^-4 overall, whose step response has the
  // closed form 1 - e^{-x}(1 + x + x^2/2 + x^3/6), x = w t (derived). Poles and residues would
  // fail here; the matrix exponential does not.
  const auto s = tcoil_stage(1.0);
  const auto block = build_stage_system(s).rational();
  const Cascade c({block, block});
  const double w = 4.0 / (s.rd * s.c_node);  // w_n = 4 zeta/(RC), zeta = 1
  const auto step = step_response(c, TimeAxis{0.05e-12, 400});
  for (size_t k = 0; k < step.y.size(); k += 37) {
    const double x = w * step.time(k);
    const double expected = 1.0 - std::exp(-x) * (1.0 + x + x * x / 2.0 + x * x * x / 6.0);
    CHECK(step.y[k] == doctest::Approx(expected).epsilon(1e-9));
  }
}

TEST_CASE("cascade: cumulative metrics at each node follow the n-stage closed form") {
  // Three identical plain stages, each loaded only by the next one's c_in (100 fF on every
  // node: 10 fF c_out + 90 fF c_in; the last carries 90 fF c_load). At node n the cascade is
  // n identical poles, so the bandwidth is f1*sqrt(2^(1/n) - 1) (derived, as above) and the
  // gain (gm*Rd)^n.
  Chain chain;
  for (int i = 0; i < 3; ++i)
    chain.stages.push_back(make_stage("s" + std::to_string(i + 1), i - 1, plain_circuit(0.02, 100.0, 10e-15),
                                      90e-15, i == 2 ? 90e-15 : 0.0));
  fill_node_capacitances(chain);
  AnalysisOptions options;
  options.keep_waveforms = false;
  const auto analysis = analyze_chain(chain, options);
  for (int n = 1; n <= 3; ++n) {
    CAPTURE(n);
    const auto& node = analysis.stages[static_cast<size_t>(n - 1)].cumulative.frequency;
    CHECK(node.bandwidth_hz / plain_bandwidth() == doctest::Approx(std::sqrt(std::pow(2.0, 1.0 / n) - 1.0)).epsilon(1e-9));
    CHECK(std::abs(node.dc_gain) == doctest::Approx(std::pow(2.0, n)).epsilon(1e-12));
    CHECK(node.group_delay_s == doctest::Approx(n * 10e-12).epsilon(1e-9));  // n RC (derived)
  }
  // The last node's cumulative metrics are the main output's.
  CHECK(analysis.stages.back().cumulative.frequency.bandwidth_hz ==
        doctest::Approx(analysis.outputs.back().response.frequency.bandwidth_hz).epsilon(1e-12));
}

TEST_CASE("cascade: a sag inside the band is measured at its depth and the -3 dB edge beyond it") {
  // H = (s^2 + 2 zz s + 1) / ((s^2 + 2 zp s + 1)(1 + s/100)), time in ps. The biquad ratio
  // ((1-w^2)^2 + 4 zz^2 w^2) / ((1-w^2)^2 + 4 zp^2 w^2) is smallest at w = 1, where it is
  // (zz/zp)^2 (derived); the far pole adds -10 log10(1 + 1e-4) dB there.
  const double zz = 0.2, zp = 0.25;
  const std::vector<double> num{1.0, 2.0 * zz, 1.0};
  const std::vector<double> den{1.0, 2.0 * zp + 0.01, 1.0 + 2.0 * zp * 0.01, 0.01};
  const Cascade c({Rational(num, den, 1e-12)});
  const auto f = frequency_metrics(c);
  const double expected = 20.0 * std::log10(zz / zp) - 10.0 * std::log10(1.0 + 1e-4);
  CHECK(f.sag_db == doctest::Approx(expected).epsilon(1e-5));
  CHECK(f.sag_frequency_hz == doctest::Approx(1e12 / (2.0 * pi)).epsilon(0.01));
  CHECK(f.bandwidth_hz > 50.0 * f.sag_frequency_hz);  // the edge is set by the far pole
  // A single pole has no sag.
  CHECK(frequency_metrics(alone(plain_stage())).sag_db == 0.0);
}

TEST_CASE("cascade: blocks sampled alone and multiplied give the cascade's own nodal samples") {
  // derived: each gm cell isolates its input, so H = H1 H2 and the group delays add; analysis
  // reuses the stages' samples for the cascade on that ground, and the two must agree bit for bit.
  const auto a = build_stage_system(plain_circuit(0.04, 100.0, 30e-15));
  StageCircuit shunt = plain_circuit(0.03, 120.0, 20e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = 0.3e-9;
  const auto b = build_stage_system(shunt);
  const auto grid = FrequencyGrid::log(1e8, 1e12, 300);
  const auto sa = sample_nodal({&a}, grid), sb = sample_nodal({&b}, grid);
  const auto product = in_series({&sa, &sb});
  const auto direct = sample_nodal({&a, &b}, grid);
  CHECK(product.h == direct.h);
  CHECK(product.group_delay_s == direct.group_delay_s);
  const auto other = sample_nodal({&a}, FrequencyGrid::log(1e8, 1e12, 301));
  CHECK_THROWS_AS(in_series({&sa, &other}), std::invalid_argument);
}

TEST_CASE("cascade: an analysis on two threads equals the one-thread analysis bit for bit") {
  // Each stage alone, an output's response, its eye and its noise are computed apart, each into
  // its own slot (models/analysis.cpp): the thread count cannot change a digit.
  Chain chain;
  chain.name = "three mixed stages (test)";
  chain.r_source = 50.0;
  StageCircuit shunt = plain_circuit(0.03, 120.0, 20e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = 0.3e-9;
  chain.stages.push_back(make_stage("a", -1, plain_circuit(0.04, 100.0, 30e-15), 40e-15));
  chain.stages.push_back(make_stage("b", 0, shunt, 25e-15));
  chain.stages.push_back(make_stage("c", 1, plain_circuit(0.02, 80.0, 10e-15), 20e-15, 30e-15));
  fill_node_capacitances(chain);
  AnalysisOptions options;
  Signal signal;
  signal.bit_rate = 40e9;
  signal.swing = 0.02;
  options.signal = signal;
  options.swing_given = true;
  const auto one = analyze_chain(chain, options);
  options.threads = 2;
  const auto two = analyze_chain(chain, options);
  REQUIRE(one.stages.size() == two.stages.size());
  for (size_t i = 0; i < one.stages.size(); ++i) {
    CHECK(one.stages[i].alone.sampled.h == two.stages[i].alone.sampled.h);
    CHECK(one.stages[i].alone.step.overshoot_pct == two.stages[i].alone.step.overshoot_pct);
  }
  const auto& a = one.outputs.back();
  const auto& b = two.outputs.back();
  CHECK(a.response.sampled.h == b.response.sampled.h);
  CHECK(a.response.frequency.bandwidth_hz == b.response.frequency.bandwidth_hz);
  REQUIRE(a.eye);
  REQUIRE(b.eye);
  CHECK(a.eye->estimate.prbs.eye.height == b.eye->estimate.prbs.eye.height);
  CHECK(a.eye->noise.differential_rms_v == b.eye->noise.differential_rms_v);
  CHECK(a.eye->statistical->height_at_ber == b.eye->statistical->height_at_ber);
}

TEST_CASE("cascade: a stage repeating an earlier stage's circuit gets the response alone its own circuit gives") {
  // analyze_chain analyses each distinct circuit once and copies the summary to the stages that
  // repeat it (models/analysis.cpp). Derived: the response alone depends on the circuit only, so
  // the copy must equal that stage's own summary bit for bit, and a stage that differs (here by
  // its load capacitance, the next stage's c_in) must not be given another's.
  Chain chain;
  chain.name = "a repeated shunt stage (test)";
  chain.r_source = 50.0;
  StageCircuit shunt = plain_circuit(0.04, 95.0, 14e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = 0.13e-9;
  chain.stages.push_back(make_stage("a", -1, shunt, 25e-15));
  chain.stages.push_back(make_stage("b", 0, shunt, 25e-15));
  chain.stages.push_back(make_stage("c", 1, shunt, 25e-15));
  chain.stages.push_back(make_stage("d", 2, shunt, 40e-15, 20e-15));
  fill_node_capacitances(chain);
  REQUIRE(chain.stages[0].circuit == chain.stages[1].circuit);
  REQUIRE_FALSE(chain.stages[2].circuit == chain.stages[1].circuit);  // c feeds d's larger c_in
  const auto analysis = analyze_chain(chain);
  for (size_t i = 0; i < chain.stages.size(); ++i) {
    CAPTURE(i);
    const auto system = build_stage_system(chain.stages[i].circuit);
    const auto own = summarise(Cascade({system.rational()}), {&system}, AnalysisOptions{});
    const auto& alone = analysis.stages[i].alone;
    CHECK(analysis.stages[i].stage == static_cast<int>(i));
    CHECK(alone.frequency.bandwidth_hz == own.frequency.bandwidth_hz);
    CHECK(alone.frequency.peaking_db == own.frequency.peaking_db);
    CHECK(alone.step.overshoot_pct == own.step.overshoot_pct);
    CHECK(alone.poles == own.poles);
  }
  CHECK(analysis.stages[1].alone.frequency.bandwidth_hz != analysis.stages[2].alone.frequency.bandwidth_hz);
}
