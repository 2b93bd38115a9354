#include <doctest/doctest.h>

#include <cmath>
#include <numbers>

#include "models/eye.hpp"
#include "models/load_kinds.hpp"
#include "models/peaking_design.hpp"

using namespace peakplan;

namespace {

constexpr double kPi = std::numbers::pi;
constexpr double kTs = 1e-12;  // the rational blocks' time scale

Cascade pure_gain(double gain) { return Cascade({Rational({gain}, {1.0}, kTs)}); }

// gain / (1 + s/(2 pi f3)).
Cascade single_pole(double f3, double gain = 1.0) {
  return Cascade({Rational({gain}, {1.0, 1.0 / (2.0 * kPi * f3) / kTs}, kTs)});
}

// 1 / (1 + sqrt2 s/wc + (s/wc)^2).
Cascade butterworth2(double f3) {
  const double t = 1.0 / (2.0 * kPi * f3) / kTs;
  return Cascade({Rational({1.0}, {1.0, std::numbers::sqrt2 * t, t * t}, kTs)});
}

// A Butterworth T-coil stage (Battjes): Rd = 100 ohm, 100 fF at the tap: about 45 GHz.
Cascade tcoil_stage() {
  StageCircuit s;
  s.kind = LoadKind::tcoil;
  s.gm = 0.03;
  s.rd = 100.0;
  s.c_node = 100e-15;
  const auto d = tcoil_for_zeta(1.0 / std::numbers::sqrt2, s.rd, s.c_node);
  s.l1 = s.l2 = d.l_half;
  s.k = d.k;
  s.cb = d.cb;
  return Cascade({build_stage_system(s).rational()});
}

Signal nrz(double bit_rate, PrbsKind pattern = PrbsKind::prbs7) {
  Signal s;
  s.bit_rate = bit_rate;
  s.pattern = pattern;
  return s;
}

}  // namespace

TEST_CASE("eye: an ideal chain opens fully, whatever its gain and sign") {
  // derived: a pure gain reproduces the held symbol levels exactly, so p(t) is 1 over the first
  // UI and 0 after; nothing but rounding can differ from 1.
  for (double gain : {1.0, -3.0}) {
    CAPTURE(gain);
    const auto eye = estimate_eye(pure_gain(gain), nrz(56e9));
    CHECK(eye.pulse.dc_gain == doctest::Approx(gain));
    CHECK(eye.pda.height == doctest::Approx(1.0).epsilon(1e-12));
    CHECK(eye.prbs.eye.height == doctest::Approx(1.0).epsilon(1e-12));
    // The traces jump between samples; interpolating the threshold margin across the jump puts
    // each edge half a sample out, so the open span is exactly steps_per_ui samples (derived).
    CHECK(eye.prbs.eye.width_ui == doctest::Approx(1.0).epsilon(1e-12));
    CHECK(eye.prbs.eye.open_span_ui == doctest::Approx(1.0).epsilon(1e-12));
    CHECK(eye.prbs.ddj_pp_s == doctest::Approx(0.0));
    CHECK(eye.prbs.crossings == 64);  // prbs7 has 2^6 runs per period: 64 transitions (Golomb)
    CHECK(eye.prbs.transitions == 64);
  }
}

