// The outside reference: the netlist peakplan writes, run through ngspice, must give the
// response peakplan computes (docs/physics.md (circuits), last check). ngspice is a required test
// dependency (CI installs the Debian package); when it is missing these tests fail.
//
// What each side does differently, and so what the tolerances cover:
//   - AC: ngspice solves the complex MNA system of the netlist at each frequency, peakplan its
//     own nodal system. Neither integrates or iterates, so they differ only by element values
//     rounded to 10 significant digits in the netlist (5e-11 each) and by round-off in two LU
//     solves; kAcRelative = 1e-6 leaves orders of magnitude for the conditioning of the matrix
//     far above the bandwidth, where |H| is small.
//   - Bandwidth: ngspice's -3 dB point is interpolated here from a 400-per-decade sweep (steps
//     of 0.58 % in frequency, linear in dB over log f: an error of order 1e-5 relative);
//     kBandwidthRelative = 0.5 % is the contract, far above that.
//   - Step: ngspice integrates (trapezoidal, tmax = 1/(1000 x bandwidth), reltol 1e-7) a step
//     that rises in tstep/10; peakplan's step is the exact discretisation of an ideal step
//     sampled every 1/(1000 x bandwidth). Trapezoidal local error at that step is below 1e-6 of
//     the swing; the finite rise shifts the waveform by half the rise (compensated below) and
//     lowers the peak by order (rise / period)^2 < 1e-7. kOvershootPoints = 0.3 percentage
//     points is the contract; kStepDeviation = 1e-4 of the swing bounds the whole waveform.
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fmt/format.h>
#include <fstream>
#include <nlohmann/json.hpp>
#include <numbers>
#include <sstream>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include "models/frequency_response.hpp"
#include "models/large_signal.hpp"
#include "models/nodal_system.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/planner.hpp"
#include "reports/netlist.hpp"
#include "cli_support.hpp"
#include "test_support.hpp"

