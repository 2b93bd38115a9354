// The shunt-feedback transimpedance stage (models/load_tia.cpp) against closed forms: the exact
// second-order transimpedance of one gm-Rd cell with Rf (derived in load_tia.cpp), the textbook
// w0 and Q of an ideal voltage amplifier with feedback (Saeckinger, "Analysis and Design of
// Transimpedance Amplifiers for Optical Receivers", Wiley 2017, ch. 6, from memory), the
// transimpedance limit (E. Saeckinger, "The transimpedance limit", IEEE TCAS-I 57(8), 2010, from
// memory), and the noise of Rf and of a dark current.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>
#include <string>

#include "cli_support.hpp"
#include "models/monte_carlo.hpp"
#include "models/noise.hpp"
#include "models/receiver.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/planner.hpp"
#include "reports/plots.hpp"
#include "reports/svg_chart.hpp"
#include "test_support.hpp"

using namespace peakplan;
using namespace peakplan::test;

namespace {

StageCircuit tia_cell(double gm, double rd, double c_out, double rf, double c_t) {
  StageCircuit s;
  s.kind = LoadKind::tia;
  s.gm = gm;
  s.rd = rd;
  s.c_out = c_out;
  s.rf = rf;
  s.c_cell_in = c_t;  // all of C_T as the cell's input here; the photodiode share is tested below
  return s;
}

// w0 and Q of the second-order denominator 1 + a1 s + a2 s^2.
std::pair<double, double> w0_q(const Rational& r) {
  const auto& d = r.denominator();  // ascending powers of the scaled s
  REQUIRE(d.size() == 3);
  const double ts = NodalSystem::time_scale;
  const double a1 = d[1] / d[0] * ts, a2 = d[2] / d[0] * ts * ts;
  const double w0 = 1.0 / std::sqrt(a2);
  return {w0, 1.0 / (a1 * w0)};
}

Chain one_stage_chain(const StageCircuit& tia, double c_in, std::optional<Photodiode> pd) {
  Chain chain;
  chain.name = "tia alone";
  chain.stages.push_back(make_stage("t1", -1, tia, c_in));
  chain.photodiode = pd;
  fill_node_capacitances(chain);
  return chain;
}

}  // namespace

TEST_CASE("tia, one cell: the nodal solve equals the exact second-order transimpedance (derived)") {
  // Invented values sized like a 25 Gb/s receiver front end.
  const double gm = 0.08, rd = 150.0, c_o = 40e-15, rf = 600.0, c_t = 250e-15;
  auto s = tia_cell(gm, rd, c_o, rf, c_t);
  s.r_load = 3000.0;
  s.c_node = 15e-15;
  const double g_f = 1.0 / rf, g_o = 1.0 / rd + 1.0 / s.r_load, c_out = c_o + s.c_node;
  const auto system = build_stage_system(s);
  for (double f = 1e7; f < 1e12; f *= 1.41) {
    const auto sj = jw(f);
    const auto exact = (g_f - gm) / (sj * sj * c_t * c_out + sj * (c_t * (g_f + g_o) + g_f * c_out) + g_f * (g_o + gm));
    CHECK(std::abs(system.transfer(sj) / exact - 1.0) < 1e-12);
    CHECK(std::abs(system.rational().evaluate(sj) / exact - 1.0) < 1e-9);
  }
  // DC: -Rf A0/(A0 + 1) up to the feedforward through Rf, (G_f - gm)/(G_f (G_o + gm)).
  CHECK(system.transfer(jw(0.0)).real() == doctest::Approx((g_f - gm) / (g_f * (g_o + gm))).epsilon(1e-12));
}

