// Input-failure tests: every fixture in tests/bad_chains/ holds one fault (or, for the two
// collection fixtures, a known set of them). Each is checked twice: through the loader, for
// the exact line and column and a fragment of the message, and through `peakplan analyze
// --json`, for exit status 2, nothing on stdout and GNU-shaped messages on stderr.
#include <doctest/doctest.h>

#include <filesystem>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "planner/input/chain_file.hpp"
#include "planner/input/chain_graph.hpp"
#include "planner/input/diagnostics.hpp"
#include "cli_support.hpp"

namespace fs = std::filesystem;
using namespace peakplan::test;

namespace {

const fs::path kFixtures = fs::path(PEAKPLAN_SOURCE_DIR) / "tests" / "bad_chains";

// `peakplan analyze CHAIN --json` with stdout and stderr captured.
CliRun run_analyze_json(const fs::path& chain) { return run_cli({"analyze", chain.string(), "--json"}); }

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

std::string position_prefix(const fs::path& path, int line, int column) {
  return path.string() + ":" + std::to_string(line) + ":" + std::to_string(column) + ": error: ";
}

// Every stderr line must be one an editor can jump to, or the count of dropped errors.
void check_stderr_shape(const std::string& err, const fs::path& path) {
  const std::regex located("^" + std::regex_replace(path.string(), std::regex(R"([.^$|()\[\]{}*+?\\])"), R"(\$&)") +
                           R"(:[0-9]+:[0-9]+: error: .+$)");
  const std::regex dropped(R"(^.*: [0-9]+ more errors not shown$)");
  for (const auto& line : lines_of(err)) {
    INFO("stderr line: " << line);
    CHECK((std::regex_match(line, located) || std::regex_match(line, dropped)));
  }
}

struct Fault {
  const char* file;
  const char* fact;  // the subcase name: what the fixture shows
  int line, column;  // of the first diagnostic
  std::vector<std::string> fragments;  // each must appear in the first diagnostic's message
  size_t count = 1;                    // diagnostics in all: a single fault is reported once
};

const std::vector<Fault>& faults() {
  static const std::vector<Fault> table{
      // Silent misreadings that are errors instead (docs/chain-format.md: dB and % keys take a
      // unit string; a value decades outside any chain's is a missing or wrong prefix).
      {"overshoot_bare_number.toml", "a bare overshoot is ambiguous and the message shows the string to write", 3, 13,
       {"[limits] overshoot: a bare number is ambiguous", "\"3 %\""}},
      {"gain_bare_number.toml", "a bare gain is ambiguous and the message shows the string to write", 3, 8,
       {"[target] gain: a bare number is ambiguous", "\"30 dB\""}},
      {"capacitance_missing_prefix.toml", "c_load = 35 (35 F) is out of range and the message suggests 35 fF", 7, 10,
       {"stage 'a1': c_load: 35 F is outside the plausible range", "did you mean \"35 fF\"?"}},
      {"inductance_one_henry.toml", "a 1 H stage inductor is out of range and the message suggests 1 nH", 8, 5,
       {"stage 'a1': l: 1 H is outside the plausible range", "did you mean \"1 nH\"?"}},
      {"resistance_implausibly_small.toml", "a 1e-30 ohm Rd is out of range, with no prefix to suggest", 6, 6,
       {"stage 'a1': rd: 1e-30 ohm is outside the plausible range 1 mohm .. 100 Mohm"}},
      {"shunt_with_auto_l_and_m.toml", "an open l beside m is the same error as a fixed one", 9, 5,
       {"stage 'a1': give l or m, not both"}},
      {"tcoil_response_and_auto_k.toml", "an open k beside a response design is reported at k", 9, 5,
       {"stage 'a1': k is set by the response design"}},
      {"toml_syntax_error.toml", "a key with no value is a TOML syntax error at the end of its line", 6, 5,
       {"TOML syntax", "expected value"}},
      {"unit_mismatch.toml", "c_in = \"2 nH\" is an inductance where a capacitance is expected", 7, 8,
       {"stage 'a1': c_in", "expected a capacitance", "\"2 nH\"", "which is an inductance"}},
      {"unknown_unit.toml", "an unknown unit is named and the expected dimension given", 7, 9,
       {"stage 'a1': c_out", "unknown unit \"furlongs\"", "expected a capacitance"}},
      {"negative_capacitance.toml", "a negative c_out is rejected at its value", 7, 9,
       {"stage 'a1': c_out must be zero or positive", "saw \"-15 fF\""}},
      {"k_out_of_range.toml", "k = 1.2 is outside (-1, 1)", 9, 5, {"stage 'a1': k must be in (-1, 1), saw 1.2"}},
      {"cycle.toml", "a feeds b feeds a is a cycle reported at the feeds that closes it", 14, 9,
       {"cycle: 'a' -> 'b' -> 'a'"}},
      {"cycle_closed_by_last_stage.toml", "a cycle through default edges is reported at the explicit feeds", 19, 9,
       {"cycle: 'a' -> 'b' -> 'c' -> 'a'"}},
      {"feeds_unknown_id.toml", "feeds naming an unknown id suggests the closest id", 7, 9,
       {"stage 'pre': feeds unknown stage 'mian'", "did you mean 'main'?"}},
      {"misspelt_stage_key.toml", "a misspelt stage key c_ot suggests c_out", 7, 1,
       {"stage 'a1': unknown key 'c_ot'", "did you mean 'c_out'?"}},
      {"misspelt_top_table.toml", "a misspelt top-level table [sigal] suggests signal", 2, 2,
       {"unknown key 'sigal'", "did you mean 'signal'?"}},
      {"missing_gm.toml", "a stage without gm is reported at its header", 2, 1,
       {"stage 'a1': missing gm", "transconductance"}},
      {"missing_rd.toml", "a stage without rd is reported at its header", 2, 1, {"stage 'a1': missing rd", "resistance"}},
      {"missing_id.toml", "a stage without id is reported by its position in the file", 8, 1,
       {"stage 2: missing id"}},
      {"missing_kind.toml", "a stage without kind lists the kinds", 2, 1,
       {"stage 'a1': missing kind", "plain, shunt, series, tcoil, tia, auto"}},
      {"unknown_kind.toml", "kind \"tcoyl\" suggests tcoil", 4, 8,
       {"stage 'a1': kind: unknown value \"tcoyl\"", "did you mean \"tcoil\"?"}},
      {"duplicate_id.toml", "a duplicate id is reported at the second stage, naming the first one's line", 8, 1,
       {"stage 'a1': id already used by the stage at line 2"}},
      {"two_stages_without_driver.toml", "two stages with no driver are both named", 2, 1,
       {"stages 'a1', 'a2' have no driver"}},
      {"stage_with_two_drivers.toml", "a stage fed by two stages is reported at that stage, naming both", 16, 1,
       {"stage 'a3' is fed by 'a1' and 'a2'", "only one driver"}},
      {"shunt_without_l_or_m.toml", "a shunt stage needs l or m", 2, 1, {"stage 'a1': a shunt stage needs l", "or m"}},
      {"shunt_with_l_and_m.toml", "a shunt stage with both l and m is reported at m", 9, 5,
       {"stage 'a1': give l or m, not both"}},
      {"tcoil_zeta_and_l1.toml", "a tcoil with zeta and l1 is reported at l1", 9, 6,
       {"stage 'a1': l1 is set by the zeta design"}},
      {"tcoil_missing_k.toml", "a tcoil without k or a design names k as missing", 2, 1,
       {"stage 'a1': a tcoil stage needs l1, l2 and k", "missing k"}},
      {"unknown_response.toml", "an unknown response name lists the named designs", 8, 12,
       {"stage 'a1': response: unknown value \"chebyshev\"", "butterworth, bessel, critical"}},
      {"bad_modulation.toml", "modulation \"pam8\" suggests pam4", 4, 14,
       {"[signal] modulation: unknown value \"pam8\"", "nrz, pam4", "did you mean \"pam4\"?"}},
      {"bad_pattern.toml", "an unknown pattern lists the PRBS patterns", 4, 11,
       {"[signal] pattern: unknown value \"prbs12\"", "prbs7, prbs9, prbs13, prbs13q, prbs15, prbs23, prbs31"}},
      {"prbs13q_with_nrz.toml", "prbs13q asks for PAM4 when the signal is NRZ", 5, 11,
       {"[signal] pattern \"prbs13q\" is a PAM4 pattern", "modulation = \"pam4\""}},
      {"bit_rate_not_positive.toml", "a zero bit rate must be positive", 3, 12,
       {"[signal] bit_rate must be positive", "saw \"0 Gb/s\""}},
      {"signal_without_bit_rate.toml", "[signal] without bit_rate is reported at the table", 2, 1,
       {"[signal]: missing bit_rate"}},
      {"count_zero.toml", "count = 0 is not a number of copies", 7, 9,
       {"stage 'g': count must be a whole number of copies >= 1", "saw 0"}},
      {"count_fractional.toml", "count = 2.5 is not a whole number", 7, 9,
       {"stage 'g': count must be a whole number of copies >= 1", "saw 2.5"}},
      {"auto_value_in_analyze.toml", "analyze rejects l = \"auto\" and says the planner chooses it", 8, 5,
       {"stage 'a1': l is \"auto\"", "analyze needs a value", "peakplan plan"}},
      {"bandwidth_and_gain_bandwidth.toml", "gain_bandwidth with bandwidth is reported at gain_bandwidth", 5, 18,
       {"[target]: give bandwidth or gain_bandwidth, not both"}},
      {"quantity_as_boolean.toml", "a boolean where a resistance is expected", 6, 6,
       {"stage 'a1': rd: expected a resistance", "saw true"}},
      {"feeds_as_number.toml", "feeds given as a number", 7, 9,
       {"stage 'a1': feeds: expected a stage id or a list of ids, saw 2"}},
      {"k_range_out_of_bounds.toml", "k_range past 1 shows the range that was given", 3, 11,
       {"[technology] k_range must satisfy -1 < low <= high < 1", "saw [0.2, 1.3]"}},
      {"objective_misspelt.toml", "objective \"flatest\" suggests flattest", 4, 13,
       {"[target] objective: unknown value \"flatest\"", "did you mean \"flattest\"?"}},
      {"kind_list_negative_inductance.toml", "a bad l shared by two candidate kinds is reported once", 7, 5,
       {"stage 'a1': l must be zero or positive", "saw \"-0.3 nH\""}},
      {"range_max_below_min.toml", "a range with max below min shows both", 7, 5,
       {"stage 'a1': l: range max must not be below min", "min \"1 nH\", max \"0.2 nH\""}},
      {"tap_not_boolean.toml", "tap given as a string", 7, 7, {"stage 'a1': tap: expected true or false, saw \"yes\""}},
      {"three_independent_errors.toml", "three independent faults are all reported, first one first", 4, 14,
       {"[signal] modulation: unknown value \"nrzz\""}, 3},
      {"too_many_errors.toml", "23 faults are cut at 20 reported in full", 7, 1,
       {"stage 'a1': unknown key 'x01'"}, peakplan::Diagnostics::limit},
      {"variation_negative_spread.toml", "a negative [variation] spread is rejected at its value", 10, 17,
       {"[variation] gm global must be zero or positive", "saw \"-5 %\""}},
      {"variation_spread_100_percent.toml", "a spread of 100 % is rejected: it takes values to zero", 10, 26,
       {"[variation] capacitance global must be below 100 %", "saw \"100 %\""}},
      {"variation_unknown_class.toml", "a misspelt variation class suggests the class", 10, 1,
       {"[variation]: unknown key 'capacitence'", "did you mean 'capacitance'?"}},
      {"variation_bare_number_spread.toml", "a bare number as a relative spread shows the percentage to write", 10, 17,
       {"[variation] gm global: a bare number is ambiguous", "\"10 %\"", "saw 0.1"}},
      {"variation_local_misspelt.toml", "a misspelt key in a class table suggests local", 10, 25,
       {"[variation] gm: unknown key 'locl'", "did you mean 'local'?"}},
      {"variation_uniform_too_wide.toml", "uniform spreads reaching 110 % are reported at the class table", 11, 6,
       {"[variation] gm: uniform spreads global + local = 110 %", "zero or negative"}},
      {"variation_coupling_percent.toml", "a coupling spread written as a percentage asks for a plain number", 10, 23,
       {"[variation] coupling global", "absolute", "0.02", "saw \"2 %\""}},
      {"variation_samples_zero.toml", "samples = 0 is outside 1 .. 1000000", 10, 11,
       {"[variation] samples", "from 1 to 1000000", "saw 0"}},
      {"variation_samples_too_many.toml", "two million samples is outside 1 .. 1000000", 10, 11,
       {"[variation] samples", "saw 2000000"}},
      {"variation_seed_negative.toml", "a negative seed is rejected", 10, 8, {"[variation] seed", "saw -1"}},
      {"variation_unknown_distribution.toml", "distribution \"gausian\" suggests gaussian", 10, 16,
       {"[variation] distribution", "gaussian, uniform", "did you mean \"gaussian\"?"}},
      {"variation_corners_misspelt.toml", "corners = \"extreme\" suggests extremes", 10, 11,
       {"[variation] corners", "did you mean \"extremes\"?"}},
      {"variation_corner_unknown_class.toml", "a named corner naming an unknown class suggests gm", 14, 1,
       {"corner 'slow': unknown key 'gmm'", "did you mean 'gm'?"}},
      {"variation_corner_bare_offset.toml", "a bare corner offset shows the signed percentage to write", 12, 6,
       {"corner 'slow': gm: a bare number is ambiguous", "\"-12 %\""}},
      {"variation_corner_minus_100.toml", "a corner offset of -100 % is rejected", 12, 15,
       {"corner 'empty': capacitance must be above -100 %"}},
      {"variation_duplicate_corner.toml", "a duplicate corner name is reported at the second, naming the first's line",
       15, 8, {"corner 'slow': name already used by the corner at line 11"}},
      {"variation_corner_missing_name.toml", "a named corner without a name is reported at its header", 10, 1,
       {"[[variation.corner]] 1: missing name"}},
      {"variation_coupling_past_one.toml", "a coupling spread taking a T-coil's k past 1 is reported at the spread", 15, 12,
       {"[variation] coupling", "k = 0.9 +- 0.15", "stage 'a1'", "outside (-1, 1)"}},
      {"count_over_limit.toml", "count = 3000000000 is over the limit of 64 copies", 7, 9,
       {"stage 'g': count 3000000000 is over the limit of 64 copies of one stage"}},
      {"count_range_over_limit.toml", "a count range's max over 64 is reported at max", 7, 26,
       {"stage 'g': count: max 100 is over the limit of 64 copies of one stage"}},
      {"stage_copies_over_limit.toml", "300 stage copies in all are reported at the count that passes 256", 31, 9,
       {"stage 'g5': the chain reaches 300 stage copies here, over the limit of 256"}},
      {"stage_tables_over_limit.toml", "the 257th [[stage]] table is reported at its header", 1282, 1,
       {"[[stage]] table 257 is over the limit of 256 stages"}},
      {"dotted_key_too_deep.toml", "a 40-part dotted key is reported where it passes 32 levels", 2, 66,
       {"nested deeper than the limit of 32 levels"}},
      {"arrays_too_deep.toml", "arrays nested 40 deep are reported where they pass 32 levels", 3, 43,
       {"nested deeper than the limit of 32 levels"}},
      {"nul_byte.toml", "a NUL byte makes a binary file, reported at the byte", 3, 8, {"a NUL byte", "binary file"}},
      {"not_utf8.toml", "a byte that is not UTF-8 is reported at the byte", 3, 12, {"byte 0xFF is not UTF-8 text"}},
      {"not_a_number_count.toml", "count = inf is not a whole number of copies", 7, 9,
       {"stage 'g': count must be a whole number of copies >= 1", "saw inf"}},
      {"limiting_tail_current_zero.toml", "a zero tail current is rejected at its value", 7, 16,
       {"stage 'la1': tail_current must be positive", "saw \"0 mA\""}},
      {"limiting_tail_current_negative.toml", "a negative tail current is rejected at its value", 7, 16,
       {"stage 'la1': tail_current must be positive", "saw \"-4 mA\""}},
      {"limiting_tail_current_not_current.toml", "a tail current in volts names the expected current", 7, 16,
       {"stage 'la1': tail_current", "expected a current"}},
      {"limiting_pair_misspelt.toml", "pair \"bipolr\" suggests bipolar", 8, 8,
       {"stage 'la1': pair: unknown value \"bipolr\"", "did you mean \"bipolar\"?"}},
      {"limiting_pair_without_tail.toml", "a pair without tail_current asks for it", 7, 8,
       {"stage 'la1': pair needs tail_current"}},
      {"limiting_mos_gm_beyond_tail.toml", "a MOS pair cannot give more gm than I_T/(2 V_T)", 8, 16,
       {"stage 'la1': tail_current 1.000 mA cannot give gm = 40.00 mS", "at most I_T/(2 V_T) = 19.34 mS",
        "expected at least 2.068 mA"}},
      {"limiting_tail_current_range_from_zero.toml", "a tail-current range starting at zero is rejected at the range", 7, 16,
       {"stage 'la1': tail_current: a range of tail currents must start above zero"}},
      {"limiting_tail_range_below_gm.toml", "a tail-current range below 2 V_T gm is rejected at the range", 7, 16,
       {"stage 'la1': tail_current: the range ends at 2.000 mA", "gives gm = 40.00 mS",
        "expected a max of at least 2.068 mA"}},
      {"limits_ddj_negative.toml", "a negative DDJ limit is rejected at its value", 7, 7,
       {"[limits] ddj must be zero or positive", "saw \"-2 ps\""}},
      {"ddj_without_signal.toml", "a DDJ limit without a [signal] swing asks for the swing", 3, 7,
       {"[limits] ddj is measured on the large-signal eye at the input swing: give [signal] swing"}},
      {"output_swing_without_swing.toml", "an output swing target without a [signal] swing asks for it", 6, 16,
       {"[target] output_swing is measured on the large-signal eye at the input swing: give [signal] swing"}},
      {"output_swing_without_limited_stage.toml", "an output swing target needs a stage with tail_current", 7, 16,
       {"[target] output_swing is measured on the large-signal eye of a limiting chain", "tail_current"}},
      // Normalised designs decades outside any peaking design (found by fuzzing, tests/fuzz/).
      {"shunt_m_implausible.toml", "m = 1e12 is outside the plausible range of a peaking design", 8, 5,
       {"stage 'a1': m = 1e+12 is outside the plausible range 0.01 .. 10"}},
      {"tcoil_zeta_implausible.toml", "zeta = 1e-9 is outside the plausible range of a peaking design", 8, 8,
       {"stage 'a1': zeta = 1e-09 is outside the plausible range 0.1 .. 10"}},
      {"stage_gain_implausible.toml", "a stage gain gm x rd of 4.5e6 is reported at rd", 6, 6,
       {"stage 'a1': gm x rd = 45.00 mS x 100.0 Mohm is a stage gain of 4.5e+06", "outside the plausible range"}},
      {"design_inductance_implausible.toml", "an inductance of 0.8 mH set by an m design is reported at m", 8, 5,
       {"stage 'a1': its design sets l = 800.0 uH", "outside the plausible range 10 fH .. 10 uH"}},
      {"inductor_q_implausible.toml", "inductor_q = 1e-9 is outside the plausible range of a coil's Q", 3, 14,
       {"[technology] inductor_q = 1e-09 is outside the plausible range 0.1 .. 1000"}},
      {"combinations_over_limit.toml", "six stages of any kind (4096 combinations) are reported at the sixth kind", 29, 8,
       {"stage 's6': the candidate kinds and counts open so far make 4096 combinations", "limit of 1024"}},
      // The receiver front end (docs/chain-format.md, [input.photodiode] and the tia kind).
      {"tia_not_first.toml", "a tia fed by another stage is an error at its kind", 10, 8,
       {"stage 't1': a tia stage takes the photocurrent, so it must be the first stage"}},
      {"photodiode_without_tia.toml", "a photodiode needs a tia first stage", 2, 1,
       {"[input.photodiode]: a photodiode drives a transimpedance stage"}},
      {"photodiode_negative_capacitance.toml", "a negative photodiode capacitance is an error", 3, 15,
       {"[input.photodiode] capacitance must be zero or positive"}},
      {"responsivity_above_quantum_limit.toml", "1.2 A/W at 850 nm is over the quantum limit 0.686 A/W", 4, 16,
       {"above the quantum limit", "0.6856 A/W"}},
      {"tia_without_rf.toml", "a tia stage without rf names the key", 2, 1, {"a tia stage needs rf"}},
      {"tia_core_stages_fraction.toml", "core_stages = 2.5 is not a whole number of cells", 8, 15,
       {"core_stages must be a whole number 1 .. 5"}},
      {"tia_with_r_source.toml", "r_source with a tia is an error at r_source", 3, 12,
       {"[input] r_source: the chain starts with a tia"}},
      {"tia_with_swing.toml", "a voltage swing into a tia chain is an error at swing", 4, 9,
       {"[signal] swing is an input voltage"}},
      {"tia_with_tail_current.toml", "a tia with a tail current is an error at the key", 8, 16,
       {"tail_current belongs to a limiting stage"}},
      {"tia_unstable.toml", "a tia whose feedback loop oscillates is an error at rf", 13, 6,
       {"stage 'tia' is unstable as written", "right half-plane at 39.6 GHz", "a larger rf or a cf"}},
      {"m_auto.toml", "m = \"auto\" says to open l instead", 7, 5,
       {"m is a design factor the file gives", "write l = \"auto\""}},
      {"key_of_other_kind.toml", "m on a plain stage names the kinds it belongs to, not gm", 7, 1,
       {"'m' is a key of shunt and series stages, and this stage is plain"}},
      {"extinction_ratio_zero.toml", "an extinction ratio of 0 dB is no signal", 8, 20,
       {"[signal] extinction_ratio must be above 0 dB"}},
      // Planning limits on the eye and the noise, and the planner's technology bounds.
      {"limits_ber_zero.toml", "a BER limit of 0 is outside (0, 0.5)", 7, 7, {"[limits] ber must be in (0, 0.5)", "saw 0"}},
      {"limits_ber_half.toml", "a BER limit of 0.5 is outside (0, 0.5)", 7, 7, {"[limits] ber must be in (0, 0.5)", "saw 0.5"}},
      {"limits_ber_without_swing.toml", "a BER limit without a [signal] swing is an error at ber", 6, 7,
       {"[limits] ber is the bit-error ratio at the input swing", "swing"}},
      {"limits_noise_rms_negative.toml", "a negative noise_rms is an error at its value", 6, 13,
       {"[limits] noise_rms must be positive", "\"-1 mV\""}},
      {"limits_noise_rms_without_signal.toml", "a noise_rms limit without a [signal] is an error at noise_rms", 3, 13,
       {"[limits] noise_rms limits the output noise analyze reports with a [signal]"}},
      {"technology_min_gm_above_max.toml", "min_gm above the (default) max_gm leaves no device to choose", 3, 10,
       {"[technology] min_gm \"300 mS\" is above max_gm 200.0 mS"}},
      {"technology_coil_c_negative.toml", "a negative coil self-capacitance is an error", 3, 17,
       {"[technology] coil_c_per_nh must be zero or positive"}},
  };
  return table;
}

bool contains(const std::string& text, const std::string& fragment) {
  return text.find(fragment) != std::string::npos;
}

}  // namespace

