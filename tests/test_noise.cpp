#include <doctest/doctest.h>

#include "test_support.hpp"

#include <algorithm>
#include <cmath>
#include <functional>
#include <numbers>

#include "models/noise.hpp"
#include "models/peaking_design.hpp"

using namespace peakplan;

namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kTs = 1e-12;
constexpr double kT = boltzmann * 300.0;

// The quadrature (Simpson in ln f, 160 points per decade, flat below and power-law tail beyond
// 3 decades past every pole) errs by about 1e-8 of the total for these responses (derived:
// Simpson's remainder (b-a) h^4 max|g''''|/180 with h = ln10/160 and g = S(f) f of order sech
// in ln f; the tail and the flat start miss terms of order (1e-3)^2 of 1e-3 of the total).
// The checks allow 1e-6.
constexpr double kQuadrature = 1e-6;

NoiseOptions resistors_only() {
  NoiseOptions o;
  o.gm_noise = false;
  return o;
}

ChainStage stage(StageCircuit circuit, int driver, double c_in = 0.0, double c_load = 0.0) {
  return test::make_stage("s" + std::to_string(driver + 1), driver, circuit, c_in, c_load);
}

StageCircuit plain(double gm, double rd, double c_out) { return test::plain_circuit(gm, rd, c_out); }

Chain one_stage(StageCircuit circuit, double c_load) {
  Chain chain;
  chain.stages.push_back(stage(circuit, -1, 0.0, c_load));
  fill_node_capacitances(chain);
  return chain;
}

double output_ms(const Chain& chain, const NoiseOptions& options) {
  const ChainNoise noise(chain, static_cast<int>(chain.stages.size()) - 1, options);
  const double rms = summarise_noise(noise).output_rms_v;
  return rms * rms;
}

}  // namespace

TEST_CASE("noise: noise bandwidths of first- and second-order responses") {
  // derived (docs/references.md closed forms): first order  int df/(1+(f/f3)^2) = pi/2 f3;
  // Butterworth-2 int df/(1+(f/f3)^4) = pi/(2 sqrt2) f3 = 1.1107 f3; two coincident poles
  // 1/(1+s tau)^2: NBW = 1/(8 tau), f3 = sqrt(sqrt2 - 1)/(2 pi tau), ratio 1.2203.
  const double f3 = 20e9, t = 1.0 / (2.0 * kPi * f3) / kTs;
  CHECK(noise_bandwidth(Cascade({Rational({3.0}, {1.0, t}, kTs)})) / f3 ==
        doctest::Approx(kPi / 2.0).epsilon(kQuadrature));
  const double nbw_butter = noise_bandwidth(Cascade({Rational({1.0}, {1.0, std::numbers::sqrt2 * t, t * t}, kTs)}));
  CHECK(nbw_butter / f3 == doctest::Approx(kPi / (2.0 * std::numbers::sqrt2)).epsilon(kQuadrature));
  CHECK(nbw_butter / f3 == doctest::Approx(1.1107).epsilon(1e-4));  // printed precision
  const double tau = std::sqrt(std::sqrt(2.0) - 1.0) / (2.0 * kPi * f3) / kTs;
  const Cascade critical({Rational({1.0}, {1.0, tau}, kTs), Rational({1.0}, {1.0, tau}, kTs)});
  CHECK(noise_bandwidth(critical) / f3 == doctest::Approx(2.0 * kPi / (8.0 * std::sqrt(std::sqrt(2.0) - 1.0))).epsilon(kQuadrature));
  CHECK(noise_bandwidth(Cascade({Rational({1.0, 0.5}, {1.0, 1.0}, kTs)})) == std::numeric_limits<double>::infinity());
}

TEST_CASE("noise: a resistor on a capacitor integrates to kT/C whatever the resistance") {
  // Equipartition (docs/references.md, standard physics); the plain stage's node holds 50 fF.
  for (double rd : {50.0, 200.0, 1000.0}) {
    CAPTURE(rd);
    const Chain chain = one_stage(plain(0.02, rd, 20e-15), 30e-15);
    CHECK(output_ms(chain, resistors_only()) == doctest::Approx(kT / 50e-15).epsilon(kQuadrature));
  }
}

