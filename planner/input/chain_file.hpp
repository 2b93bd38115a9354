// Reading a chain file (docs/chain-format.md) into a ChainSpec: every value with its source
// position, adjustable values marked as such, nothing resolved yet. All input errors are
// collected into Diagnostics; the spec is only usable when there are none.
#pragma once

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "models/eye.hpp"
#include "models/load_kinds.hpp"
#include "planner/input/diagnostics.hpp"
#include "planner/input/variation_spec.hpp"

namespace peakplan {

// A value the planner may choose: fixed, "auto" within the technology's bounds, or a range.
struct Adjustable {
  enum class Mode { fixed, automatic, range } mode = Mode::fixed;
  double value = 0.0;  // fixed
  double min = 0.0, max = 0.0;  // range
  SourcePosition where;
  bool is_fixed() const { return mode == Mode::fixed; }
};

struct StageSpec {
  std::string id;
  SourcePosition where;  // the [[stage]] header
  std::vector<LoadKind> kinds;  // one = fixed; several = candidates
  SourcePosition kind_where;
  std::map<std::string, Adjustable, std::less<>> values;  // element values by chain-file key
  std::optional<double> m, zeta;  // normalised designs
  std::string response;           // named T-coil design
  SourcePosition design_where;
  std::optional<std::vector<std::string>> feeds;
  SourcePosition feeds_where;
  Adjustable count;  // default fixed 1
  bool tap = false;
  // Limiting (docs/physics.md (large signals)): tail_current is values["tail_current"] (A; fixed,
  // "auto" or a range the planner chooses within); pair
  // is "bipolar" or "mos", empty when not given (bipolar when tail_current is).
  std::string pair;
  SourcePosition pair_where;