TEST_CASE("tia, ideal-amplifier limit: w0 and Q are the textbook second-order values") {
  // A0 = gm Rd = 10 with Rd = 2 ohm << Rf, so the cell is close to the ideal voltage amplifier the
  // textbook assumes (G_f/G_o = 0.5 %). Values unphysical on purpose: a limit check.
  const double gm = 5.0, rd = 2.0, c_o = 1e-12, c_t = 100e-15;
  const double a0 = gm * rd, tau_a = rd * c_o;
  // Butterworth (Q = 1/sqrt 2) from the textbook Q: Rf C_T = tau_A (A0 + sqrt(A0^2 - 1)).
  const double rf = tau_a * (a0 + std::sqrt(a0 * a0 - 1.0)) / c_t;
  const auto system = build_stage_system(tia_cell(gm, rd, c_o, rf, c_t));
  const auto [w0, q] = w0_q(system.rational());
  const double w0_book = std::sqrt((a0 + 1.0) / (rf * c_t * tau_a));
  const double q_book = std::sqrt((a0 + 1.0) * rf * c_t * tau_a) / (rf * c_t + tau_a);
  CHECK(q_book == doctest::Approx(1.0 / std::sqrt(2.0)).epsilon(1e-12));
  // w0 has no loading term (derived: G_f (G_o + gm) = G_f G_o (A0 + 1)).
  CHECK(w0 == doctest::Approx(w0_book).epsilon(1e-9));
  // Q: the cell's finite output conductance adds G_f/C_o to w0/Q; bound its share (derived).
  const double share = (1.0 / rf / c_o) / (1.0 / rd / c_o + 1.0 / rf / c_t);
  CHECK(std::fabs(q / q_book - 1.0) < 1.2 * share);
  CHECK(share < 0.01);

  // The transimpedance limit holds with equality for a Butterworth TIA with A0 >> 1:
  // R_T = A0 f_A / (2 pi C_T f3dB^2), f_A = 1/(2 pi tau_A) (Saeckinger 2010, from memory). Here
  // within 2 %: the 0.5 % loading above, squared in f3dB, and A0 = 10 not >> 1 in R_T = Rf A0/(A0+1)
  // (the form used for R_T below keeps that factor, so only the loading remains).
  const auto f = frequency_metrics(Cascade({system.rational()}));
  const double r_t = std::fabs(system.transfer(jw(0.0)).real());
  const double f_a = 1.0 / (2.0 * pi * tau_a);
  const double limit = a0 * f_a / (2.0 * pi * c_t * f.bandwidth_hz * f.bandwidth_hz);
  CHECK(r_t / limit == doctest::Approx(1.0).epsilon(0.02));
  CHECK(f.bandwidth_hz == doctest::Approx(w0_book / (2.0 * pi)).epsilon(0.02));  // Butterworth: f3dB = f0
}

TEST_CASE("tia: an even core still inverts, and a high loop gain makes the transimpedance Rf") {
  for (int cells : {1, 2, 3}) {
    CAPTURE(cells);
    auto s = tia_cell(0.05, 400.0, 10e-15, 1000.0, 200e-15);  // each cell -20, loop gain >= 20
    s.core_stages = cells;
    const auto system = build_stage_system(s);
    const double z0 = system.transfer(jw(0.0)).real();
    CHECK(z0 < 0.0);  // the current into the input pulls the output down: negative feedback
    // DC with an ideal core of gain A: R_T = Rf A/(1 + A) (derived); the cells' Rd loading the
    // output through Rf moves it by less than Rd/(A Rf) more.
    const double a = std::pow(0.05 * 400.0, cells);
    CHECK(-z0 == doctest::Approx(1000.0 * a / (1.0 + a)).epsilon(0.45 / a));
    CHECK(static_cast<int>(system.node_names().size()) == cells + 1);
  }
}

namespace {

// Hurwitz's criterion from the Routh array (Routh 1877, Hurwitz 1895; any control text): a
// polynomial (ascending coefficients) has every root in the open left half-plane iff the first
// column of its Routh array keeps one sign. The independent oracle for the stability check.
bool routh_stable(std::vector<double> ascending) {
  std::vector<double> a(ascending.rbegin(), ascending.rend());  // highest power first
  std::vector<double> r0, r1;
  for (size_t i = 0; i < a.size(); i += 2) r0.push_back(a[i]);
  for (size_t i = 1; i < a.size(); i += 2) r1.push_back(a[i]);
  const double sign = a.front() > 0.0 ? 1.0 : -1.0;
  for (size_t row = 0; row + 1 < a.size(); ++row) {
    if (r1.empty() || !(sign * r1.front() > 0.0)) return false;
    std::vector<double> next;
    for (size_t i = 0; i + 1 < r0.size(); ++i)
      next.push_back((r1.front() * r0[i + 1] - r0.front() * (i + 1 < r1.size() ? r1[i + 1] : 0.0)) / r1.front());
    r0 = std::move(r1);
    r1 = std::move(next);
  }
  return true;
}

}  // namespace