TEST_CASE("noise: kT/C holds on a shunt-peaked load, whatever the inductor and its loss") {
  // Equipartition: the drain node is the only capacitor (Rd, r_l and r_load are the losses).
  for (double m : {0.414, 0.707}) {
    CAPTURE(m);
    StageCircuit c = plain(0.02, 150.0, 15e-15);
    c.kind = LoadKind::shunt;
    c.l = inductance_for_m(m, c.rd, 60e-15);
    c.r_l = 8.0;
    c.r_load = 400.0;
    const Chain chain = one_stage(c, 45e-15);
    CHECK(output_ms(chain, resistors_only()) == doctest::Approx(kT / 60e-15).epsilon(kQuadrature));
  }
}

TEST_CASE("noise: kT/C holds on the centre tap of a T-coil") {
  // Equipartition gives <v v^T> = kT Cmat^-1 for the node capacitance matrix; with no winding
  // capacitance the tap's only capacitor is c_node to ground (c_out and Cb sit on the drain and
  // Rd end), so <v_tap^2> = kT / c_node whatever L1, L2, k and the coil losses (derived).
  StageCircuit c;
  c.kind = LoadKind::tcoil;
  c.gm = 0.03;
  c.rd = 100.0;
  c.c_out = 20e-15;
  const double c_tap = 80e-15;
  const auto d = tcoil_for_zeta(1.0 / std::numbers::sqrt2, c.rd, c_tap);
  c.l1 = c.l2 = d.l_half;
  c.k = d.k;
  c.cb = d.cb;
  c.r_l1 = c.r_l2 = 3.0;
  c.r_load = 500.0;
  const Chain chain = one_stage(c, c_tap);
  CHECK(output_ms(chain, resistors_only()) == doctest::Approx(kT / c_tap).epsilon(kQuadrature));
}

TEST_CASE("noise: gm-cell noise of a plain stage is kT gamma gm R / C") {
  // derived: 4kT gamma gm * R^2 / (1 + (w R C)^2) integrates over f to 4kT gamma gm R^2/(4 R C).
  NoiseOptions o;
  o.resistor_noise = false;
  o.gamma = 2.0 / 3.0;
  const Chain chain = one_stage(plain(0.025, 120.0, 10e-15), 40e-15);
  CHECK(output_ms(chain, o) == doctest::Approx(kT * o.gamma * 0.025 * 120.0 / 50e-15).epsilon(kQuadrature));
}

TEST_CASE("noise: upstream noise passes through the downstream gain") {
  // derived: a source Rs on c_in feeding plain stage 1 (R1, C1) feeding plain stage 2 (R2, C2).
  // int_0^inf df / ((1 + w^2 a^2)(1 + w^2 b^2)) = 1/(4(a + b)) and
  // int_0^inf df / ((1 + w^2 a^2)(1 + w^2 b^2)(1 + w^2 c^2)) = (ab + bc + ca)/(4 (a+b)(b+c)(c+a))
  // (partial fractions; the second reduces to the first as c -> 0 and to 3/(32 a) for equal
  // poles, the textbook int dx/(1+x^2)^3 = 3 pi/16).
  // Stage 2's own noise: kT/C2. Stage 1's: 4kT R1 A2^2 / (4 (t1 + t2)) = kT R1 A2^2/(t1 + t2).
  // The source's 4kT Rs through its own pole and both stages:
  //   kT Rs A1^2 A2^2 (ts t1 + t1 t2 + t2 ts) / ((ts + t1)(t1 + t2)(t2 + ts)).
  const double rs = 50.0, c_in1 = 30e-15, c_in2 = 25e-15;
  const double gm1 = 0.04, r1 = 100.0, c1 = 10e-15 + c_in2;
  const double gm2 = 0.03, r2 = 150.0, c2 = 12e-15 + 40e-15;
  Chain chain;
  chain.r_source = rs;
  chain.stages.push_back(stage(plain(gm1, r1, 10e-15), -1, c_in1));
  chain.stages.push_back(stage(plain(gm2, r2, 12e-15), 0, c_in2, 40e-15));
  fill_node_capacitances(chain);
  const double ts = rs * c_in1, t1 = r1 * c1, t2 = r2 * c2, a1 = gm1 * r1, a2 = gm2 * r2;
  const double expected = kT / c2 + kT * r1 * a2 * a2 / (t1 + t2) +
                          kT * rs * a1 * a1 * a2 * a2 * (ts * t1 + t1 * t2 + t2 * ts) /
                              ((ts + t1) * (t1 + t2) * (t2 + ts));
  CHECK(output_ms(chain, resistors_only()) == doctest::Approx(expected).epsilon(kQuadrature));

  // The transfer from the adjoint solves is the chain's transfer function (an independent path:
  // the interpolated rational form); both are exact, so only rounding separates them.
  const ChainNoise noise(chain, 1, resistors_only());
  for (double f : {1e8, 5e9, 3e10, 2e11}) {
    const auto h = noise.transfer(f);
    const auto ref = noise.cascade().evaluate({0.0, 2.0 * kPi * f});
    CHECK(std::abs(h / ref - 1.0) < 1e-9);
  }
}