TEST_CASE("chain-file errors: each bad fixture fails at its fault's line and column, and analyze exits 2 "
          "with nothing on stdout") {
  for (const auto& fault : faults()) {
    SUBCASE(fault.fact) {
      const fs::path path = kFixtures / fault.file;
      INFO("fixture: " << path.string());
      const std::string before = read_file(path);

      peakplan::Diagnostics diagnostics(path.string());
      CHECK_FALSE(peakplan::read_chain(path.string(), diagnostics));
      REQUIRE_FALSE(diagnostics.list().empty());
      const auto& first = diagnostics.list().front();
      INFO("first diagnostic: " << first.format());
      CHECK(first.file == path.string());
      CHECK(first.where.line == fault.line);
      CHECK(first.where.column == fault.column);
      for (const auto& fragment : fault.fragments) {
        INFO("fragment: " << fragment);
        CHECK(contains(first.message, fragment));
      }
      CHECK(diagnostics.list().size() == fault.count);
      CHECK(first.format().rfind(position_prefix(path, fault.line, fault.column), 0) == 0);

      const CliRun run = run_analyze_json(path);
      INFO("stderr: " << run.err);
      CHECK(run.status == 2);
      CHECK(run.out.empty());
      CHECK(run.err.rfind(position_prefix(path, fault.line, fault.column), 0) == 0);
      check_stderr_shape(run.err, path);
      // The CLI prints exactly what the loader collected, nothing more and nothing lost.
      CHECK(run.err == diagnostics.format());

      CHECK(read_file(path) == before);
    }
  }
}