TEST_CASE("eye: single-pole peak distortion is 1 - 2 exp(-2 pi x), x = f3dB / bit rate") {
  // derived: with tau = 1/(2 pi f3) and T = UI, p(t) = 1 - e^(-t/tau) for t < T and
  // (e^(T/tau) - 1) e^(-t/tau) after. Sampling at phase phi in (0, T], h0 = 1 - e^(-phi/tau) and
  // the post-cursors sum to (e^(T/tau) - 1) e^(-phi/tau) * e^(-T/tau)/(1 - e^(-T/tau)) = e^(-phi/tau),
  // so the opening 1 - 2 e^(-phi/tau) is largest at phi = T: 1 - 2 e^(-2 pi x). The grid holds
  // phi = T exactly (phase 0 of the next UI), and the exact discretisation adds only rounding;
  // the cursors past the simulated span (16 slowest time constants) sum to under e^-16 = 1.1e-7.
  const double bit_rate = 28e9;
  for (double x : {0.3, 0.5, 0.75, 1.0}) {
    CAPTURE(x);
    const auto pulse = pulse_response(single_pole(x * bit_rate), nrz(bit_rate));
    const auto pda = peak_distortion(pulse, Modulation::nrz);
    CHECK(pda.height == doctest::Approx(1.0 - 2.0 * std::exp(-2.0 * kPi * x)).epsilon(1e-6));
    CHECK(pda.sample_time_s == doctest::Approx(1.0 / bit_rate).epsilon(1e-9));
  }
}

TEST_CASE("eye: cursors of a single pole at any phase") {
  // derived (as above): c_0 = 1 - e^(-phi/tau), c_j = (e^(T/tau) - 1) e^(-(phi + jT)/tau).
  const double bit_rate = 25e9, f3 = 0.5 * bit_rate, tau = 1.0 / (2.0 * kPi * f3), t = 1.0 / bit_rate;
  const auto pulse = pulse_response(single_pole(f3), nrz(bit_rate));
  auto expected = [&](double phi, int j) {
    return j == 0 ? 1.0 - std::exp(-phi / tau) : (std::exp(t / tau) - 1.0) * std::exp(-(phi + j * t) / tau);
  };
  const auto on_grid = pulse.cursors(32);  // phi = T/2 lies on the grid: exact but for rounding
  for (int j = 0; j < 4; ++j) CHECK(on_grid[static_cast<size_t>(j)] == doctest::Approx(expected(t / 2, j)).epsilon(1e-9));
  // Off the grid, linear interpolation errs by at most dt^2/8 * max|p''| = dt^2/(8 tau^2)
  // (derived from the interpolation remainder; |p''| <= 1/tau^2): 2.4e-4 here.
  const double dt = t / 64.0, bound = dt * dt / (8.0 * tau * tau);
  const auto off_grid = pulse.cursors_at(0.3037 * t);
  for (int j = 0; j < 4; ++j)
    CHECK(std::fabs(off_grid[static_cast<size_t>(j)] - expected(0.3037 * t, j)) <= bound);
}

TEST_CASE("eye: first-order DDJ is -ln(1 - exp(-2 pi x)) / (2 pi x) UI") {
  // derived (docs/references.md; B. Analui, J. F. Buckwalter, A. Hajimiri, IEEE T-MTT 53(11), 2005):
  // a rising edge from v0 crosses 1/2 at tau ln(2(1 - v0)); v0 runs from 0 (after a long run of
  // zeros) to e^(-T/tau) (a lone zero after a long run of ones), so DDJ = -tau ln(1 - e^(-T/tau)).
  // prbs7's runs (6 zeros, 5 ones before a lone zero) leave v0 within e^(-5*2*pi*x) of those
  // extremes: negligible for x >= 0.5. Linear interpolation of each crossing errs by at most
  // dt^2/(8 tau), so the spread by dt^2/(4 tau) = UI * 2 pi x / (4 * 64^2).
  const double bit_rate = 40e9, ui = 1.0 / bit_rate;
  for (double x : {0.5, 0.75, 1.0}) {
    CAPTURE(x);
    const auto eye = estimate_eye(single_pole(x * bit_rate), nrz(bit_rate));
    const double expected = -std::log(1.0 - std::exp(-2.0 * kPi * x)) / (2.0 * kPi * x);
    const double bound = 2.0 * kPi * x / (4.0 * 64.0 * 64.0);
    REQUIRE(std::isfinite(eye.prbs.ddj_pp_s));
    CHECK(std::fabs(eye.prbs.ddj_pp_s / ui - expected) <= bound);
  }
}