namespace peakplan {
namespace {

namespace fs = std::filesystem;

constexpr double kAcRelative = 1e-6;
constexpr double kDcRelative = 1e-9;  // DC: a real solve of the same resistive network
constexpr double kBandwidthRelative = 0.005;
constexpr double kOvershootPoints = 0.3;
constexpr double kStepDeviation = 1e-4;
constexpr int kPerDecade = 400;

struct OutputFigures {
  int stage = 0;
  std::string id;
  double model_dc = 0.0, spice_dc = 0.0;
  double model_bandwidth_hz = 0.0, spice_bandwidth_hz = 0.0;
  double bandwidth_error = 0.0;  // spice / model - 1
  double model_overshoot_pct = 0.0, spice_overshoot_pct = 0.0;
  double max_magnitude_error = 0.0;  // max over the sweep of ||H_spice| / |H_model| - 1|
  double max_complex_error = 0.0;    // max of |H_spice - H_model| / |H_model|
  double max_step_deviation = 0.0;   // of the normalised step, on the model's time grid
  size_t ac_points = 0, tran_points = 0;
};

struct NgspiceComparison {
  std::vector<OutputFigures> outputs;  // in the order of chain.outputs(), main output last
};

// wrdata with wr_singlescale and wr_vecnames: one header line, then rows of numbers.
std::vector<std::vector<double>> read_wrdata(const fs::path& p) {
  std::ifstream in(p);
  if (!in) throw std::runtime_error("ngspice wrote no " + p.string());
  std::vector<std::vector<double>> rows;
  std::string line;
  std::getline(in, line);  // vector names
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::vector<double> row;
    for (double x; ls >> x;) row.push_back(x);
    if (!row.empty()) rows.push_back(std::move(row));
  }
  return rows;
}

// First fall of |h| to |dc|/sqrt(2), interpolated linearly in dB over log f.
double first_crossing(const std::vector<double>& f, const std::vector<double>& mag, double dc) {
  const double target = 20.0 * std::log10(std::fabs(dc) / std::numbers::sqrt2);
  for (size_t i = 1; i < f.size(); ++i) {
    const double a = 20.0 * std::log10(mag[i - 1]), b = 20.0 * std::log10(mag[i]);
    if (a >= target && b < target) {
      const double u = (a - target) / (a - b);
      return std::exp(std::log(f[i - 1]) + u * (std::log(f[i]) - std::log(f[i - 1])));
    }
  }
  return not_found;
}

double interpolate(const std::vector<double>& t, const std::vector<double>& y, double at) {
  const auto it = std::lower_bound(t.begin(), t.end(), at);
  if (it == t.begin()) return y.front();
  if (it == t.end()) return y.back();
  const size_t i = static_cast<size_t>(it - t.begin());
  const double u = (at - t[i - 1]) / (t[i] - t[i - 1]);
  return y[i - 1] + u * (y[i] - y[i - 1]);
}

// Writes the chain's netlist in batch form (tight tolerances, wrdata files under dir/run) and
// runs ngspice on it; throws with the log when it fails.
void run_batch(const std::string& ngspice, const Chain& chain, NetlistOptions& options, const fs::path& dir) {
  options.batch_control = true;
  options.precise = true;
  options.data_prefix = (dir / "run").string();
  const fs::path netlist = dir / "chain.cir";
  std::ofstream(netlist) << write_spice_netlist(chain, options);
  const fs::path log = dir / "ngspice.log";
  const int rc = test::run_shell(test::shell_quoted(ngspice) + " -b " + test::shell_quoted(netlist.string()) + " > " +
                                 test::shell_quoted(log.string()) + " 2>&1");
  if (rc != 0 || !fs::exists(options.data_prefix + ".tran.txt"))
    throw std::runtime_error("ngspice failed (status " + std::to_string(rc) + ") on " + netlist.string() + ":\n" +
                             test::read_file(log));
}

// Writes the chain's netlist, runs ngspice on it and measures every output node against
// analyze_chain. Throws with the log when ngspice fails; the work directory is then kept.
NgspiceComparison compare_with_ngspice(const Chain& chain) {
  const std::string ngspice = test::find_on_path("ngspice");
  if (ngspice.empty())
    throw std::runtime_error(
        "ngspice not found on PATH: install it (Debian package 'ngspice'); the ngspice "
        "comparison is a required check and does not skip");

  const ChainAnalysis analysis = analyze_chain(chain);
  const double bw = analysis.outputs.back().response.frequency.bandwidth_hz;

  std::string pattern = (fs::temp_directory_path() / "peakplan-ngspice-XXXXXX").string();
  if (::mkdtemp(pattern.data()) == nullptr) throw std::runtime_error("mkdtemp failed");
  const fs::path dir = pattern;

  NetlistOptions options;
  options.bandwidth_hz = bw;
  options.ac_points_per_decade = kPerDecade;
  options.ac_start_hz = bw / 1000.0;
  options.ac_stop_hz = bw * 20.0;
  options.tran_step_s = analysis.outputs.back().response.step_wave.dt;
  options.step_rise_s = options.tran_step_s / 10.0;
  run_batch(ngspice, chain, options, dir);

  const auto dc_rows = read_wrdata(options.data_prefix + ".dc.txt");
  const auto ac_rows = read_wrdata(options.data_prefix + ".ac.txt");
  const auto tran_rows = read_wrdata(options.data_prefix + ".tran.txt");
  const std::vector<int> outputs = chain.outputs();
  const size_t n_out = outputs.size();
  if (dc_rows.size() != 1 || dc_rows[0].size() != 1 + n_out || ac_rows.empty() ||
      ac_rows[0].size() != 1 + 2 * n_out || tran_rows.empty() || tran_rows[0].size() != 1 + n_out)
    throw std::runtime_error("unexpected ngspice data layout in " + dir.string());

  std::vector<double> freq, time;
  for (const auto& r : ac_rows) freq.push_back(r[0]);
  for (const auto& r : tran_rows) time.push_back(r[0]);

  // The model's exact nodal solves at ngspice's own frequencies.
  std::vector<NodalSystem> systems;
  for (const auto& s : chain.stages) systems.push_back(build_stage_system(s.circuit));
  NodalSystem source;
  const double c_in0 = chain.stages[static_cast<size_t>(chain.input_stage())].c_in;
  const bool through_source = chain.r_source > 0.0 && c_in0 > 0.0;
  if (through_source) {
    const int in = source.add_node("in");
    source.add_source(in, chain.r_source);
    source.add_capacitor(in, NodalSystem::ground, c_in0);
    source.set_output(in);
  }
  const FrequencyGrid grid(freq);

  NgspiceComparison result;
  for (size_t o = 0; o < n_out; ++o) {
    const auto& model = analysis.outputs[o].response;
    OutputFigures fig;
    fig.stage = outputs[o];
    fig.id = chain.stages[static_cast<size_t>(fig.stage)].id;
    fig.model_dc = model.frequency.dc_gain;
    fig.spice_dc = dc_rows[0][1 + o];
    fig.model_bandwidth_hz = model.frequency.bandwidth_hz;
    fig.model_overshoot_pct = model.step.overshoot_pct;
    fig.ac_points = freq.size();
    fig.tran_points = time.size();

    std::vector<const NodalSystem*> blocks;
    if (through_source) blocks.push_back(&source);
    for (int s : chain.path_to(fig.stage)) blocks.push_back(&systems[static_cast<size_t>(s)]);
    const SampledResponse exact = sample_nodal(blocks, grid);

    std::vector<double> mag;
    for (size_t i = 0; i < freq.size(); ++i) {
      const std::complex<double> h_spice{ac_rows[i][1 + 2 * o], ac_rows[i][2 + 2 * o]};
      const std::complex<double> h_model = exact.h[i];
      mag.push_back(std::abs(h_spice));
      fig.max_magnitude_error =
          std::max(fig.max_magnitude_error, std::fabs(std::abs(h_spice) / std::abs(h_model) - 1.0));
      fig.max_complex_error =
          std::max(fig.max_complex_error, std::abs(h_spice - h_model) / std::abs(h_model));
    }
    fig.spice_bandwidth_hz = first_crossing(freq, mag, fig.spice_dc);
    fig.bandwidth_error = fig.spice_bandwidth_hz / fig.model_bandwidth_hz - 1.0;

    std::vector<double> y;
    double peak = -std::numeric_limits<double>::infinity();
    for (const auto& r : tran_rows) {
      y.push_back(r[1 + o] / fig.spice_dc);
      peak = std::max(peak, y.back());
    }
    fig.spice_overshoot_pct = std::max(0.0, 100.0 * (peak - 1.0));

    // A ramp of duration `rise` lags an ideal step's response by rise/2.
    const double shift = options.step_rise_s / 2.0;
    for (size_t k = 0; k < model.step_wave.y.size(); ++k) {
      const double t = model.step_wave.time(k);
      if (t > time.back()) break;
      fig.max_step_deviation = std::max(
          fig.max_step_deviation, std::fabs(interpolate(time, y, t + shift) - model.step_wave.y[k]));
    }
    result.outputs.push_back(fig);
  }
  fs::remove_all(dir);
  return result;
}

// Runs the comparison and checks every output node against the tolerances above.
NgspiceComparison check_with_ngspice(const Chain& chain) {
  NgspiceComparison c;
  try {
    c = compare_with_ngspice(chain);
  } catch (const std::exception& e) {
    FAIL("chain '" << comment_safe(chain.name) << "': " << std::string(e.what()));
  }
  for (const auto& f : c.outputs) {
    INFO("chain '" << comment_safe(chain.name) << "', output '" << comment_safe(f.id) << "'");
    MESSAGE("ngspice vs peakplan, chain '"
            << comment_safe(chain.name) << "', output '" << comment_safe(f.id) << "': bandwidth " << f.model_bandwidth_hz
            << " Hz, error " << 100.0 * f.bandwidth_error << " %; overshoot "
            << f.model_overshoot_pct << " % vs " << f.spice_overshoot_pct << " % (diff "
            << f.spice_overshoot_pct - f.model_overshoot_pct << " pp); max |H| error "
            << f.max_magnitude_error << ", max complex error " << f.max_complex_error
            << ", max step deviation " << f.max_step_deviation << " (" << f.ac_points
            << " frequencies, " << f.tran_points << " time points)");
    CHECK(f.spice_dc == doctest::Approx(f.model_dc).epsilon(kDcRelative));
    CHECK(f.max_complex_error < kAcRelative);
    CHECK(f.max_magnitude_error < kAcRelative);
    CHECK(std::fabs(f.bandwidth_error) < kBandwidthRelative);
    CHECK(std::fabs(f.spice_overshoot_pct - f.model_overshoot_pct) < kOvershootPoints);
    CHECK(f.max_step_deviation < kStepDeviation);
  }
  return c;
}

StageCircuit plain(double gm, double rd, double c_out) { return test::plain_circuit(gm, rd, c_out); }
using test::make_stage;

StageCircuit inductive(LoadKind kind, double gm, double rd, double l, double r_l, double c_out) {
  StageCircuit c = plain(gm, rd, c_out);
  c.kind = kind;
  c.l = l;
  c.r_l = r_l;
  return c;
}

StageCircuit tcoil(double gm, double rd, double l1, double l2, double k, double cb, double c_out) {
  StageCircuit c = plain(gm, rd, c_out);
  c.kind = LoadKind::tcoil;
  c.l1 = l1;
  c.l2 = l2;
  c.k = k;
  c.cb = cb;
  return c;
}

Chain finish(Chain chain) {
  fill_node_capacitances(chain);
  return chain;
}

// Element values are invented, sized like a 20-40 GHz post-amplifier (RC of a few ps).
Chain plain_chain() {
  Chain c{"plain pair, 50 ohm source, 100 ohm off-chip load", 50.0, {}, std::nullopt};
  c.stages.push_back(make_stage("p1", -1, plain(0.04, 120.0, 30e-15), 60e-15));
  StageCircuit p2 = plain(0.03, 150.0, 25e-15);
  p2.r_load = 100.0;
  c.stages.push_back(make_stage("p2", 0, p2, 50e-15, 20e-15));
  return finish(c);
}

Chain shunt_chain() {
  // m = L/(Rd^2 C) near 0.4 on each stage; r_l from a Q of about 10 at 30 GHz.
  Chain c{"shunt-peaked pair with lossy coils", 50.0, {}, std::nullopt};
  c.stages.push_back(make_stage("s1", -1, inductive(LoadKind::shunt, 0.04, 100.0, 0.38e-9, 7.0, 35e-15), 60e-15));
  c.stages.push_back(make_stage("s2", 0, inductive(LoadKind::shunt, 0.04, 100.0, 0.30e-9, 5.5, 30e-15), 60e-15, 15e-15));
  return finish(c);
}

Chain series_chain() {
  // Ideal voltage drive (r_source = 0): the netlist's source sits on the input node itself.
  Chain c{"series-peaked stage into a 50 ohm termination", 0.0, {}, std::nullopt};
  c.stages.push_back(make_stage("r1", -1, plain(0.03, 100.0, 40e-15), 50e-15));
  StageCircuit r2 = inductive(LoadKind::series, 0.05, 100.0, 0.45e-9, 6.0, 30e-15);
  r2.r_load = 200.0;
  c.stages.push_back(make_stage("r2", 0, r2, 45e-15, 60e-15));
  return finish(c);
}

Chain tcoil_ideal_chain() {
  // Battjes' maximally flat design, C = 100 fF at the tap, R = 100 ohm: 2L(1+k) = R^2 C gives
  // L = 375 pH at k = 1/3, Cb = C/8 (docs/physics.md (circuits)): the defective double pole pair.
  Chain c{"ideal symmetric T-coil, k = 1/3", 0.0, {}, std::nullopt};
  c.stages.push_back(make_stage("t1", -1, tcoil(0.04, 100.0, 375e-12, 375e-12, 1.0 / 3.0, 12.5e-15, 0.0), 40e-15));
  c.stages.push_back(make_stage("t2", 0, plain(0.02, 50.0, 10e-15), 100e-15, 20e-15));
  return finish(c);
}

Chain tcoil_lossy_chain() {
  Chain c{"asymmetric lossy T-coil with winding capacitance", 50.0, {}, std::nullopt};
  StageCircuit t = tcoil(0.04, 100.0, 420e-12, 330e-12, 0.42, 9e-15, 25e-15);
  t.r_l1 = 6.0;
  t.r_l2 = 4.0;
  t.c_w = 3e-15;
  t.r_load = 400.0;
  c.stages.push_back(make_stage("t1", -1, plain(0.03, 80.0, 20e-15), 70e-15));
  c.stages.push_back(make_stage("t2", 0, t, 60e-15, 40e-15));
  return finish(c);
}

// Every kind with a coil, each coil with a self-capacitance of 20 fF per nH ([technology]
// coil_c_per_nh), lossy, so the netlist's coil capacitors and the stamps must agree.
Chain coil_capacitance_chain() {
  Chain c{"coils with self-capacitance", 50.0, {}, std::nullopt};
  const double c_per_l = 20e-15 / 1e-9;
  StageCircuit s = inductive(LoadKind::shunt, 0.04, 100.0, 0.35e-9, 5.0, 25e-15);
  StageCircuit r = inductive(LoadKind::series, 0.04, 100.0, 0.30e-9, 4.0, 20e-15);
  StageCircuit t = tcoil(0.04, 100.0, 380e-12, 320e-12, 0.4, 8e-15, 20e-15);
  t.r_l1 = 5.0;
  t.r_l2 = 4.0;
  for (auto* x : {&s, &r, &t}) x->coil_c_per_l = c_per_l;
  c.stages.push_back(make_stage("s1", -1, s, 50e-15));
  c.stages.push_back(make_stage("r2", 0, r, 45e-15));
  c.stages.push_back(make_stage("t3", 1, t, 40e-15, 30e-15));
  return finish(c);
}

Chain fan_out_chain() {
  // A T-coil stage feeding a shunt stage (then a series stage, the main output) and a plain
  // monitor stage; the T-coil node is tapped. Ids carry what a netlist must survive: a
  // newline followed by ".end", upper/lower case twins, a SPICE comment character, non-ASCII.
  Chain c{"fan-out\n.end\nwith a tap", 50.0, {}, std::nullopt};
  StageCircuit t = tcoil(0.04, 100.0, 400e-12, 360e-12, 0.35, 10e-15, 20e-15);
  t.c_w = 2e-15;
  t.r_l1 = 3.0;
  t.r_l2 = 3.0;
  auto a1 = make_stage("A1\n.end", -1, t, 50e-15, 10e-15);
  a1.tap = true;
  c.stages.push_back(a1);
  c.stages.push_back(make_stage("a1;*main", 0, inductive(LoadKind::shunt, 0.04, 100.0, 0.35e-9, 4.0, 30e-15), 45e-15));
  StageCircuit monitor = plain(0.01, 200.0, 10e-15);
  monitor.r_load = 50.0;
  c.stages.push_back(make_stage("mon\xc2\xb5", 0, monitor, 15e-15, 30e-15));
  c.stages.push_back(make_stage("a3", 1, inductive(LoadKind::series, 0.03, 120.0, 0.4e-9, 5.0, 25e-15), 50e-15, 40e-15));
  // File order puts the monitor before a3, so a3 (a leaf, last) is the main output.
  return finish(c);
}

}  // namespace