TEST_CASE("tia stability: the check agrees with the Routh-Hurwitz criterion on the stage's denominator, and a "
          "one-cell tia (two poles, negative feedback) is always stable") {
  int unstable = 0;
  for (int cells : {1, 2, 3})
    for (double rf : {200.0, 1000.0, 5000.0, 20000.0})
      for (double rd : {100.0, 400.0}) {
        CAPTURE(cells);
        CAPTURE(rf);
        CAPTURE(rd);
        auto s = tia_cell(0.05, rd, 10e-15, rf, 200e-15);
        s.core_stages = cells;
        ChainStage stage;
        stage.circuit = s;
        const auto block = stage_rational(stage);
        const bool stable = !first_unstable_pole(block.poles());
        CHECK(stable == routh_stable(block.denominator()));
        if (cells == 1) CHECK(stable);
        unstable += !stable;
      }
  CHECK(unstable > 0);  // the grid reaches the unstable side, so the comparison means something
}

TEST_CASE("tia stability: analyze refuses an unstable tia at its rf, and plan says no value in range makes it "
          "stable (exit 2, nothing on stdout); a Monte Carlo sample that oscillates fails every check") {
  TempDir dir;
  const std::string chain = R"(# Invented for this test: a three-cell tia whose loop gain is far too high.
[chain]
name = "oscillating tia"
[input.photodiode]
capacitance = "200 fF"
responsivity = "0.9 A/W"
[target]
transimpedance = "5 kohm"
[[stage]]
id = "tia"
kind = "tia"
gm = "50 mS"
rd = "400 ohm"
c_in = "40 fF"
c_out = "20 fF"
core_stages = 3
rf = "1 kohm"
)";
  const auto fixed = dir.write("fixed.toml", chain);
  const auto a = run_cli({"analyze", fixed});
  CHECK(a.status == 2);
  CHECK(a.out.empty());
  CHECK(a.err.find("fixed.toml:17:6: error: stage 'tia' is unstable as written") != std::string::npos);
  CHECK(a.err.find("right half-plane") != std::string::npos);

  std::string open = chain;
  const std::string given = "rf = \"1 kohm\"";
  open.replace(open.find(given), given.size(), "rf = \"auto\"");
  const auto planned = run_cli({"plan", dir.write("open.toml", open)});
  CHECK(planned.status == 2);
  CHECK(planned.out.empty());
  CHECK(planned.err.find("open.toml:17:6: error: stage 'tia' is unstable at every value") != std::string::npos);

  // The Monte Carlo's measurement of a sample whose stage oscillates: no throw, every check failed.
  Chain c;
  auto cell = tia_cell(0.05, 400.0, 20e-15, 1000.0, 0.0);
  cell.core_stages = 3;
  c.stages.push_back(make_stage("tia", -1, cell, 40e-15));
  c.photodiode = Photodiode{200e-15, 0.9, 0.0};
  fill_node_capacitances(c);
  const auto m = measure_case(c, CaseOptions{});
  CHECK(std::isinf(m.t.overshoot_pct));
  CHECK(std::isinf(m.f.peaking_db));
  CHECK(std::isnan(m.f.bandwidth_hz));
}

TEST_CASE("tia noise: Rf gives 4kT/Rf at the input, the dark current 2qI (common practice; exact forms derived)") {
  const double gm = 0.1, rd = 200.0, rf = 2000.0;
  auto s = tia_cell(gm, rd, 20e-15, rf, 100e-15);
  NoiseOptions resistors_only;
  resistors_only.gm_noise = false;
  const auto chain = one_stage_chain(s, 100e-15, Photodiode{150e-15, 0.8, 0.0});
  const ChainNoise noise(chain, 0, resistors_only);
  const auto [h, psd] = noise.evaluate(1e6);  // far below every pole: the DC network
  const double input_psd = psd / std::norm(h);
  // Derived at DC: a current between in and out reaches the output as gm/(gm - G_f) times the
  // signal does; a current at out (Rd) as G_f/(G_f - gm) times.
  const double four_kt = 4.0 * boltzmann * 300.0, g_f = 1.0 / rf, g_o = 1.0 / rd;
  const double rf_part = four_kt * g_f * std::pow(gm / (gm - g_f), 2);
  const double rd_part = four_kt * g_o * std::pow(g_f / (g_f - gm), 2);
  CHECK(input_psd == doctest::Approx(rf_part + rd_part).epsilon(1e-6));
  CHECK(std::sqrt(input_psd) == doctest::Approx(std::sqrt(four_kt / rf)).epsilon(0.01));  // 2.9 pA/rtHz

  // A 1 uA dark current alone: its shot noise enters where the signal does, so it refers to the
  // input unchanged: sqrt(2 q I) = 0.566 pA/rtHz at every frequency.
  NoiseOptions none;
  none.gm_noise = false;
  none.resistor_noise = false;
  const auto dark = one_stage_chain(s, 100e-15, Photodiode{150e-15, 0.8, 1e-6});
  const ChainNoise shot(dark, 0, none);
  for (double f : {1e6, 1e9, 2e10}) {
    const auto [hf, pf] = shot.evaluate(f);
    CHECK(std::sqrt(pf / std::norm(hf)) == doctest::Approx(std::sqrt(2.0 * elementary_charge * 1e-6)).epsilon(1e-9));
  }
}