TEST_CASE("chain-file errors: every fixture in tests/bad_chains is in the table and opens with a comment") {
  std::set<std::string> listed;
  for (const auto& fault : faults()) listed.insert(fault.file);
  std::set<std::string> on_disk;
  for (const auto& entry : fs::directory_iterator(kFixtures)) {
    if (entry.path().extension() != ".toml") continue;
    on_disk.insert(entry.path().filename().string());
    const std::string text = read_file(entry.path());
    INFO("fixture: " << entry.path().filename().string());
    // The first line says what is wrong, so a reader of the fixture needs no test to explain it.
    CHECK(text.rfind("# Bad", 0) == 0);
  }
  CHECK(on_disk == listed);
  CHECK(on_disk.size() >= 30);
}

TEST_CASE("chain-file errors: three independent faults are all reported with their positions") {
  const fs::path path = kFixtures / "three_independent_errors.toml";
  peakplan::Diagnostics diagnostics(path.string());
  CHECK_FALSE(peakplan::read_chain(path.string(), diagnostics));
  const auto& list = diagnostics.list();
  REQUIRE(list.size() == 3);
  CHECK(diagnostics.dropped() == 0);
  CHECK(list[0].where.line == 4);
  CHECK(list[0].where.column == 14);
  CHECK(contains(list[0].message, "[signal] modulation: unknown value \"nrzz\""));
  CHECK(contains(list[0].message, "did you mean \"nrz\"?"));
  CHECK(list[1].where.line == 11);
  CHECK(list[1].where.column == 8);
  CHECK(contains(list[1].message, "stage 'a1': c_in: expected a capacitance"));
  CHECK(list[2].where.line == 20);
  CHECK(list[2].where.column == 5);
  CHECK(contains(list[2].message, "stage 'a2': k must be in (-1, 1), saw 1.2"));

  const CliRun run = run_analyze_json(path);
  CHECK(run.status == 2);
  CHECK(run.out.empty());
  const auto lines = lines_of(run.err);
  REQUIRE(lines.size() == 3);
  CHECK(lines[0].rfind(position_prefix(path, 4, 14), 0) == 0);
  CHECK(lines[1].rfind(position_prefix(path, 11, 8), 0) == 0);
  CHECK(lines[2].rfind(position_prefix(path, 20, 5), 0) == 0);
}