TEST_CASE("netlist: numbers are written in SPICE engineering notation") {
  // SPICE reads m as milli and meg as mega; exact decimal strings are the expected text.
  CHECK(spice_number(45e-15) == "45f");
  CHECK(spice_number(0.6e-9) == "600p");
  CHECK(spice_number(120.0) == "120");
  CHECK(spice_number(0.04) == "40m");
  CHECK(spice_number(2.5e6) == "2.5meg");
  CHECK(spice_number(32e9) == "32g");
  CHECK(spice_number(-3e-12) == "-3p");
  CHECK(spice_number(0.0) == "0");
}

TEST_CASE("netlist: ids cannot break lines or collide as SPICE names") {
  CHECK(comment_safe("a\n.end") == "a\\x0a.end");
  CHECK(comment_safe("x\\y") == "x\\\\y");
  CHECK(spice_safe_name("A1\n.end") == "a1__end");
  const Chain chain = fan_out_chain();
  const std::string text = write_spice_netlist(chain);
  std::istringstream lines(text);
  std::string line;
  int ends = 0;
  while (std::getline(lines, line)) ends += line == ".end";
  CHECK(ends == 1);  // only the real one, last
  CHECK(text.ends_with(".end\n"));
  CHECK(stage_output_node(chain, 0) != stage_output_node(chain, 1));  // "A1..." vs "a1..."
  CHECK(text.find(".control") == std::string::npos);  // the designer netlist is plain
}