TEST_CASE("eye: a PRBS7 eye is never worse than the peak-distortion bound") {
  // derived: the PRBS patterns are a subset of all symbol histories, the traces are built from
  // the same sampled pulse, and the PDA phase is one of the offsets the PRBS search tries.
  const double bit_rate = 56e9;
  const Cascade chains[] = {single_pole(0.5 * bit_rate), single_pole(0.35 * bit_rate),
                            butterworth2(0.6 * bit_rate), butterworth2(0.4 * bit_rate),
                            tcoil_stage()};
  for (const auto& chain : chains) {
    for (auto modulation : {Modulation::nrz, Modulation::pam4}) {
      auto signal = nrz(bit_rate);
      signal.modulation = modulation;
      const auto eye = estimate_eye(chain, signal);
      CAPTURE(eye.pda.height);
      CHECK(eye.prbs.eye.height >= eye.pda.height - 1e-12);
      CHECK(eye.prbs.eye.height <= 1.0 + 1e-12);
    }
  }
}

TEST_CASE("eye: a first-order input edge equals a pole at ln4 / (2 pi rise)") {
  // derived: a first-order step rises 20 % -> 80 % in tau ln 4, so the edge is the pole of
  // f = ln4/(2 pi rise) and the single-pole closed form 1 - 2 e^(-T/tau) applies (1e-6 as above).
  const double bit_rate = 25e9, ui = 1.0 / bit_rate;
  auto signal = nrz(bit_rate);
  signal.input_rise = 0.3 * ui;
  const double tau = signal.input_rise / std::log(4.0);
  const auto pda = peak_distortion(pulse_response(pure_gain(2.0), signal), Modulation::nrz);
  CHECK(pda.height == doctest::Approx(1.0 - 2.0 * std::exp(-ui / tau)).epsilon(1e-6));
}

TEST_CASE("eye: PAM4 of an ideal chain opens all three eyes to a third of the NRZ swing") {
  // derived: with symbols 0, 1/3, 2/3, 1 and no ISI every eye spans 1/3 of the swing; heights
  // are fractions of that ideal, so all are 1. docs/references.md: 20 log10(3) = 9.54 dB at equal swing.
  Signal pam4 = nrz(112e9);
  pam4.modulation = Modulation::pam4;
  pam4.swing = 0.4;
  Signal binary = nrz(112e9);
  binary.swing = 0.4;
  const auto eye4 = estimate_eye(pure_gain(5.0), pam4);
  REQUIRE(eye4.prbs.eyes.size() == 3);
  for (const auto& e : eye4.prbs.eyes) {
    CHECK(e.height == doctest::Approx(1.0).epsilon(1e-12));
    // derived: the traces jump between two samples and the margins either side of a jump are
    // unequal for PAM4 (the far side can be any of four levels), so the interpolated edge can
    // land anywhere in that sample interval: within one sample (1/64 UI) of 1 UI per edge pair.
    CHECK(std::fabs(e.width_ui - 1.0) <= 1.0 / 64.0);
  }
  // derived: with no ISI the levels are exactly 0, 1/3, 2/3, 1, so each eye's centre is its
  // nominal threshold and the centred width is the nominal one, to the same sample.
  CHECK(std::fabs(eye4.prbs.width_centred_ui - eye4.prbs.eye.width_ui) <= 1.0 / 64.0);
  CHECK(std::fabs(eye4.prbs.width_centred_ui - 1.0) <= 1.0 / 64.0);
  CHECK(eye4.pulse.ui == doctest::Approx(2.0 / 112e9));  // symbol rate = bit rate / 2
  const auto eye2 = estimate_eye(pure_gain(5.0), binary);
  const double noise = 2e-3;
  const auto s4 = statistical_eye(eye4.pulse, eye4.prbs, pam4, noise);
  const auto s2 = statistical_eye(eye2.pulse, eye2.prbs, binary, noise);
  CHECK(s2.ideal_eye_v == doctest::Approx(2.0));  // 0.4 V * 5
  CHECK(s4.ideal_eye_v / s2.ideal_eye_v == doctest::Approx(1.0 / 3.0).epsilon(1e-12));
  CHECK(20.0 * std::log10(s2.q / s4.q) == doctest::Approx(9.54).epsilon(1e-3));
}