TEST_CASE("chain-file errors: past Diagnostics::limit the rest are counted on a 'more errors not shown' line") {
  // The fixture has 23 unknown keys x01 .. x23 on lines 7 .. 29; the reader reports them in
  // key order, which here is also line order.
  const fs::path path = kFixtures / "too_many_errors.toml";
  peakplan::Diagnostics diagnostics(path.string());
  CHECK_FALSE(peakplan::read_chain(path.string(), diagnostics));
  REQUIRE(diagnostics.list().size() == peakplan::Diagnostics::limit);
  CHECK(peakplan::Diagnostics::limit == 20);
  CHECK(diagnostics.dropped() == 3);
  const auto& last = diagnostics.list().back();
  CHECK(last.where.line == 26);
  CHECK(last.where.column == 1);
  CHECK(contains(last.message, "unknown key 'x20'"));

  const CliRun run = run_analyze_json(path);
  CHECK(run.status == 2);
  CHECK(run.out.empty());
  const auto lines = lines_of(run.err);
  REQUIRE(lines.size() == 21);
  CHECK(lines[19].rfind(position_prefix(path, 26, 1), 0) == 0);
  CHECK(lines[20] == path.string() + ": 3 more errors not shown");
}

TEST_CASE("chain-file errors: \"auto\" and kind candidates are valid chain-file input that only analyze rejects") {
  // The planner reads the same files, so these must pass the parser and fail only at resolve.
  const fs::path path = kFixtures / "auto_value_in_analyze.toml";
  peakplan::Diagnostics parse_diagnostics(path.string());
  const auto spec = peakplan::parse_chain_spec(read_file(path), parse_diagnostics);
  REQUIRE(spec);
  CHECK(parse_diagnostics.empty());
  REQUIRE(spec->stages.size() == 1);
  const auto* l = spec->stages[0].find("l");
  REQUIRE(l != nullptr);
  CHECK(l->mode == peakplan::Adjustable::Mode::automatic);
  CHECK(l->where.line == 8);
  CHECK(l->where.column == 5);

  peakplan::Diagnostics resolve_diagnostics(path.string());
  CHECK_FALSE(peakplan::resolve_chain(*spec, resolve_diagnostics));
  REQUIRE(resolve_diagnostics.list().size() == 1);
  CHECK(contains(resolve_diagnostics.list()[0].message, "l is \"auto\""));
}

TEST_CASE("chain-file errors: the good demo chain passes the same harness with exit 0 and JSON on stdout") {
  // A control for the harness above: if redirection or the binary path were broken, an
  // empty stdout would prove nothing about bad input.
  const fs::path path = fs::path(PEAKPLAN_SOURCE_DIR) / "chains" / "demo_postamp.toml";
  const std::string before = read_file(path);
  const CliRun run = run_analyze_json(path);
  INFO("stderr: " << run.err);
  CHECK(run.status == 0);
  CHECK(run.err.empty());
  REQUIRE_FALSE(run.out.empty());
  CHECK(run.out.front() == '{');
  CHECK(contains(run.out, "\"outputs\""));
  CHECK(read_file(path) == before);
}