TEST_CASE("netlist: a chain whose node capacitances were not filled is refused") {
  Chain chain = plain_chain();
  chain.stages[0].circuit.c_node = 0.0;  // the 50 fF of p2's input and nothing else
  CHECK_THROWS_AS(write_spice_netlist(chain), std::logic_error);
}

TEST_CASE("ngspice: plain stages give peakplan's response") { check_with_ngspice(plain_chain()); }
TEST_CASE("ngspice: shunt-peaked stages give peakplan's response") { check_with_ngspice(shunt_chain()); }
TEST_CASE("ngspice: series-peaked stage gives peakplan's response") { check_with_ngspice(series_chain()); }
TEST_CASE("ngspice: ideal T-coil gives peakplan's response") { check_with_ngspice(tcoil_ideal_chain()); }
TEST_CASE("ngspice: Battjes' maximally flat T-coil overshoots 100*exp(-pi) % with f3dB = 2*sqrt(2)/(2*pi*R*C)") {
  // Derived from docs/physics.md (circuits) (Battjes): k = 1/3, Cb = C/8 gives
  // 1 / (1 + s*RC/2 + s^2*R^2*C^2/8): w0 = 2*sqrt(2)/(RC), zeta = 1/sqrt(2), so the -3 dB point
  // is w0 and the overshoot exp(-pi*zeta/sqrt(1 - zeta^2)) = exp(-pi) = 4.32 % ("about 4.3 %").
  // This checks ngspice's run of the netlist against the closed form, not against peakplan: the
  // sign convention of the K element included. Tolerances: the interpolation (1e-5) and
  // integration (1e-5 of the swing) errors of the comparison above, with a margin of ten.
  constexpr double r = 100.0, c = 100e-15;
  Chain chain{"Battjes T-coil alone, k = 1/3", 0.0, {}, std::nullopt};
  chain.stages.push_back(make_stage("t", -1, tcoil(0.04, r, 375e-12, 375e-12, 1.0 / 3.0, c / 8.0, 0.0), 0.0, c));
  const auto cmp = check_with_ngspice(finish(chain));
  REQUIRE(cmp.outputs.size() == 1);
  const auto& f = cmp.outputs[0];
  CHECK(f.spice_overshoot_pct == doctest::Approx(100.0 * std::exp(-std::numbers::pi)).epsilon(1e-3));
  CHECK(f.spice_bandwidth_hz ==
        doctest::Approx(2.0 * std::numbers::sqrt2 / (2.0 * std::numbers::pi * r * c)).epsilon(1e-4));
  CHECK(f.spice_dc == doctest::Approx(-0.04 * r).epsilon(1e-12));  // -gm*R: the stage inverts
}