TEST_CASE("eye: Q and BER for Gaussian noise") {
  // derived (docs/references.md): BER = 0.5 erfc(Q / sqrt2): Q = 7.0345 at 1e-12, 5.998 at 1e-9;
  // compared at their printed precision.
  CHECK(q_from_ber(1e-12) == doctest::Approx(7.0345).epsilon(1e-5));
  CHECK(q_from_ber(1e-9) == doctest::Approx(5.998).epsilon(1e-4));
  CHECK(ber_from_q(7.0345) == doctest::Approx(1e-12).epsilon(1e-3));
  CHECK(ber_from_q(5.998) == doctest::Approx(1e-9).epsilon(1e-3));
  CHECK_THROWS_AS(q_from_ber(0.7), std::invalid_argument);
}

TEST_CASE("eye: opening at a BER for hand-made cursors") {
  const double ber = 1e-12;
  double resolution = 0.0;
  SUBCASE("NRZ, one post-cursor") {
    // derived: X = b*0.2 + N(0, 0.05^2), b in {0, 1}. Above the upper end only the b = 1 half
    // matters (the other sits 4 sigma + 7 sigma further in: Q(11) ~ 2e-28), so
    // 0.5 Q((v - 0.2)/sigma) = ber, i.e. v = 0.2 + q(2 ber) sigma; the lower end mirrors at
    // -q(2 ber) sigma: height = 1 - 0.2 - 2 q(2 ber) sigma. Tolerance: one grid bin.
    const std::vector<double> c{1.0, 0.2};
    const double h = height_at_ber(c, 0, Modulation::nrz, 0.05, ber, &resolution);
    CHECK(std::fabs(h - (0.8 - 2.0 * q_from_ber(2.0 * ber) * 0.05)) <= resolution);
  }
  SUBCASE("PAM4, one post-cursor") {
    // derived: a in {0, 1/3, 2/3, 1} each 1/4; the extreme quarter dominates each tail, so the
    // spread is 0.1 + 2 q(4 ber) sigma; the fraction of the ideal third is 3 (1/3 - spread).
    const std::vector<double> c{1.0, 0.1};
    const double h = height_at_ber(c, 0, Modulation::pam4, 0.02, ber, &resolution);
    CHECK(std::fabs(h - 3.0 * (1.0 / 3.0 - 0.1 - 2.0 * q_from_ber(4.0 * ber) * 0.02)) <= 3.0 * resolution);
  }
  SUBCASE("no noise: the peak-distortion worst case") {
    // derived: with 3 cursors of ISI every pattern has probability >= 1/8 > ber, so the quantiles
    // are the extremes: h0 - sum|c|, to one bin per cursor (each is split between two bins).
    const std::vector<double> c{0.05, -0.1, 0.9, 0.15};
    const double h = height_at_ber(c, 2, Modulation::nrz, 0.0, ber, &resolution);
    CHECK(std::fabs(h - (0.9 - 0.3)) <= 3.0 * resolution);
  }
}

TEST_CASE("eye: statistical eye of an ideal chain with noise") {
  // derived: no ISI, so each level is Gaussian: height = swing*gain - 2 q(ber) sigma, open at
  // every phase (width 1 UI). Tolerance: the grid bin (1/8192 of 16.03 sigma here).
  auto signal = nrz(56e9);
  signal.swing = 0.3;
  const auto eye = estimate_eye(pure_gain(4.0), signal);
  const double noise = 0.01;
  const auto s = statistical_eye(eye.pulse, eye.prbs, signal, noise);
  CHECK(s.height_at_ber_v == doctest::Approx(1.2 - 2.0 * q_from_ber(1e-12) * noise).epsilon(1e-3));
  CHECK(s.width_at_ber_ui == doctest::Approx(1.0));
  CHECK(s.q == doctest::Approx(1.2 / (2.0 * noise)));
  CHECK(s.ber == doctest::Approx(ber_from_q(60.0)));
}