TEST_CASE("noise: a white input density is referred back unchanged") {
  // derived: with every internal generator off, S_out = e^2 |H|^2, so S_out/|H|^2 = e^2 at every
  // frequency and the output mean square is e^2 A^2 (pi/2) f3.
  NoiseOptions o;
  o.resistor_noise = false;
  o.gm_noise = false;
  o.input_density = 3e-9;
  const Chain chain = one_stage(plain(0.02, 200.0, 25e-15), 25e-15);
  const ChainNoise noise(chain, 0, o);
  for (const auto& p : noise_spectrum(noise, FrequencyGrid::log(1e8, 1e12, 9)))
    CHECK(p.input_density == doctest::Approx(3e-9).epsilon(1e-12));
  const auto summary = summarise_noise(noise);
  const double f3 = 1.0 / (2.0 * kPi * 200.0 * 50e-15), a = 0.02 * 200.0;
  CHECK(summary.output_rms_v == doctest::Approx(3e-9 * a * std::sqrt(kPi / 2.0 * f3)).epsilon(kQuadrature));
  CHECK(summary.noise_bandwidth_hz == doctest::Approx(kPi / 2.0 * f3).epsilon(kQuadrature));
  CHECK(summary.equivalent_input_density == doctest::Approx(3e-9).epsilon(kQuadrature));
}

TEST_CASE("noise: an output that is not a stage is rejected") {
  const Chain chain = one_stage(plain(0.02, 200.0, 25e-15), 0.0);
  CHECK_THROWS_AS(ChainNoise(chain, 3), std::logic_error);
}

TEST_CASE("noise: Q sets the differential eye against the differential noise, sqrt(2) x one half circuit's") {
  // derived: the chain file's swing and eye heights are differential (docs/chain-format.md), the
  // stages are half circuits, and the two halves' noise is uncorrelated, so the differential
  // output noise is sqrt(2) x the half circuit's and Q = eye_d / (2 sqrt(2) sigma_half).
  // Plain stage: gm 20 mS, Rd 100 ohm, 60 fF total (the half circuit's kT/C noise, about 0.26 mV).
  const Chain chain = one_stage(plain(20e-3, 100.0, 10e-15), 50e-15);
  AnalysisOptions options;
  Signal signal;
  signal.bit_rate = 10e9;
  signal.swing = 0.01;
  options.signal = signal;
  options.swing_given = true;
  const auto analysis = analyze_chain(chain, options);
  const auto& eye = *analysis.outputs.back().eye;
  const double half = eye.noise.output_rms_v;
  CHECK(eye.noise.differential_rms_v == doctest::Approx(std::sqrt(2.0) * half).epsilon(1e-15));
  // derived (kT/C, docs/physics.md (circuits) by equipartition, with the gm cell's 4kT gamma gm on
  // top): the half circuit's noise is at least sqrt(kT/C) of its 60 fF.
  CHECK(half >= std::sqrt(boltzmann * 300.0 / 60e-15) * 0.999);
  REQUIRE(eye.statistical);
  const auto& st = *eye.statistical;
  CHECK(st.noise_rms_v == doctest::Approx(eye.noise.differential_rms_v).epsilon(1e-15));
  const double inner_v = eye.estimate.prbs.eye.height * st.ideal_eye_v;
  CHECK(st.q == doctest::Approx(inner_v / (2.0 * std::sqrt(2.0) * half)).epsilon(1e-12));
}