TEST_CASE("ngspice: lossy asymmetric T-coil gives peakplan's response") {
  check_with_ngspice(tcoil_lossy_chain());
}
TEST_CASE("ngspice: coils with self-capacitance (shunt, series, T-coil) give peakplan's response") {
  check_with_ngspice(coil_capacitance_chain());
}
TEST_CASE("ngspice: fan-out with a tap gives peakplan's response at every output") {
  const auto c = check_with_ngspice(fan_out_chain());
  CHECK(c.outputs.size() == 3);  // the tap, the monitor, the main output
}

// Large signals (docs/physics.md (large signals)). ngspice integrates the netlist's B sources (the same
// pair curves) driven by the held PRBS symbols as a PWL with edges of dt/10; the same eye code
// measures its waveform (resampled linearly onto the model's grid) against the same settled
// levels. Differences: ngspice's trapezoidal integration at tmax = dt (reltol 1e-7), the edge
// ramps (a shift of zero to first order: each is centred on its nominal time), and peakplan's
// cubic interpolation of the pair currents, whose effect on the height the step search holds
// below 0.1 %. The contract: eye height within 1 %, DDJ within 0.02 UI.
struct LargeSignalComparison {
  LargeSignalEye model, spice;
};

LargeSignalComparison compare_large_signal(const Chain& chain, const Signal& signal) {
  const std::string ngspice = test::find_on_path("ngspice");
  if (ngspice.empty()) throw std::runtime_error("ngspice not found on PATH: install it (Debian package 'ngspice')");
  const int out = chain.outputs().back();
  LargeSignalComparison r;
  r.model = large_signal_eye(chain, out, signal);
  std::string pattern = (fs::temp_directory_path() / "peakplan-ngspice-ls-XXXXXX").string();
  if (::mkdtemp(pattern.data()) == nullptr) throw std::runtime_error("mkdtemp failed");
  const fs::path dir = pattern;
  int index = 0;
  const HalfCircuitRun run = [&](const std::vector<double>& input, int steps) {
    const double dt = signal.ui() / steps;
    NetlistOptions options;
    options.drive = NetlistOptions::SymbolDrive{signal.ui(), input};
    options.tran_step_s = dt;
    options.tran_stop_s = dt * static_cast<double>(input.size() * static_cast<size_t>(steps));
    options.step_rise_s = dt / 10.0;
    options.batch_control = true;
    options.precise = true;
    options.data_prefix = (dir / ("run" + std::to_string(index++))).string();
    const fs::path netlist = options.data_prefix + ".cir";
    std::ofstream(netlist) << write_spice_netlist(chain, options);
    const fs::path log = options.data_prefix + ".log";
    const std::string command = "'" + ngspice + "' -b '" + netlist.string() + "' > '" + log.string() + "' 2>&1";
    const int rc = std::system(command.c_str());
    if (rc != 0 || !fs::exists(options.data_prefix + ".tran.txt"))
      throw std::runtime_error("ngspice failed on " + netlist.string() + ":\n" + test::read_file(log));
    const auto rows = read_wrdata(options.data_prefix + ".tran.txt");
    std::vector<double> time, v;
    for (const auto& row : rows) {
      time.push_back(row[0]);
      v.push_back(row.back());  // the main output is the last column
    }
    std::vector<double> y(input.size() * static_cast<size_t>(steps));
    for (size_t k = 0; k < y.size(); ++k) y[k] = interpolate(time, v, static_cast<double>(k) * dt);
    return y;
  };
  r.spice = large_signal_eye_at(chain, out, signal, r.model.grid_steps_per_ui, run);
  fs::remove_all(dir);
  MESSAGE("large signal: height model " << r.model.height_v << " V, ngspice " << r.spice.height_v
                                        << " V; DDJ model " << r.model.ddj_pp_s << " s, ngspice " << r.spice.ddj_pp_s
                                        << " s; steps per UI " << r.model.steps_per_ui);
  return r;
}