TEST_CASE("tia: the photodiode's capacitance sits on the input node beside c_in") {
  const auto s = tia_cell(0.08, 150.0, 40e-15, 600.0, 0.0);
  const auto with_pd = one_stage_chain(s, 100e-15, Photodiode{150e-15, 0.8, 0.0});
  auto by_hand = s;
  by_hand.c_cell_in = 250e-15;  // the same 250 fF as c_in alone
  const auto a = build_stage_system(with_pd.stages[0].circuit);
  const auto b = build_stage_system(by_hand);
  for (double f = 1e8; f < 1e12; f *= 3.0) CHECK(std::abs(a.transfer(jw(f)) / b.transfer(jw(f)) - 1.0) < 1e-12);
  CHECK(with_pd.current_input());
  // The chain's cascade is the stage alone: no source network with a current input.
  CHECK(output_cascade(with_pd, 0).blocks().size() == 1);
}

TEST_CASE("sensitivity: OMA and average power from Q, the noise current, responsivity and ER (hand computation)") {
  // Hand computation: i_n = 1.5 uA rms, R = 0.8 A/W, BER 1e-12 so Q = 7.0345 (erfc table;
  // common practice quotes 7.03). NRZ: OMA = 2 Q i_n / R = 2 x 7.0345 x 1.5e-6 / 0.8 = 26.38 uW
  // (-15.79 dBm); ideal ER: P_avg = OMA/2 = 13.19 uW (-18.80 dBm); ER = 10 (10 dB):
  // P_avg = OMA/2 x 11/9 = 16.12 uW (-17.93 dBm). PAM4: three eyes of OMA/3 each, OMA x 3.
  const double q = q_from_ber(1e-12);
  CHECK(q == doctest::Approx(7.0345).epsilon(1e-4));
  const auto ideal = optical_sensitivity(1.5e-6, 0.8, q, std::numeric_limits<double>::infinity(), Modulation::nrz);
  CHECK(ideal.oma_w == doctest::Approx(26.379e-6).epsilon(1e-4));
  CHECK(to_dbm(ideal.oma_w) == doctest::Approx(-15.787).epsilon(1e-4));
  CHECK(ideal.average_w == doctest::Approx(13.190e-6).epsilon(1e-4));
  const auto er10 = optical_sensitivity(1.5e-6, 0.8, q, 10.0, Modulation::nrz);
  CHECK(er10.average_w == doctest::Approx(16.121e-6).epsilon(1e-4));
  CHECK(to_dbm(er10.average_w) == doctest::Approx(-17.926).epsilon(1e-4));
  const auto pam4 = optical_sensitivity(1.5e-6, 0.8, q, 10.0, Modulation::pam4);
  CHECK(pam4.oma_w == doctest::Approx(3.0 * er10.oma_w).epsilon(1e-12));
  CHECK_THROWS(optical_sensitivity(1.5e-6, 0.8, q, 1.0, Modulation::nrz));  // ER = 1: no signal
}