TEST_CASE("noise: a receiver bandwidth limits the noise behind Q as a first-order filter") {
  // derived: a plain stage's output noise is S0 |1/(1 + j f/fc)|^2 with S0 = 4kT (1/Rd + gamma
  // gm) Rd^2 and fc = 1/(2 pi Rd C); behind the receiver's 1/(1 + (f/fr)^2) the mean square is
  // S0 int df / ((1 + f^2/fc^2)(1 + f^2/fr^2)) = S0 (pi/2) fc fr / (fc + fr).
  const double gm = 20e-3, rd = 100.0, c = 60e-15, fr = 5e9;
  const Chain chain = one_stage(plain(gm, rd, 10e-15), 50e-15);
  NoiseOptions options;
  options.receiver_bandwidth_hz = fr;
  const auto limited = summarise_noise(ChainNoise(chain, 0, options));
  const double fc = 1.0 / (2.0 * kPi * rd * c);
  const double s0 = 4.0 * boltzmann * 300.0 * (1.0 / rd + gm) * rd * rd;
  CHECK(limited.output_rms_v * limited.output_rms_v ==
        doctest::Approx(s0 * kPi / 2.0 * fc * fr / (fc + fr)).epsilon(kQuadrature));
  CHECK(limited.receiver_bandwidth_hz == fr);
  // Without it, the chain's own kT/C-like total: S0 (pi/2) fc.
  const auto open = summarise_noise(ChainNoise(chain, 0, NoiseOptions{}));
  CHECK(open.output_rms_v * open.output_rms_v == doctest::Approx(s0 * kPi / 2.0 * fc).epsilon(kQuadrature));
}