void check_large_signal(const Chain& chain, const Signal& signal) {
  const auto cmp = compare_large_signal(chain, signal);
  CHECK(cmp.spice.height_v == doctest::Approx(cmp.model.height_v).epsilon(0.01));
  if (signal.modulation == Modulation::nrz) {
    REQUIRE(std::isfinite(cmp.model.ddj_pp_s));
    REQUIRE(std::isfinite(cmp.spice.ddj_pp_s));
    CHECK(std::fabs(cmp.spice.ddj_pp_s - cmp.model.ddj_pp_s) < 0.02 * signal.ui());
  }
}

Signal prbs7_signal(double bit_rate, double swing) {
  Signal s;
  s.bit_rate = bit_rate;
  s.pattern = PrbsKind::prbs7;
  s.swing = swing;
  return s;
}

TEST_CASE("ngspice: a clipping bipolar shunt-peaked chain gives peakplan's large-signal PRBS7 eye") {
  // Invented values: three shunt-peaked pairs of 40 mS, 100 ohm, 4 mA (a 400 mV differential
  // limit), overdriven 25x at the input.
  Chain c = shunt_chain();
  c.name = "limiting shunt chain";
  c.stages.push_back(make_stage("s3", 1, inductive(LoadKind::shunt, 0.04, 100.0, 0.30e-9, 5.5, 30e-15), 60e-15, 20e-15));
  c.stages[1].c_load = 0.0;
  for (auto& s : c.stages) s.limit = PairLimit{0.004, PairKind::bipolar};
  check_large_signal(finish(c), prbs7_signal(28e9, 0.1));
}

TEST_CASE("ngspice: a clipping MOS plain chain gives peakplan's large-signal PRBS7 eye") {
  // The plain pair with MOS tails of 3 and 2 mA, driven to partial compression (30 mV), where
  // the square law and its clamp both shape the edges.
  Chain c = plain_chain();
  c.name = "limiting MOS plain chain";
  c.stages[0].limit = PairLimit{0.003, PairKind::mos};
  c.stages[1].limit = PairLimit{0.002, PairKind::mos};
  check_large_signal(finish(c), prbs7_signal(25e9, 0.03));
}

}  // namespace peakplan

TEST_CASE("ngspice: every shipped chain (planned first where it leaves values open) gives peakplan's response") {
  int checked = 0;
  for (const auto& entry : std::filesystem::directory_iterator(std::string(PEAKPLAN_SOURCE_DIR) + "/chains")) {
    if (entry.path().extension() != ".toml") continue;
    const std::string path = entry.path().string();
    CAPTURE(path);
    peakplan::Diagnostics d(path);
    const auto spec = peakplan::read_chain_spec(path, d);
    REQUIRE(spec);
    auto chain = peakplan::resolve_chain(*spec, d);
    if (!chain) {
      // A planning example: its open values are chosen first, then the plan is cross-checked.
      peakplan::Diagnostics plan_diagnostics(path);
      const auto plan = peakplan::plan_chain(*spec, plan_diagnostics);
      INFO(plan_diagnostics.format());
      REQUIRE(plan);
      chain = plan->chain;
    }
    // The small-signal check: limited stages are linearised (their B sources' slope at zero is
    // gm, but the DC point and the 1 V step would clip); the large-signal check is above.
    for (auto& stage : chain->stages) stage.limit.reset();
    peakplan::check_with_ngspice(*chain);
    ++checked;
  }
  CHECK(checked >= 6);
}