TEST_CASE("receiver plan: Rf, the core and two post-amplifier stages open; the written plan re-analysed meets "
          "transimpedance, sensitivity and every limit") {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/plan_optical_receiver.toml";
  Diagnostics d(path);
  const auto spec = read_chain_spec(path, d);
  REQUIRE_MESSAGE(spec, d.format());
  const auto plan = plan_chain(*spec, d);
  REQUIRE_MESSAGE(plan, d.format());
  CHECK(plan->termination == Plan::Termination::met);
  Diagnostics rd("written.toml");
  const auto written = parse_chain_spec(planned_chain_toml(*spec, *plan), rd);
  REQUIRE_MESSAGE(written, rd.format());
  const auto chain = resolve_chain(*written, rd);
  REQUIRE(chain);
  const auto analysis = analyze_chain(*chain, analysis_options(*written));
  const auto& main = analysis.outputs.back();
  REQUIRE(main.receiver);
  REQUIRE(main.receiver->sensitivity);
  // The receiver's own figures agree with each other (definitions in models/receiver.hpp).
  CHECK(main.receiver->input_rms_a ==
        doctest::Approx(main.eye->noise.output_rms_v / main.receiver->transimpedance_ohm).epsilon(1e-12));
  CHECK(main.receiver->transimpedance_ohm == doctest::Approx(std::fabs(main.response.frequency.dc_gain)).epsilon(1e-12));
  bool sensitivity_checked = false;
  for (const auto& c : check_targets(*spec, main.response.frequency, main.response.step, total_gm(*chain),
                                     main.receiver->input_rms_a)) {
    CAPTURE(c.name);
    CHECK(c.met);
    sensitivity_checked |= c.name == "sensitivity";
  }
  CHECK(sensitivity_checked);
  CHECK(to_dbm(main.receiver->sensitivity->average_w) <= -15.0);
  CHECK(main.receiver->transimpedance_ohm >= 5e3);
}

TEST_CASE("report: a receiver chain's plots add the input noise density with its average; others do not") {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/receiver_front_end.toml";
  Diagnostics d(path);
  const auto spec = read_chain_spec(path, d);
  REQUIRE(spec);
  const auto chain = resolve_chain(*spec, d);
  REQUIRE(chain);
  const auto analysis = analyze_chain(*chain, analysis_options(*spec));
  const auto plots = chain_plots(*chain, analysis);
  const auto noise = std::find_if(plots.begin(), plots.end(), [](const PlotFile& p) { return p.name == "input_noise.svg"; });
  REQUIRE(noise != plots.end());
  const auto& r = *analysis.outputs.back().receiver;
  // The average drawn is the analysis's own figure, in the subtitle and on its line's label.
  const std::string average = svg::engineering(r.input_density_avg, "A/rtHz");
  CHECK(noise->svg.find("average " + average) != std::string::npos);
  CHECK(r.spectrum.size() == static_cast<size_t>(analysis_options(*spec).points));
  // A voltage-driven chain has no receiver section and no such plot.
  Diagnostics dd("demo");
  const auto demo = read_chain(std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml", dd);
  REQUIRE(demo);
  const auto demo_analysis = analyze_chain(*demo);
  CHECK_FALSE(demo_analysis.outputs.back().receiver);
  for (const auto& p : chain_plots(*demo, demo_analysis)) CHECK(p.name != "input_noise.svg");
}

TEST_CASE("sweep of rf: a larger feedback resistor lowers the input noise and the sensitivity, and narrows the band") {
  // Common practice (the receiver's central trade): Rf's own noise 4kT/Rf falls as Rf grows, and
  // the closed-loop bandwidth falls with it (w0^2 ~ 1/Rf, derived above).
  const auto run = test::run_cli({"sweep", std::string(PEAKPLAN_SOURCE_DIR) + "/chains/receiver_front_end.toml", "--vary",
                                  "tia.rf=300ohm:900ohm:4", "--format", "json"});
  REQUIRE_MESSAGE(run.status == 0, run.err);
  const auto doc = nlohmann::json::parse(run.out);
  const auto& rows = doc["rows"];
  REQUIRE(rows.size() == 4);
  for (size_t i = 1; i < rows.size(); ++i) {
    CHECK(rows[i]["receiver"]["input_noise_rms_a"].get<double>() < rows[i - 1]["receiver"]["input_noise_rms_a"].get<double>());
    CHECK(rows[i]["receiver"]["sensitivity_dbm"].get<double>() < rows[i - 1]["receiver"]["sensitivity_dbm"].get<double>());
    CHECK(rows[i]["bandwidth_hz"].get<double>() < rows[i - 1]["bandwidth_hz"].get<double>());
  }
}