  const Adjustable* find(std::string_view key) const;
  bool kind_is_fixed() const { return kinds.size() == 1; }
};

struct TechnologySpec {
  std::optional<double> ft, c_out_ratio, inductor_q, max_inductance, min_cb, max_gm;
  // The smallest useful device: lower bound of an open gm (S).
  std::optional<double> min_gm;
  SourcePosition min_gm_where;
  // A coil's capacitance to AC ground per nH of its inductance (F, as the file gives it), half at
  // each end; it also bounds open inductances by their self-resonance (planner).
  std::optional<double> coil_c_per_nh;
  double coil_c_per_l() const { return coil_c_per_nh.value_or(0.0) / 1e-9; }  // F/H
  std::optional<double> gm_over_id, current_budget;
  std::optional<double> k_min, k_max;
  double gamma = 1.0;
  double temperature = 300.0;
};

// What a plan optimises ([target] objective; docs/chain-format.md): the least overshoot and
// group-delay ripple, the most bandwidth, the least total gm, the least input-referred noise.
enum class Objective { flattest, widest, leanest, quietest };
std::string_view to_string(Objective objective);
std::optional<Objective> objective_from_name(std::string_view name);

struct TargetSpec {
  std::optional<double> gain_db;         // a minimum
  SourcePosition gain_where;
  // A chain driven by a photocurrent (a tia first): the least transimpedance, ohm, and the
  // largest average optical power the receiver may need at the target BER (its sensitivity), W.
  std::optional<double> transimpedance;
  SourcePosition transimpedance_where;
  std::optional<double> sensitivity_w;
  SourcePosition sensitivity_where;
  SourcePosition objective_where;
  std::optional<double> bandwidth;       // Hz, a minimum
  std::optional<double> gain_bandwidth;  // Hz
  Objective objective = Objective::flattest;
  std::string plan_for = "nominal";  // or "corners": every check at every [variation] corner
  SourcePosition plan_for_where;     // or "yield": at the corners the yield target implies
  std::optional<double> yield;       // fraction in (0, 1), for plan_for = "yield"
  SourcePosition yield_where;
  // A limiting chain: the least differential eye height of the large-signal eye at the main
  // output, V, at [signal] swing (docs/physics.md (large signals)).
  std::optional<double> output_swing;
  SourcePosition output_swing_where;
};

struct LimitsSpec {
  std::optional<double> overshoot;           // fraction
  std::optional<double> peaking_db;
  std::optional<double> group_delay_ripple;  // s
  std::optional<double> ripple_band;         // Hz
  // The deepest in-band dip allowed, dB (a positive depth). Unset: plans use kDefaultSagDb and
  // analyses check none. 3 dB or more allows any shape the first-crossing bandwidth allows.
  std::optional<double> sag_db;
  static constexpr double kDefaultSagDb = 1.0;
  // The least DC gain any planned stage may have, dB (negative allows a loss). Unset: plans use
  // kDefaultMinStageGainDb (no planned loss), analyses check none.
  std::optional<double> min_stage_gain_db;
  static constexpr double kDefaultMinStageGainDb = 0.0;
  // A limiting chain: the largest peak-to-peak data-dependent jitter of the large-signal eye at
  // the main output, s, at [signal] swing.
  std::optional<double> ddj;
  SourcePosition ddj_where;
  // The largest bit-error ratio the main output may have at the [signal] swing (the statistical
  // eye's BER, docs/physics.md), and the largest differential rms output noise, V (the noise
  // behind that BER: noise.differential_rms_v of analyze). Both need a [signal].
  std::optional<double> ber;
  SourcePosition ber_where;
  std::optional<double> noise_rms;
  SourcePosition noise_rms_where;
};

struct SignalSpec {
  double bit_rate = 0.0;
  Modulation modulation = Modulation::nrz;
  std::string pattern = "prbs7";
  std::optional<double> input_rise;  // s, 20-80 %
  std::optional<double> swing;       // V at the input
  SourcePosition swing_where;
  double target_ber = 1e-12;
  std::optional<double> receiver_bandwidth;  // Hz: a first-order limit on the noise behind Q
  std::optional<double> extinction_ratio_db;  // optical P1/P0 in dB (10 log10); none = ideal
};

// [input.photodiode]: the photodiode in front of a tia.
struct PhotodiodeSpec {
  double capacitance = 0.0;   // F
  double responsivity = 0.0;  // A/W
  double dark_current = 0.0;  // A
  std::optional<double> wavelength;  // m; bounds the responsivity by the quantum limit
  SourcePosition where;
};

struct ChainSpec {
  std::string file;
  std::string name;
  double r_source = 0.0;
  SourcePosition r_source_where;  // line 0: not given
  std::optional<double> input_noise_density;  // V/rtHz
  SourcePosition noise_density_where;
  std::optional<PhotodiodeSpec> photodiode;
  std::optional<SignalSpec> signal;
  TargetSpec target;
  LimitsSpec limits;
  TechnologySpec technology;
  std::vector<StageSpec> stages;
  std::optional<VariationSpec> variation;  // [variation], planner/input/variation_file.hpp
};

// Bounds on the work a chain file may ask for (each an error at the place it is passed): the
// number of [[stage]] tables, the copies one `count` makes (a fixed count or a range's max),
// the copies of the whole chain (every fixed count, every range's max, "auto" as 1), and the
// combinations of candidate kinds and counts the planner would search one by one (the product
// over stages of kinds x counts; count = "auto" is 1..8, planner/plan_problem.cpp).
inline constexpr size_t kMaxStageTables = 256;
inline constexpr int64_t kMaxCount = 64;
inline constexpr int64_t kMaxStageCopies = 256;
inline constexpr int64_t kMaxCombinations = 1024;

// Plausible ranges of the normalised designs (docs/chain-format.md): shunt and series peaking
// use m of 0.2 .. 0.7 and T-coils zeta of 0.5 .. 1.5; the bounds are decades wider.
inline constexpr double kMinDesignM = 0.01, kMaxDesignM = 10.0;
inline constexpr double kMinDesignZeta = 0.1, kMaxDesignZeta = 10.0;
// A tia's core: 1 .. kMaxCoreStages identical gm-Rd cells.
inline constexpr int kMaxCoreStages = 5;
// The planner's default bounds of an open gm (docs/chain-format.md): [technology] max_gm, and
// min_gm (the smallest useful device) or else min(kDefaultMinGm, max/2).
inline constexpr double kDefaultMaxGm = 0.2, kDefaultMinGm = 1e-3;
// Plausible inductor quality factors ([technology] inductor_q): on-chip coils reach 5 .. 30.
inline constexpr double kMinInductorQ = 0.1, kMaxInductorQ = 1000.0;

// Reads, parses and validates one chain file: its text within bounds (chain_input.hpp), the
// command-line overrides (overrides.hpp) applied to the parsed TOML before it is read, so every
// check applies to an overridden value as if it were written in the file. Errors carry the path
// as the user gave it ("-" is standard input). nullopt when there were errors (in `diagnostics`).
struct Override;
std::optional<ChainSpec> read_chain_spec(const std::string& path, const std::vector<Override>& overrides,
                                         Diagnostics& diagnostics);
std::optional<ChainSpec> read_chain_spec(const std::string& path, Diagnostics& diagnostics);
// The same from text already read (the fuzz targets, --lock's replanning, tests).
std::optional<ChainSpec> parse_chain_spec(std::string_view text, const std::vector<Override>& overrides,
                                          Diagnostics& diagnostics);
std::optional<ChainSpec> parse_chain_spec(std::string_view text, Diagnostics& diagnostics);

// The stage ids of a chain file's [[stage]] tables, in file order (for suggestions).
std::vector<std::string> stage_ids(const ChainSpec& spec);

// The keys every [[stage]] accepts, whatever its kind.
const std::vector<std::string_view>& common_stage_keys();

// Every table the loader reads and the keys it accepts there ("stage": the common keys and every
// kind's parameters), so the format reference (docs/chain-format.md) can be checked against it.
struct FileTable {
  std::string_view name;  // "signal", "stage", ...
  std::vector<std::string_view> keys;
};
std::vector<FileTable> chain_file_tables();

}  // namespace peakplan