TEST_CASE("ngspice: `ngspice -b chain.cir` on the netlist as written prints the main output's AC and step") {
  using namespace peakplan::test;
  TempDir scratch("peakplan_ngspice_print");
  const std::string chain = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";
  const auto netlist = run_cli({"netlist", chain});
  REQUIRE(netlist.status == 0);
  write_file(scratch.path / "chain.cir", netlist.out);
  const auto listing = scratch.path / "listing.txt";
  REQUIRE(run_shell("cd " + shell_quoted(scratch.path.string()) + " && ngspice -b chain.cir >" +
                    shell_quoted(listing.string()) + " 2>&1") == 0);
  const std::string text = read_file(listing);
  CHECK(text.find("no data saved") == std::string::npos);
  CHECK(text.find("Index   time") != std::string::npos);
  // The first AC row is at bandwidth / 1000, where the gain is the DC gain to far below 1e-4 dB
  // (derived: a 4-stage roll-off there is of order (f/f3dB)^2 = 1e-6 relative).
  const auto at = text.find("Index   frequency");
  REQUIRE(at != std::string::npos);
  std::istringstream rows(text.substr(text.find('\n', text.find('\n', at) + 1) + 1));
  int index = -1;
  double frequency = 0.0, gain_db = 0.0, phase = 0.0;
  rows >> index >> frequency >> gain_db >> phase;
  REQUIRE(index == 0);
  const auto analysis = nlohmann::json::parse(run_cli({"analyze", chain, "--json"}).out);
  CHECK(gain_db == doctest::Approx(analysis["outputs"].back()["dc_gain_db"].get<double>()).epsilon(1e-5));
}

namespace peakplan {
namespace {

// Runs a netlist in batch mode and returns its .tran rows (time, then the output nodes).
std::vector<std::vector<double>> ngspice_tran(const Chain& chain, NetlistOptions options, const fs::path& dir) {
  run_batch("ngspice", chain, options, dir);
  return read_wrdata(options.data_prefix + ".tran.txt");
}

}  // namespace

TEST_CASE("ngspice: the netlist's step carries the [signal] input edge the eye model uses") {
  // derived: one plain stage (pole tau1 = Rd C) behind the first-order edge tau = input_rise /
  // ln 4 gives, per volt of step, y(t)/(-gm Rd) = 1 - (tau1 e^(-t/tau1) - tau e^(-t/tau)) /
  // (tau1 - tau). The PWL samples the edge at tau/8 (linear-interpolation error < 0.2 % of the
  // step, derived: h^2/(8 tau^2) = 1/512), so ngspice must agree to 0.3 % of the step.
  test::TempDir dir("peakplan_ngspice_edge");
  Chain chain{"one plain stage behind an input edge (test)", 0.0, {}, std::nullopt};
  chain.stages.push_back(make_stage("p1", -1, plain(0.04, 100.0, 50e-15), 0.0));  // tau1 = 5 ps
  chain = finish(chain);
  Signal signal;
  signal.bit_rate = 25e9;
  signal.input_rise = 4e-12;
  NetlistOptions options;
  options.edge_tau_s = netlist_edge_tau(signal);
  CHECK(options.edge_tau_s == doctest::Approx(4e-12 / std::log(4.0)));
  options.tran_step_s = 0.05e-12;
  options.tran_stop_s = 60e-12;
  const auto rows = ngspice_tran(chain, options, dir.path);
  REQUIRE(rows.size() > 100);
  const double tau1 = 100.0 * 50e-15, tau = options.edge_tau_s, gain = -0.04 * 100.0;
  double worst = 0.0;
  for (const auto& r : rows) {
    const double t = r[0];
    const double expected = 1.0 - (tau1 * std::exp(-t / tau1) - tau * std::exp(-t / tau)) / (tau1 - tau);
    worst = std::max(worst, std::fabs(r[1] / gain - expected));
  }
  CHECK(worst < 3e-3);
}

TEST_CASE("ngspice: netlist --prbs drives one PRBS period at the swing's half-circuit levels") {
  using namespace peakplan::test;
  TempDir scratch("peakplan_ngspice_prbs");
  const std::string chain = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/demo_postamp.toml";  // prbs7, 20 mV
  const auto netlist = run_cli({"netlist", chain, "--prbs"});
  REQUIRE(netlist.status == 0);
  CHECK(netlist.out.find("127 held symbols") != std::string::npos);
  // derived: a 20 mV differential swing is +-5 mV in each half circuit.
  CHECK(netlist.out.find("PWL(0 -5m") != std::string::npos);
  CHECK(netlist.out.find("half-circuit levels +-5m V for a 20m V differential swing") != std::string::npos);
  write_file(scratch.path / "chain.cir", netlist.out);
  CHECK(run_shell("cd " + shell_quoted(scratch.path.string()) + " && ngspice -b chain.cir > listing.txt 2>&1") == 0);
  CHECK(read_file(scratch.path / "listing.txt").find("Index   time") != std::string::npos);

  // Without a [signal] there is nothing to drive with: a clear error, exit 2, nothing on stdout.
  const auto bare = scratch.write("bare.toml", "[[stage]]\nid = \"a\"\nkind = \"plain\"\ngm = \"40 mS\"\n"
                                               "rd = \"100 ohm\"\nc_load = \"40 fF\"\n");
  const auto refused = run_cli({"netlist", bare, "--prbs"});
  CHECK(refused.status == 2);
  CHECK(refused.out.empty());
  CHECK(refused.err.find("[signal]") != std::string::npos);
}

}  // namespace peakplan