TEST_CASE("noise: a chain whose stages repeat a circuit composes every stage's own noise and gain") {
  // ChainNoise solves a circuit that repeats an earlier stage's once per frequency and uses it for
  // both (models/noise.cpp). Derived, from the cascade formula of models/noise.hpp:
  //   S_out = S_c + S_b |H_c|^2 + S_a |H_b H_c|^2,
  // composed here from each stage's own CircuitNoise in the same order, so the two agree bit for
  // bit; a copy taken from the wrong stage (b is another circuit) would not.
  Chain chain;
  chain.name = "a, b, a again (test)";
  StageCircuit shunt = test::plain_circuit(0.04, 95.0, 14e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = 0.13e-9;
  shunt.r_l = 4.0;
  chain.stages.push_back(test::make_stage("a", -1, shunt, 25e-15));
  chain.stages.push_back(test::make_stage("b", 0, test::plain_circuit(0.03, 120.0, 10e-15), 25e-15));
  chain.stages.push_back(test::make_stage("c", 1, shunt, 25e-15, 25e-15));
  fill_node_capacitances(chain);
  REQUIRE(chain.stages[0].circuit == chain.stages[2].circuit);
  const NoiseOptions options;
  const ChainNoise noise(chain, 2, options);
  const CircuitNoise a(build_stage_system(chain.stages[0].circuit), options);
  const CircuitNoise b(build_stage_system(chain.stages[1].circuit), options);
  for (double f : {1e8, 3e9, 2e10, 7e10}) {
    CAPTURE(f);
    const auto [ha, sa] = a.evaluate(f);
    const auto [hb, sb] = b.evaluate(f);
    const double psd = (sa * 1.0 + sb * std::norm(ha)) + sa * (std::norm(ha) * std::norm(hb));
    const auto [h, s] = noise.evaluate(f);
    CHECK(s == psd);
    CHECK(h == ha * hb * ha);
  }
}

namespace {

// An integral of a chain's output PSD (behind the receiver's limit, as the rms takes it) and how
// many PSD evaluations it took.
struct Counted {
  double value = 0.0;
  long evaluations = 0;
};

template <class Integrate>
Counted counted(const ChainNoise& noise, Integrate integrate) {
  Counted c;
  const double fr = noise.options().receiver_bandwidth_hz;
  const std::function<double(double)> psd = [&](double f) {
    ++c.evaluations;
    return noise.output_psd(f) / (fr > 0.0 ? 1.0 + (f / fr) * (f / fr) : 1.0);
  };
  c.value = integrate(psd);
  return c;
}

Counted simpson(const ChainNoise& noise, int per_decade) {
  const auto [f_lo, f_hi] = natural_span(noise.cascade(), 3.0);
  return counted(noise, [&](const auto& psd) { return integrate_psd(psd, f_lo, f_hi, per_decade); });
}

Counted panels(const ChainNoise& noise) {
  auto [f_first, f_last] = natural_span(noise.cascade(), 0.0);
  const double fr = noise.options().receiver_bandwidth_hz;
  if (fr > 0.0) f_first = std::min(f_first, fr), f_last = std::max(f_last, fr);
  return counted(noise, [&](const auto& psd) { return integrate_psd_panels(psd, f_first, f_last, noise.cascade().poles()); });
}

}  // namespace

TEST_CASE("noise: Gauss panels over the tighter span agree with the dense Simpson integration in fewer PSD evaluations") {
  // derived: the reference is the analysis's own (Simpson, 160 a decade, 3 decades beyond the
  // roots), good to about 1e-8 (kQuadrature's note). The panels' remainder, 6-point Gauss on
  // half a decade of a response whose features span tenths of a decade, and the asymptotes' first
  // omitted term, (10^-1.5)^4 of the ends' share, each stay under 1e-6 (measured: at most 6.5e-7
  // of the mean square on the shipped chains, 6.8e-8 with 7 points, 4.4e-8 with 10); the
  // check allows kQuadrature, 1e-6 of the mean square.
  // Two spans: one shunt-peaked stage (its roots within half a decade), and a source pole with two
  // plain stages whose poles lie 1.8 decades apart, behind a receiver limit of 30 GHz.
  StageCircuit shunt = plain(0.02, 150.0, 15e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = inductance_for_m(0.5, shunt.rd, 60e-15);
  shunt.r_l = 8.0;
  const Chain narrow = one_stage(shunt, 45e-15);
  Chain wide;
  wide.r_source = 50.0;
  wide.stages.push_back(stage(plain(0.04, 100.0, 10e-15), -1, 30e-15));  // source pole 106 GHz
  wide.stages.push_back(stage(plain(0.01, 2000.0, 12e-15), 0, 25e-15, 40e-15));  // 1.5 GHz
  fill_node_capacitances(wide);
  NoiseOptions limited;
  limited.receiver_bandwidth_hz = 30e9;
  const ChainNoise narrow_noise(narrow, 0, NoiseOptions{}), wide_noise(wide, 1, limited);
  for (const ChainNoise* noise : {&narrow_noise, &wide_noise}) {
    const auto [f_first, f_last] = natural_span(noise->cascade(), 0.0);
    CAPTURE(std::log10(f_last / f_first));
    const Counted reference = simpson(*noise, 160), quick = panels(*noise);
    CHECK(quick.value == doctest::Approx(reference.value).epsilon(kQuadrature));
    // The search's former integration, 40 a decade, took more than twice as many (derived: 6
    // decades of margin against 3, and 20 points a decade against 40).
    CHECK(2 * quick.evaluations < simpson(*noise, 40).evaluations);
    CHECK(std::sqrt(quick.value) == output_rms_noise_panels(*noise));
  }
  CHECK(std::log10(natural_span(wide_noise.cascade(), 0.0).second / natural_span(wide_noise.cascade(), 0.0).first) > 1.5);
}

TEST_CASE("noise: the Gauss panels reach kT/C and the two-pole closed form") {
  // Equipartition (docs/references.md) for the plain stage, kT/C with C = 50 fF; tolerance as above.
  const Chain chain = one_stage(plain(0.02, 200.0, 20e-15), 30e-15);
  CHECK(panels(ChainNoise(chain, 0, resistors_only())).value == doctest::Approx(kT / 50e-15).epsilon(kQuadrature));
  // derived (test "upstream noise passes through the downstream gain"): two plain stages, no
  // source network; stage 2's kT/C2 plus stage 1's kT R1 A2^2 / (t1 + t2).
  Chain two;
  two.stages.push_back(stage(plain(0.04, 100.0, 10e-15), -1));
  two.stages.push_back(stage(plain(0.03, 150.0, 12e-15), 0, 25e-15, 40e-15));
  fill_node_capacitances(two);
  const double t1 = 100.0 * 35e-15, t2 = 150.0 * 52e-15, a2 = 0.03 * 150.0;
  const double expected = kT / 52e-15 + kT * 100.0 * a2 * a2 / (t1 + t2);
  CHECK(panels(ChainNoise(two, 1, resistors_only())).value == doctest::Approx(expected).epsilon(kQuadrature));
}

TEST_CASE("noise: the Gauss panels follow a mode beyond the span they were given, and refuse a PSD that does not fall") {
  // derived: int_0^inf df / ((1 + f^2/a^2)(1 + f^2/b^2)) = (pi/2) a b / (a + b), the textbook
  // int dx / ((x^2 + a^2)(x^2 + b^2)) = pi / (2 a b (a + b)). Told only of the pole at a, the
  // integration meets the pole at b = 100 a before its asymptote (0.5 decade past its span's end)
  // and must grow its span past b; stopping at a's asymptote would miss it by (pi/2) a/b of the
  // total, 1.6e-2. Tolerance as above.
  const double a = 1e9, b = 1e11;
  const auto two_poles = [&](double f) { return 1.0 / ((1.0 + (f / a) * (f / a)) * (1.0 + (f / b) * (f / b))); };
  CHECK(integrate_psd_panels(two_poles, a, a) == doctest::Approx(kPi / 2.0 * a * b / (a + b)).epsilon(kQuadrature));
  // A white floor under the pole, a tenth of the PSD where the span ends (1.5 decades past a): the
  // integral over (0, inf) diverges.
  const auto floored = [&](double f) { return 1.0 / (1.0 + (f / a) * (f / a)) + 1e-4; };
  CHECK(integrate_psd_panels(floored, a, a) == std::numeric_limits<double>::infinity());
}

TEST_CASE("noise: the Gauss panels resolve a lightly damped resonance from its poles") {
  // derived: S(f) = 1 / |1 - x^2 + 2j zeta x|^2 with x = f/fn integrates over (0, inf) to
  // fn pi / (4 zeta) (the textbook int dw / |1 - w^2 + 2j zeta w|^2 = pi / (4 zeta), the
  // white-noise response of a second-order system). At zeta = 0.05 its peak is a tenth of a
  // decade wide; the panels narrow about the poles s = 2 pi fn (-zeta +- j sqrt(1 - zeta^2)).
  // Tolerance as above.
  const double fn = 20e9, zeta = 0.05;
  const auto resonance = [&](double f) {
    const double x = f / fn;
    return 1.0 / ((1.0 - x * x) * (1.0 - x * x) + 4.0 * zeta * zeta * x * x);
  };
  const double wn = 2.0 * kPi * fn, wd = wn * std::sqrt(1.0 - zeta * zeta);
  const std::vector<std::complex<double>> poles{{-zeta * wn, wd}, {-zeta * wn, -wd}};
  CHECK(integrate_psd_panels(resonance, fn, fn, poles) == doctest::Approx(fn * kPi / (4.0 * zeta)).epsilon(kQuadrature));
}