TEST_CASE("eye: statistical eye of a single pole tends to the PDA bound without noise") {
  // derived: with no noise and fewer than 40 significant cursors every pattern is likelier than
  // 1e-12, so the opening at 1e-12 is the PDA opening; the grid allows one bin per cursor.
  const double bit_rate = 32e9;
  auto signal = nrz(bit_rate);
  const auto eye = estimate_eye(single_pole(0.6 * bit_rate), signal);
  const auto s0 = statistical_eye(eye.pulse, eye.prbs, signal, 0.0);
  CHECK(s0.height_at_ber == doctest::Approx(eye.pda.height).epsilon(5e-3));
  // Noise can only close it further.
  const auto s1 = statistical_eye(eye.pulse, eye.prbs, signal, 0.01);
  CHECK(s1.height_at_ber < s0.height_at_ber);
  CHECK(s1.width_at_ber_ui < s0.width_at_ber_ui);
  CHECK(s1.width_at_ber_ui > 0.0);
}

TEST_CASE("eye: long patterns are overlaid over a bounded number of symbols") {
  const double bit_rate = 56e9;
  for (auto pattern : {PrbsKind::prbs23, PrbsKind::prbs31}) {
    const auto eye = estimate_eye(single_pole(0.5 * bit_rate), nrz(bit_rate, pattern));
    CHECK(eye.prbs.pattern_truncated);
    CHECK(eye.prbs.symbols_overlaid == max_overlay_symbols);
    CHECK(eye.prbs.settling_symbols >= static_cast<std::uint64_t>(eye.pulse.ui_count));
    CHECK(eye.prbs.eye.height >= eye.pda.height - 1e-12);  // derived: a subset of histories
  }
  const auto short_one = estimate_eye(single_pole(0.5 * bit_rate), nrz(bit_rate, PrbsKind::prbs15));
  CHECK_FALSE(short_one.prbs.pattern_truncated);
  CHECK(short_one.prbs.symbols_overlaid == 32767);
  CHECK(short_one.prbs.settling_symbols >= 32767);
}

TEST_CASE("eye: bad signals are rejected") {
  Signal s;
  CHECK_THROWS_AS(pulse_response(single_pole(1e10), s), std::invalid_argument);
  s.bit_rate = 1e10;
  CHECK_THROWS_AS(pulse_response(single_pole(1e10), s, 16), std::invalid_argument);
  s.input_rise = -1e-12;
  CHECK_THROWS_AS(pulse_response(single_pole(1e10), s), std::invalid_argument);
}

TEST_CASE("eye: PAM4 through a pole, thresholds centred in the squeezed eyes are at least as wide") {
  // derived: through a single pole the sampled levels are squeezed towards the middle (each
  // level l/3 becomes about l/3 h0 + ISI), so the outer eyes' openings sit off their nominal
  // thresholds 1/6 and 5/6 and a threshold at the middle of each opening leaves at least as much
  // margin at the sampling offset; the span where all three are open cannot be narrower there.
  Signal pam4 = nrz(112e9);
  pam4.modulation = Modulation::pam4;
  const auto eye = estimate_eye(single_pole(28e9), pam4);  // f3dB = half the symbol rate
  CHECK(eye.prbs.eye.width_ui > 0.0);
  CHECK(eye.prbs.width_centred_ui >= eye.prbs.eye.width_ui - 1.0 / 64.0);
  CHECK(eye.prbs.width_centred_ui <= 1.0);
}