namespace peakplan {
namespace {

// ngspice's .noise of the netlist: the input-referred noise current density of a chain driven
// by a photocurrent (inoise_spectrum, A/rtHz, for the current source Iin) at each frequency.
// SPICE's controlled sources (the gm cells) and current sources are noiseless, so peakplan is
// compared with its resistor and coil-loss noise only; ngspice runs at 27 C = 300.15 K.
std::vector<std::pair<double, double>> ngspice_input_noise(const Chain& chain, const fs::path& dir, double f_lo,
                                                           double f_hi) {
  NetlistOptions options;
  options.precise = true;
  std::string netlist = write_spice_netlist(chain, options);
  netlist.erase(netlist.rfind(".end"));
  // The netlist's .save keeps only the main output, which would leave .noise nothing to record.
  const auto save = netlist.find("\n.save ");
  if (save != std::string::npos) netlist.erase(save + 1, netlist.find('\n', save + 1) - save);
  const std::string out = stage_output_node(chain, chain.outputs().back());
  const std::string data = (dir / "noise.txt").string();
  netlist += fmt::format(".control\nset wr_singlescale\nset wr_vecnames\nset numdgt=15\nnoise v({}) Iin dec 40 {} {}\n"
                         "setplot noise1\nwrdata {} inoise_spectrum\nquit\n.endc\n.end\n",
                         out, spice_number(f_lo), spice_number(f_hi), data);
  const fs::path file = dir / "noise.cir";
  std::ofstream(file) << netlist;
  const int rc = test::run_shell("ngspice -b " + test::shell_quoted(file.string()) + " > " +
                                 test::shell_quoted((dir / "noise.log").string()) + " 2>&1");
  if (rc != 0 || !fs::exists(data)) throw std::runtime_error("ngspice .noise failed:\n" + test::read_file(dir / "noise.log"));
  std::vector<std::pair<double, double>> rows;
  for (const auto& r : read_wrdata(data)) rows.emplace_back(r.at(0), r.at(1));
  return rows;
}

void check_input_noise(Chain chain) {
  // No shot noise on the SPICE side: the dark current is tested against 2qI in test_tia.cpp.
  if (chain.photodiode) chain.photodiode->dark_current = 0.0;
  fill_node_capacitances(chain);
  test::TempDir dir("peakplan_ngspice_noise");
  const double bw = analyze_chain(chain).outputs.back().response.frequency.bandwidth_hz;
  const auto spice = ngspice_input_noise(chain, dir.path, bw / 100.0, bw * 3.0);
  NoiseOptions options;
  options.gm_noise = false;
  options.temperature = 300.15;
  const ChainNoise model(chain, chain.outputs().back(), options);
  REQUIRE(spice.size() > 50);
  double worst = 0.0;
  for (const auto& [f, density] : spice) {
    const auto [h, psd] = model.evaluate(f);
    worst = std::max(worst, std::fabs(density / std::sqrt(psd / std::norm(h)) - 1.0));
  }
  MESSAGE("ngspice .noise vs peakplan, chain '" << chain.name << "': worst input-referred density error "
                                                 << 100.0 * worst << " % over " << spice.size() << " frequencies");
  // The contract is 1 %; both sides solve the same linear network exactly, and what is left
  // (1.7e-7) is ngspice's Boltzmann constant (CODATA 2014, 1.38064852e-23) against the exact SI one.
  CHECK(worst < 0.01);
}

}  // namespace
}  // namespace peakplan

TEST_CASE("ngspice .noise: the shipped receiver's input-referred noise current is peakplan's within 1 %") {
  const std::string path = std::string(PEAKPLAN_SOURCE_DIR) + "/chains/receiver_front_end.toml";
  peakplan::Diagnostics d(path);
  const auto chain = peakplan::read_chain(path, d);
  REQUIRE_MESSAGE(chain, d.format());
  peakplan::check_input_noise(*chain);
}

TEST_CASE("ngspice .noise: a three-cell TIA with Cf into a lossy shunt stage, within 1 %") {
  using namespace peakplan;
  // Invented values: a 3-cell core of gm 30 mS, Rd 250 ohm, Rf 2 kohm with 4 fF across it.
  StageCircuit tia;
  tia.kind = LoadKind::tia;
  tia.gm = 0.03;
  tia.rd = 250.0;
  tia.c_out = 8e-15;
  tia.rf = 2000.0;
  tia.cf = 4e-15;
  tia.core_stages = 3;
  StageCircuit shunt = test::plain_circuit(0.04, 120.0, 12e-15);
  shunt.kind = LoadKind::shunt;
  shunt.l = 300e-12;
  shunt.r_l = 6.0;
  shunt.r_load = 100.0;
  Chain chain{"three-cell tia into a shunt stage", 0.0, {}, Photodiode{200e-15, 0.9, 0.0}};
  chain.stages.push_back(test::make_stage("t", -1, tia, 20e-15));
  chain.stages.push_back(test::make_stage("s", 0, shunt, 25e-15, 30e-15));
  check_input_noise(chain);
}
