#include "planner/input/chain_file.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <filesystem>
#include <fmt/format.h>
#include <set>
#include <sstream>
#include <toml++/toml.h>

#include "models/pair_curve.hpp"
#include "planner/input/chain_input.hpp"
#include "planner/input/overrides.hpp"
#include "planner/input/plausible_range.hpp"
#include "planner/input/toml_reading.hpp"
#include "planner/input/variation_file.hpp"

namespace peakplan {
namespace {

using Keys = std::vector<std::string_view>;

const Keys kTopKeys{"chain", "input", "signal", "target", "limits", "technology", "stage",
                 "variation"};
const Keys kChainKeys{"name"};
const Keys kInputKeys{"r_source", "noise_density", "photodiode"};
const Keys kPhotodiodeKeys{"capacitance", "responsivity", "dark_current", "wavelength"};
const Keys kSignalKeys{"bit_rate", "modulation", "pattern", "input_rise", "swing", "target_ber", "receiver_bandwidth",
                          "extinction_ratio"};
const Keys kTargetKeys{"gain", "bandwidth", "gain_bandwidth", "objective", "plan_for", "transimpedance",
                       "sensitivity", "yield", "output_swing"};
const Keys kLimitsKeys{"overshoot", "peaking", "group_delay_ripple", "ripple_band", "sag", "min_stage_gain",
                       "ddj", "ber", "noise_rms"};
const Keys kTechnologyKeys{"ft", "c_out_ratio", "inductor_q", "max_inductance", "k_range",
                           "min_cb", "min_gm", "max_gm", "coil_c_per_nh", "gm_over_id", "current_budget", "gamma",
                           "temperature"};
const Keys kStageKeys{"id", "kind", "gm", "rd", "c_in", "c_out", "c_load", "r_load",
                      "feeds", "count", "tap", "tail_current", "pair"};
const Keys kPairs{"bipolar", "mos"};
const Keys kModulations{"nrz", "pam4"};
const Keys kPatterns{"prbs7", "prbs9", "prbs13", "prbs13q", "prbs15", "prbs23", "prbs31"};
const Keys kObjectives{"flattest", "widest", "leanest", "quietest"};
const Keys kResponses{"butterworth", "bessel", "critical"};

Dimension stage_key_dimension(std::string_view key) {
  if (key == "gm") return Dimension::conductance;
  if (key == "rd" || key == "r_load") return Dimension::resistance;
  return Dimension::capacitance;  // c_in, c_out, c_load
}

// What to write instead of a bare number for a dB or % key (docs/chain-format.md): the number
// with its unit, and for a percentage the reading as a fraction too, since both are common.
std::string unit_string_hint(double x, Dimension dim) {
  if (dim == Dimension::decibels)
    return fmt::format("write the level with its unit, e.g. \"{} dB\"", x);
  std::string hint = fmt::format("write the percentage with its unit, e.g. \"{} %\"", x);
  if (std::fabs(x) < 1.0) hint += fmt::format(" (or \"{} %\" if {} was meant as a fraction)", 100.0 * x, x);
  return hint;
}

class Reader {
 public:
  explicit Reader(Diagnostics& diagnostics) : diag_(diagnostics) {}

  void error(const toml::node& node, std::string message) {
    diag_.error(position(node.source()), std::move(message));
  }
  void error(SourcePosition where, std::string message) { diag_.error(where, std::move(message)); }

  void check_keys(const toml::table& table, const Keys& allowed, const std::string& context) {
    check_known_keys(diag_, table, allowed, context);
  }


  std::optional<double> quantity(const toml::node& node, Dimension dim, const std::string& what) {
    std::optional<double> value;
    if (auto v = node.value<double>(); v && !node.is_string()) {
      if (!std::isfinite(*v)) {
        error(node, what + " must be finite, saw " + shown(node));
        return std::nullopt;
      }
      if (dim == Dimension::decibels || dim == Dimension::fraction) {
        error(node, what + ": a bare number is ambiguous here; " + unit_string_hint(*v, dim));
        return std::nullopt;
      }
      value = from_plain_number(*v, dim);
    } else if (!node.is_string()) {
      error(node, what + ": expected " + describe(dim) + ", saw " + shown(node));
      return std::nullopt;
    } else {
      const auto parsed = parse_quantity(node.as_string()->get(), dim);
      if (!parsed.value) {
        error(node, what + ": " + parsed.error);
        return std::nullopt;
      }
      value = parsed.value;
    }
    if (const auto why = implausibility(*value, dim); !why.empty()) {
      error(node, what + ": " + why);
      return std::nullopt;
    }
    return value;
  }

  // A value that must be > 0 (strict), >= 0, or (sign_free) anything finite.
  std::optional<double> bounded(const toml::node& node, Dimension dim, const std::string& what,
                                bool strictly_positive, bool sign_free = false) {
    auto v = quantity(node, dim, what);
    if (!v || sign_free) return v;
    if (strictly_positive ? !(*v > 0.0) : !(*v >= 0.0)) {
      error(node, what + " must be " + (strictly_positive ? "positive" : "zero or positive") +
                      ", saw " + shown(node));
      return std::nullopt;
    }
    return v;
  }

  std::optional<std::string> word(const toml::node& node, const Keys& allowed, const std::string& what) {
    if (!node.is_string()) {
      error(node, what + ": expected one of " + quoted_list(allowed) + ", saw " + shown(node));
      return std::nullopt;
    }
    const std::string value = node.as_string()->get();
    // Trade spellings differ in case ("PAM4", "NRZ", "PRBS7"); the meaning does not.
    std::string lower = value;
    std::transform(lower.begin(), lower.end(), lower.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    if (std::find(allowed.begin(), allowed.end(), lower) != allowed.end()) return lower;
    const auto suggestion = closest_match(value, allowed);
    error(node, what + ": unknown value \"" + value + "\"; expected one of " + quoted_list(allowed) +
                    (suggestion.empty() ? "" : " (did you mean \"" + suggestion + "\"?)"));
    return std::nullopt;
  }

  std::optional<Adjustable> adjustable(const toml::node& node, Dimension dim, const std::string& what,
                                       bool strictly_positive, bool sign_free = false) {
    Adjustable a;
    a.where = position(node.source());
    if (node.is_string() && node.as_string()->get() == "auto") {
      a.mode = Adjustable::Mode::automatic;
      return a;
    }
    if (const auto* range = node.as_table()) {
      check_keys(*range, {"min", "max"}, what + ": ");
      const auto* lo = range->get("min");
      const auto* hi = range->get("max");
      if (!lo || !hi) {
        error(node, what + ": a range needs both min and max, e.g. { min = \"0.1 nH\", max = \"1.5 nH\" }");
        return std::nullopt;
      }
      const auto min = bounded(*lo, dim, what + " min", false);
      const auto max = bounded(*hi, dim, what + " max", false);
      if (!min || !max) return std::nullopt;
      if (!(*max >= *min)) {
        error(node, what + ": range max must not be below min, saw min " + shown(*lo) + ", max " + shown(*hi));
        return std::nullopt;
      }
      a.mode = Adjustable::Mode::range;
      a.min = *min;
      a.max = *max;
      return a;
    }
    const auto v = bounded(node, dim, what, strictly_positive, sign_free);
    if (!v) return std::nullopt;
    a.value = *v;
    return a;
  }

 private:
  Diagnostics& diag_;
};

const toml::table* sub_table(Reader& reader, const toml::table& root, std::string_view name) {
  const auto* node = root.get(name);
  if (!node) return nullptr;
  if (const auto* t = node->as_table()) return t;
  reader.error(*node, "'" + std::string(name) + "' must be a table ([" + std::string(name) + "])");
  return nullptr;
}

// Planck constant times the speed of light over the elementary charge: a photodiode of quantum
// efficiency 1 gives q lambda/(h c) = lambda / 1.23984 um amperes per watt (CODATA 2018, exact).
constexpr double kPhotonVoltMetre = 6.62607015e-34 * 299792458.0 / 1.602176634e-19;

void read_photodiode(Reader& reader, const toml::node& node, ChainSpec& spec) {
  const auto* t = node.as_table();
  if (!t) {
    reader.error(node, "[input] photodiode must be a table: [input.photodiode] with capacitance, responsivity and "
                       "dark_current");
    return;
  }
  reader.check_keys(*t, kPhotodiodeKeys, "[input.photodiode]: ");
  PhotodiodeSpec pd;
  pd.where = position(t->source());
  bool ok = true;
  auto read = [&](const char* key, Dimension dim, bool required, bool positive, double& into) {
    const auto* n = t->get(key);
    if (!n) {
      if (required) {
        reader.error(pd.where, std::string("[input.photodiode]: missing ") + key + ", " + describe(dim));
        ok = false;
      }
      return;
    }
    const auto v = reader.bounded(*n, dim, std::string("[input.photodiode] ") + key, positive);
    if (v) into = *v;
    else ok = false;
  };
  read("capacitance", Dimension::capacitance, true, false, pd.capacitance);
  read("responsivity", Dimension::responsivity, true, true, pd.responsivity);
  read("dark_current", Dimension::current, false, false, pd.dark_current);
  if (const auto* n = t->get("wavelength")) {
    double lambda = 0.0;
    read("wavelength", Dimension::length, false, true, lambda);
    if (lambda > 0.0) {
      pd.wavelength = lambda;
      const double limit = lambda / kPhotonVoltMetre;
      if (pd.responsivity > limit * (1.0 + 1e-12)) {
        reader.error(*t->get("responsivity"),
                     fmt::format("[input.photodiode] responsivity {} is above the quantum limit q lambda/(h c) = "
                                 "{:.4g} A/W at {} (an efficiency over 100 %)",
                                 format_si(pd.responsivity, "A/W", 4), limit, format_si(lambda, "m", 4)));
        ok = false;
      }
    }
    (void)n;
  }
  if (ok) spec.photodiode = pd;
}

void read_input(Reader& reader, const toml::table& root, ChainSpec& spec) {
  const auto* t = sub_table(reader, root, "input");
  if (!t) return;
  reader.check_keys(*t, kInputKeys, "[input]: ");
  if (const auto* n = t->get("r_source")) {
    spec.r_source_where = position(n->source());
    if (auto v = reader.bounded(*n, Dimension::resistance, "[input] r_source", false)) spec.r_source = *v;
  }
  if (const auto* n = t->get("noise_density")) {
    spec.noise_density_where = position(n->source());
    spec.input_noise_density = reader.bounded(*n, Dimension::noise_density, "[input] noise_density", false);
  }
  if (const auto* n = t->get("photodiode")) read_photodiode(reader, *n, spec);
}

// The input swing: the differential peak-to-peak swing at the chain input (twice what each half
// circuit sees, docs/physics.md (large signals)). "20 mV", "20 mVpp" and "20 mVppd" all say that; the
// suffixes are accepted because that is how swings are written, and change nothing.
std::optional<double> read_swing(Reader& reader, const toml::node& node) {
  const std::string text = node.is_string() ? node.as_string()->get() : std::string();
  const size_t suffix = text.ends_with("ppd") ? 3 : text.ends_with("pp") ? 2 : 0;
  if (suffix == 0) return reader.bounded(node, Dimension::voltage, "[signal] swing", true);
  const auto parsed = parse_quantity(text.substr(0, text.size() - suffix), Dimension::voltage);
  const std::string why = !parsed.value        ? parsed.error + " (a peak-to-peak voltage such as \"20 mVppd\")"
                          : *parsed.value <= 0 ? "must be positive, saw \"" + text + "\""
                                               : implausibility(*parsed.value, Dimension::voltage);
  if (!why.empty()) {
    reader.error(node, "[signal] swing: " + why);
    return std::nullopt;
  }
  return parsed.value;
}

void read_signal(Reader& reader, const toml::table& root, ChainSpec& spec) {
  const auto* t = sub_table(reader, root, "signal");
  if (!t) return;
  reader.check_keys(*t, kSignalKeys, "[signal]: ");
  SignalSpec signal;
  bool in_baud = false;  // "28 GBd": a symbol rate, in bits once the modulation is known
  if (const auto* n = t->get("bit_rate")) {
    std::optional<double> v;
    const std::string text = n->is_string() ? n->as_string()->get() : std::string();
    if (text.size() > 2 && text.compare(text.size() - 2, 2, "Bd") == 0) {
      in_baud = true;
      const auto parsed = parse_quantity(text.substr(0, text.size() - 2) + "b/s", Dimension::bit_rate);
      const std::string why = !parsed.value      ? parsed.error
                              : *parsed.value <= 0 ? "must be positive, saw \"" + text + "\""
                                                   : implausibility(*parsed.value, Dimension::bit_rate);
      if (why.empty())
        v = parsed.value;
      else
        reader.error(*n, "[signal] bit_rate: " + why);
    } else {
      v = reader.bounded(*n, Dimension::bit_rate, "[signal] bit_rate", true);
    }
    if (v) signal.bit_rate = *v;
  } else {
    reader.error(position(t->source()), "[signal]: missing bit_rate, e.g. bit_rate = \"56 Gb/s\"");
  }
  if (const auto* n = t->get("modulation"))
    if (auto w = reader.word(*n, kModulations, "[signal] modulation"))
      signal.modulation = *w == "pam4" ? Modulation::pam4 : Modulation::nrz;
  if (in_baud && signal.modulation == Modulation::pam4) signal.bit_rate *= 2.0;  // two bits per PAM4 symbol
  if (const auto* n = t->get("pattern"))
    if (auto w = reader.word(*n, kPatterns, "[signal] pattern")) {
      // PRBS13Q is PRBS13 taken two bits at a time into Gray-coded PAM4 symbols, which is what
      // pattern = "prbs13" gives under PAM4: the same symbols, and a PAM4 pattern only.
      if (*w == "prbs13q" && signal.modulation != Modulation::pam4)
        reader.error(*n, "[signal] pattern \"prbs13q\" is a PAM4 pattern: set modulation = \"pam4\", or use "
                         "\"prbs13\" for NRZ");
      signal.pattern = *w == "prbs13q" ? "prbs13" : *w;
    }
  if (const auto* n = t->get("input_rise"))
    signal.input_rise = reader.bounded(*n, Dimension::time, "[signal] input_rise", false);
  if (const auto* n = t->get("swing")) {
    signal.swing_where = position(n->source());
    signal.swing = read_swing(reader, *n);
  }
  if (const auto* n = t->get("receiver_bandwidth"))
    signal.receiver_bandwidth = reader.bounded(*n, Dimension::frequency, "[signal] receiver_bandwidth", true);
  if (const auto* n = t->get("extinction_ratio")) {
    // An optical power ratio: 10 log10(P1/P0), so "9 dB" is a ratio of 7.94.
    const auto v = reader.quantity(*n, Dimension::decibels, "[signal] extinction_ratio");
    if (v && !(*v > 0.0 && *v <= 40.0))
      reader.error(*n, "[signal] extinction_ratio must be above 0 dB (P1 > P0) and at most 40 dB, saw " + shown(*n));
    else if (v)
      signal.extinction_ratio_db = *v;
  }
  if (const auto* n = t->get("target_ber")) {
    const auto v = reader.quantity(*n, Dimension::dimensionless, "[signal] target_ber");
    if (v && (*v <= 0.0 || *v >= 0.5))
      reader.error(*n, "[signal] target_ber must be in (0, 0.5), saw " + shown(*n));
    else if (v)
      signal.target_ber = *v;
  }
  spec.signal = signal;
}

void read_target(Reader& reader, const toml::table& root, ChainSpec& spec) {
  const auto* t = sub_table(reader, root, "target");
  if (!t) return;
  reader.check_keys(*t, kTargetKeys, "[target]: ");
  if (const auto* n = t->get("gain")) {
    spec.target.gain_where = position(n->source());
    spec.target.gain_db = reader.quantity(*n, Dimension::decibels, "[target] gain");
  }
  if (const auto* n = t->get("transimpedance")) {
    spec.target.transimpedance_where = position(n->source());
    spec.target.transimpedance = reader.bounded(*n, Dimension::resistance, "[target] transimpedance", true);
  }
  if (const auto* n = t->get("sensitivity")) {
    spec.target.sensitivity_where = position(n->source());
    spec.target.sensitivity_w = reader.bounded(*n, Dimension::power, "[target] sensitivity", true);
  }
  if (const auto* n = t->get("bandwidth"))
    spec.target.bandwidth = reader.bounded(*n, Dimension::frequency, "[target] bandwidth", true);
  if (const auto* n = t->get("gain_bandwidth")) {
    spec.target.gain_bandwidth = reader.bounded(*n, Dimension::frequency, "[target] gain_bandwidth", true);
    if (t->get("bandwidth"))
      reader.error(*n, "[target]: give bandwidth or gain_bandwidth, not both");
  }
  if (const auto* n = t->get("objective")) {
    spec.target.objective_where = position(n->source());
    if (auto w = reader.word(*n, kObjectives, "[target] objective")) spec.target.objective = *objective_from_name(*w);
  }
  if (const auto* n = t->get("plan_for")) {  // docs/physics.md (process variation)
    spec.target.plan_for_where = position(n->source());
    if (auto w = reader.word(*n, {"nominal", "corners", "yield"}, "[target] plan_for")) spec.target.plan_for = *w;
  }
  if (const auto* n = t->get("yield")) {
    spec.target.yield_where = position(n->source());
    const auto v = reader.quantity(*n, Dimension::fraction, "[target] yield");
    if (v && !(*v > 0.0 && *v < 1.0))
      reader.error(*n, "[target] yield must be above 0 % and below 100 %, saw " + shown(*n));
    else if (v)
      spec.target.yield = *v;
  }
  if (const auto* n = t->get("output_swing")) {
    spec.target.output_swing_where = position(n->source());
    spec.target.output_swing = reader.bounded(*n, Dimension::voltage, "[target] output_swing", true);
  }
}

// A limit in dB that is a height or a depth (peaking, sag): a negative value is an error at it.
std::optional<double> nonnegative_db(Reader& reader, const toml::node& n, const std::string& key, const char* rule) {
  const auto v = reader.quantity(n, Dimension::decibels, key);
  if (v && *v < 0.0) {
    reader.error(n, key + " " + rule + ", saw " + shown(n));
    return std::nullopt;
  }
  return v;
}

void read_limits(Reader& reader, const toml::table& root, ChainSpec& spec) {
  const auto* t = sub_table(reader, root, "limits");
  if (!t) return;
  reader.check_keys(*t, kLimitsKeys, "[limits]: ");
  if (const auto* n = t->get("overshoot"))
    spec.limits.overshoot = reader.bounded(*n, Dimension::fraction, "[limits] overshoot", false);
  if (const auto* n = t->get("peaking"))
    spec.limits.peaking_db = nonnegative_db(reader, *n, "[limits] peaking", "must be zero or positive");
  if (const auto* n = t->get("group_delay_ripple"))
    spec.limits.group_delay_ripple = reader.bounded(*n, Dimension::time, "[limits] group_delay_ripple", false);
  if (const auto* n = t->get("ripple_band"))
    spec.limits.ripple_band = reader.bounded(*n, Dimension::frequency, "[limits] ripple_band", true);
  if (const auto* n = t->get("sag"))
    spec.limits.sag_db = nonnegative_db(reader, *n, "[limits] sag", "is a depth: zero or positive");
  if (const auto* n = t->get("min_stage_gain"))
    spec.limits.min_stage_gain_db = reader.quantity(*n, Dimension::decibels, "[limits] min_stage_gain");
  if (const auto* n = t->get("ddj")) {
    spec.limits.ddj_where = position(n->source());
    spec.limits.ddj = reader.bounded(*n, Dimension::time, "[limits] ddj", false);
  }
  if (const auto* n = t->get("ber")) {
    spec.limits.ber_where = position(n->source());
    const auto v = reader.quantity(*n, Dimension::dimensionless, "[limits] ber");
    if (v && !(*v > 0.0 && *v < 0.5))
      reader.error(*n, "[limits] ber must be in (0, 0.5) (a bit-error ratio, e.g. 1e-12), saw " + shown(*n));
    else
      spec.limits.ber = v;
  }
  if (const auto* n = t->get("noise_rms")) {
    spec.limits.noise_rms_where = position(n->source());
    spec.limits.noise_rms = reader.bounded(*n, Dimension::voltage, "[limits] noise_rms", true);
  }
}

// The BER limit is read at the [signal] swing, and both noise limits from the noise a [signal]
// analysis computes (with its receiver_bandwidth): each an error at its key without them.
void check_signal_limits(Reader& reader, const ChainSpec& spec) {
  if (spec.limits.ber && !(spec.signal && spec.signal->swing))
    reader.error(spec.limits.ber_where, "[limits] ber is the bit-error ratio at the input swing: give [signal] with "
                                        "bit_rate and swing (e.g. swing = \"20 mV\")");
  if (spec.limits.noise_rms && !spec.signal)
    reader.error(spec.limits.noise_rms_where, "[limits] noise_rms limits the output noise analyze reports with a "
                                              "[signal]: give [signal] with its bit_rate");
}

void read_technology(Reader& reader, const toml::table& root, ChainSpec& spec) {
  const auto* t = sub_table(reader, root, "technology");
  if (!t) return;
  reader.check_keys(*t, kTechnologyKeys, "[technology]: ");
  auto& tech = spec.technology;
  auto positive = [&](const char* key, Dimension dim, std::optional<double>& into) {
    if (const auto* n = t->get(key)) into = reader.bounded(*n, dim, std::string("[technology] ") + key, true);
  };
  positive("ft", Dimension::frequency, tech.ft);
  positive("c_out_ratio", Dimension::dimensionless, tech.c_out_ratio);
  positive("inductor_q", Dimension::dimensionless, tech.inductor_q);
  // Q = 1e-9 makes every coil a resistor of gigaohms and the chain's gain zero.
  if (tech.inductor_q && !(*tech.inductor_q >= kMinInductorQ && *tech.inductor_q <= kMaxInductorQ)) {
    reader.error(*t->get("inductor_q"), fmt::format("[technology] inductor_q = {} is outside the plausible range {:g} .. {:g}",
                                                    shown(*t->get("inductor_q")), kMinInductorQ, kMaxInductorQ));
    tech.inductor_q.reset();
  }
  positive("max_inductance", Dimension::inductance, tech.max_inductance);
  positive("max_gm", Dimension::conductance, tech.max_gm);
  if (const auto* n = t->get("min_gm")) {
    tech.min_gm_where = position(n->source());
    tech.min_gm = reader.bounded(*n, Dimension::conductance, "[technology] min_gm", true);
    if (tech.min_gm && *tech.min_gm > tech.max_gm.value_or(kDefaultMaxGm)) {
      reader.error(*n, fmt::format("[technology] min_gm {} is above max_gm {}: the planner would have no device to "
                                   "choose", shown(*n), format_si(tech.max_gm.value_or(kDefaultMaxGm), "S", 4)));
      tech.min_gm.reset();
    }
  }
  if (const auto* n = t->get("coil_c_per_nh")) {
    // A capacitance per nH: "20 fF" means 20 fF for every nH of a coil.
    if (const auto c = reader.bounded(*n, Dimension::capacitance, "[technology] coil_c_per_nh", false))
      tech.coil_c_per_nh = *c;
  }
  positive("gm_over_id", Dimension::dimensionless, tech.gm_over_id);
  positive("current_budget", Dimension::current, tech.current_budget);
  if (const auto* n = t->get("min_cb")) tech.min_cb = reader.bounded(*n, Dimension::capacitance, "[technology] min_cb", false);
  if (const auto* n = t->get("gamma")) {
    if (auto v = reader.bounded(*n, Dimension::dimensionless, "[technology] gamma", false)) tech.gamma = *v;
  }
  if (const auto* n = t->get("temperature")) {
    if (auto v = reader.bounded(*n, Dimension::temperature, "[technology] temperature", true)) tech.temperature = *v;
  }
  if (const auto* n = t->get("k_range")) {
    const auto* array = n->as_array();
    if (!array || array->size() != 2) {
      reader.error(*n, "[technology] k_range: expected two numbers [low, high], saw " + shown(*n));
    } else {
      const auto lo = reader.quantity(*array->get(0), Dimension::dimensionless, "[technology] k_range low");
      const auto hi = reader.quantity(*array->get(1), Dimension::dimensionless, "[technology] k_range high");
      if (lo && hi) {
        if (!(*lo > -1.0 && *hi < 1.0 && *lo <= *hi))
          reader.error(*n, "[technology] k_range must satisfy -1 < low <= high < 1, saw [" +
                               shown(*array->get(0)) + ", " + shown(*array->get(1)) + "]");
        else {
          tech.k_min = lo;
          tech.k_max = hi;
        }
      }
    }
  }
}

// Keys this stage accepts: the common ones and those of every candidate kind.
Keys stage_keys_for(const std::vector<LoadKind>& kinds) {
  Keys keys = kStageKeys;
  for (auto kind : kinds)
    for (const auto& p : load_kind_info(kind).parameters)
      if (std::find(keys.begin(), keys.end(), p.key) == keys.end()) keys.push_back(p.key);
  return keys;
}

std::vector<LoadKind> every_kind() {
  std::vector<LoadKind> kinds;
  for (const auto& info : all_load_kinds()) kinds.push_back(info.kind);
  return kinds;
}

// A key of another load kind ("m" on a plain stage) is not a typo of a key this stage has: its
// error names the kinds it belongs to. Returns `allowed` with such keys added, so that the
// unknown-key check passes over them.
Keys with_other_kinds_keys(Reader& reader, const toml::table& t, Keys allowed, const std::string& who,
                           const StageSpec& stage) {
  const Keys every = stage_keys_for(every_kind());
  for (auto&& [key, node] : t) {
    const auto k = key.str();
    if (std::find(allowed.begin(), allowed.end(), k) != allowed.end()) continue;
    if (std::find(every.begin(), every.end(), k) == every.end()) continue;
    std::vector<std::string> owners;
    for (const auto& info : all_load_kinds())
      for (const auto& p : info.parameters)
        if (p.key == k) owners.emplace_back(to_string(info.kind));
    std::vector<std::string> kinds;
    for (auto kind : stage.kinds) kinds.emplace_back(to_string(kind));
    const auto listed = [](const std::vector<std::string>& words) {
      std::string out;
      for (size_t i = 0; i < words.size(); ++i)
        out += (i == 0 ? "" : i + 1 == words.size() ? " and " : ", ") + words[i];
      return out;
    };
    const std::string here = listed(kinds);
    reader.error(position(key.source()), fmt::format("{}'{}' is a key of {} stages, and this stage is {}; remove it "
                                                     "or change the kind", who, k, listed(owners), here));
    allowed.push_back(k);
  }
  return allowed;
}

// What kind = "auto" lets the planner choose among: the voltage-gain kinds. A transimpedance
// stage is a receiver's front end, never a candidate for a post-amplifier stage.
std::vector<LoadKind> auto_kinds() {
  std::vector<LoadKind> kinds;
  for (const auto& info : all_load_kinds())
    if (!info.current_input) kinds.push_back(info.kind);
  return kinds;
}

Keys kind_names_and_auto() {
  Keys names;
  for (const auto& info : all_load_kinds()) names.push_back(info.name);
  names.push_back("auto");
  return names;
}

std::optional<std::vector<LoadKind>> read_kind(Reader& reader, const toml::node& node, const std::string& who) {
  const Keys names = kind_names_and_auto();
  auto one = [&](const toml::node& n) -> std::optional<LoadKind> {
    const auto w = reader.word(n, names, who + "kind");
    if (!w || *w == "auto") return std::nullopt;
    return load_kind_from_name(*w);
  };
  if (node.is_string() && node.as_string()->get() == "auto") return auto_kinds();
  if (const auto* array = node.as_array()) {
    if (array->empty()) {
      reader.error(node, who + "kind: an empty list of candidates; list at least one kind");
      return std::nullopt;
    }
    std::vector<LoadKind> kinds;
    for (const auto& element : *array) {
      const auto k = one(element);
      if (!k) return std::nullopt;
      if (std::find(kinds.begin(), kinds.end(), *k) == kinds.end()) kinds.push_back(*k);
    }
    return kinds;
  }
  const auto k = one(node);
  if (!k) return std::nullopt;
  return std::vector<LoadKind>{*k};
}

// A normalised design sets the elements it names, whether they are written as values, "auto"
// or a range: giving both would leave one of them silently unused.
void check_design_conflicts(Reader& reader, const StageSpec& stage, const std::string& who) {
  if (stage.m && stage.find("l")) reader.error(stage.design_where, who + "give l or m, not both");
  const bool designed_coil = stage.zeta || !stage.response.empty();
  if (stage.zeta && !stage.response.empty())
    reader.error(stage.design_where, who + "give zeta or response, not both");
  if (!designed_coil) return;
  for (const auto* key : {"l1", "l2", "k", "cb"})
    if (const auto* a = stage.find(key))
      reader.error(a->where, who + key + " is set by the " + (stage.zeta ? "zeta" : "response") +
                                 " design; give one or the other");
}

// tail_current (a current > 0, "auto" or a range of them for the planner) and pair; the gm bound
// needs gm and the temperature, so resolve_chain (and the planner, for an open one) checks it.
void read_limit(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  if (const auto* n = t.get("tail_current")) {
    if (const auto a = reader.adjustable(*n, Dimension::current, who + "tail_current", true)) {
      if (a->mode == Adjustable::Mode::range && !(a->min > 0.0))
        reader.error(*n, who + "tail_current: a range of tail currents must start above zero, saw " + shown(*n));
      else
        stage.values["tail_current"] = *a;
    }
  }
  if (const auto* n = t.get("pair")) {
    stage.pair_where = position(n->source());
    if (const auto w = reader.word(*n, kPairs, who + "pair")) stage.pair = *w;
    if (!t.get("tail_current"))
      reader.error(*n, who + "pair needs tail_current (the pair's tail current, e.g. tail_current = \"6 mA\")");
  }
}

// A tail-current range for the planner must reach the least that gives a fixed gm, 2 V_T gm
// (models/pair_curve.hpp); a fixed tail current is checked the same way by resolve_chain.
void check_tail_range(Reader& reader, const toml::table& t, const std::string& who, const StageSpec& stage,
                      double temperature) {
  const auto* tail = stage.find("tail_current");
  const auto* gm = stage.find("gm");
  if (!tail || tail->mode != Adjustable::Mode::range || !gm || !gm->is_fixed()) return;
  const double least = gm->value / max_pair_gm(1.0, temperature);
  if (tail->max < least)
    reader.error(*t.get("tail_current"),
                 fmt::format("{}tail_current: the range ends at {}, below the least tail current that gives gm = {} "
                             "(2 V_T gm at {:g} K); expected a max of at least {}",
                             who, format_si(tail->max, "A", 4), format_si(gm->value, "S", 4), temperature,
                             format_si(least, "A", 4)));
}

// [target] output_swing and [limits] ddj are measured on the large-signal eye (docs/physics.md
// (large signals)): they need the input swing it is driven with and a stage that limits.
void check_large_signal_requirements(Reader& reader, const toml::table& root, const ChainSpec& spec) {
  const bool limited = std::any_of(spec.stages.begin(), spec.stages.end(),
                                   [](const StageSpec& s) { return s.find("tail_current") != nullptr; });
  auto need = [&](const toml::node* n, const std::string& key) {
    if (!n) return;
    if (!spec.signal || !spec.signal->swing)
      reader.error(*n, key + " is measured on the large-signal eye at the input swing: give [signal] swing "
                             "(the differential peak-to-peak input, e.g. swing = \"20 mV\")");
    else if (!limited)
      reader.error(*n, key + " is measured on the large-signal eye of a limiting chain: give a stage its "
                             "tail_current (e.g. tail_current = \"6 mA\"), or remove " + key);
  };
  const auto* target = root.get("target");
  const auto* limits = root.get("limits");
  if (target && target->is_table()) need(target->as_table()->get("output_swing"), "[target] output_swing");
  if (limits && limits->is_table()) need(limits->as_table()->get("ddj"), "[limits] ddj");
}

// The stage's id, and the "who" prefix of its messages ("stage 'a1': ", or its index when the id
// is missing or bad).
std::string read_stage_id(Reader& reader, const toml::table& t, size_t index, StageSpec& stage) {
  std::string who = "stage " + std::to_string(index + 1) + ": ";
  if (const auto* n = t.get("id")) {
    if (!n->is_string() || n->as_string()->get().empty()) {
      reader.error(*n, who + "id must be a non-empty string, saw " + shown(*n));
    } else {
      stage.id = n->as_string()->get();
      who = "stage '" + stage.id + "': ";
    }
  } else {
    reader.error(stage.where, who + "missing id, e.g. id = \"a1\"");
  }
  return who;
}

void read_stage_kind(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  if (const auto* n = t.get("kind")) {
    stage.kind_where = position(n->source());
    if (auto kinds = read_kind(reader, *n, who)) stage.kinds = *kinds;
  } else {
    reader.error(stage.where, who + "missing kind; expected one of " + quoted_list(kind_names_and_auto()));
  }
}

// The keys every kind takes: the device, its capacitances, the node's extra load, the limit.
void read_common_elements(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  auto element = [&](std::string_view key, Dimension dim, bool strictly_positive) {
    const auto* n = t.get(key);
    if (!n) return;
    if (auto a = reader.adjustable(*n, dim, who + std::string(key), strictly_positive))
      stage.values[std::string(key)] = *a;
  };
  element("gm", Dimension::conductance, true);
  element("rd", Dimension::resistance, true);
  element("c_in", Dimension::capacitance, false);
  element("c_out", Dimension::capacitance, false);
  element("c_load", Dimension::capacitance, false);
  element("r_load", Dimension::resistance, true);
  read_limit(reader, t, who, stage);
  for (const auto& key : {"gm", "rd"})
    if (!t.get(key))
      reader.error(stage.where, who + "missing " + key + " (" + describe(stage_key_dimension(key)) +
                                    ", or \"auto\")");
}

// m or zeta: a normalised design factor within the plausible range of a peaking design.
void read_design_factor(Reader& reader, const toml::node& n, std::string_view key, const std::string& who,
                        StageSpec& stage) {
  stage.design_where = position(n.source());
  if (n.is_string() && n.as_string()->get() == "auto") {
    // The planner chooses elements, and searches the design factors itself on the way.
    reader.error(n, fmt::format("{}{} = \"auto\": {} is a design factor the file gives, not a value the planner "
                                "chooses; to let it choose the coil{}, write {} = \"auto\" and leave {} out",
                                who, key, key, key == "m" ? "" : "s", key == "m" ? "l" : "l1, l2, k and cb", key));
    stage.values[std::string(key)] = {};
    return;
  }
  auto v = reader.bounded(n, Dimension::dimensionless, who + std::string(key), true);
  // Decades past any peaking design: m = 1e12 makes an inductor of hundreds of henries,
  // zeta = 1e-9 a coupling of -1 and infinite halves; the models cannot solve either.
  const double lo = key == "m" ? kMinDesignM : kMinDesignZeta, hi = key == "m" ? kMaxDesignM : kMaxDesignZeta;
  if (v && !(*v >= lo && *v <= hi)) {
    reader.error(n, fmt::format("{}{} = {} is outside the plausible range {:g} .. {:g} of a peaking design", who,
                                key, shown(n), lo, hi));
    v.reset();
  }
  (key == "m" ? stage.m : stage.zeta) = v;
  if (!v) stage.values[std::string(key)] = {};  // remembered as seen, to report once
}

// A whole number of cells (the tia's core_stages).
void read_structure(Reader& reader, const toml::node& n, std::string_view key, const std::string& who,
                    StageSpec& stage) {
  const auto whole = n.value<int64_t>();
  const bool integral = whole && (n.is_integer() || static_cast<double>(*whole) == *n.value<double>());
  if (!integral || *whole < 1 || *whole > kMaxCoreStages) {
    reader.error(n, fmt::format("{}{} must be a whole number 1 .. {}, saw {}", who, key, kMaxCoreStages, shown(n)));
    return;
  }
  Adjustable a;
  a.where = position(n.source());
  a.value = static_cast<double>(*whole);
  stage.values[std::string(key)] = a;
}

// The coupling factor, fixed or open, strictly inside (-1, 1).
void read_coupling(Reader& reader, const toml::node& n, const std::string& who, StageSpec& stage) {
  auto a = reader.adjustable(n, Dimension::dimensionless, who + "k", false, true);
  if (!a) return;
  const bool fixed_bad = a->is_fixed() && !(a->value > -1.0 && a->value < 1.0);
  const bool range_bad = a->mode == Adjustable::Mode::range && !(a->min > -1.0 && a->max < 1.0);
  if (fixed_bad || range_bad)
    reader.error(n, who + "k must be in (-1, 1), saw " + shown(n));
  else
    stage.values["k"] = *a;
}

// Kind-specific element values and normalised designs. Several candidate kinds share keys
// (l, r_l, m), so each key is read once: otherwise a bad value is reported once per kind.
void read_kind_parameters(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  std::set<std::string_view> seen;
  for (auto kind : stage.kinds.empty() ? every_kind() : stage.kinds)
    for (const auto& p : load_kind_info(kind).parameters) {
      const auto* n = t.get(p.key);
      if (!n || !seen.insert(p.key).second) continue;
      if (p.key == "m" || p.key == "zeta") {
        read_design_factor(reader, *n, p.key, who, stage);
      } else if (p.key == "response") {
        stage.design_where = position(n->source());
        if (auto w = reader.word(*n, kResponses, who + "response")) stage.response = *w;
      } else if (p.role == ParameterRole::structure) {
        read_structure(reader, *n, p.key, who, stage);
      } else if (p.key == "k") {
        read_coupling(reader, *n, who, stage);
      } else if (auto a = reader.adjustable(*n, p.dimension, who + std::string(p.key), p.positive)) {
        stage.values[std::string(p.key)] = *a;
      }
    }
  // The failed m/zeta placeholders are not element values.
  stage.values.erase("m");
  stage.values.erase("zeta");
  check_design_conflicts(reader, stage, who);
}

void read_feeds(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  const auto* n = t.get("feeds");
  if (!n) return;
  stage.feeds_where = position(n->source());
  std::vector<std::string> feeds;
  bool ok = true;
  if (n->is_string()) {
    feeds.push_back(n->as_string()->get());
  } else if (const auto* array = n->as_array()) {
    for (const auto& e : *array) {
      if (!e.is_string()) {
        reader.error(e, who + "feeds: expected stage ids (strings), saw " + shown(e));
        ok = false;
      } else {
        feeds.push_back(e.as_string()->get());
      }
    }
  } else {
    reader.error(*n, who + "feeds: expected a stage id or a list of ids, saw " + shown(*n));
    ok = false;
  }
  if (ok) stage.feeds = feeds;
}

// count: a whole number of copies, "auto" or { min, max }, within kMaxCount.
void read_count(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  stage.count.value = 1;
  const auto* n = t.get("count");
  if (!n) return;
  stage.count.where = position(n->source());
  const auto over_limit = [&](int64_t count) {
    return std::to_string(count) + " is over the limit of " + std::to_string(kMaxCount) + " copies of one stage";
  };
  if (n->is_string() && n->as_string()->get() == "auto") {
    stage.count.mode = Adjustable::Mode::automatic;
  } else if (const auto* range = n->as_table()) {
    const auto lo = range->get("min") ? range->get("min")->value<int64_t>() : std::nullopt;
    const auto hi = range->get("max") ? range->get("max")->value<int64_t>() : std::nullopt;
    reader.check_keys(*range, {"min", "max"}, who + "count: ");
    if (!lo || !hi || *lo < 1 || *hi < *lo) {
      reader.error(*n, who + "count: a range needs integers 1 <= min <= max, e.g. { min = 3, max = 7 }");
    } else if (*hi > kMaxCount) {
      reader.error(*range->get("max"), who + "count: max " + over_limit(*hi));
    } else {
      stage.count.mode = Adjustable::Mode::range;
      stage.count.min = static_cast<double>(*lo);
      stage.count.max = static_cast<double>(*hi);
    }
  } else if (const auto large = n->as_integer(); large && large->get() > kMaxCount) {
    reader.error(*n, who + "count " + over_limit(large->get()));
  } else if (const auto v = n->as_integer(); v && v->get() >= 1) {
    stage.count.value = static_cast<double>(v->get());
  } else {
    reader.error(*n, who + "count must be a whole number of copies >= 1, \"auto\" or { min, max }, saw " + shown(*n));
  }
}

void read_tap(Reader& reader, const toml::table& t, const std::string& who, StageSpec& stage) {
  const auto* n = t.get("tap");
  if (!n) return;
  if (const auto b = n->as_boolean())
    stage.tap = b->get();
  else
    reader.error(*n, who + "tap: expected true or false, saw " + shown(*n));
}

void read_stage(Reader& reader, const toml::table& t, size_t index, ChainSpec& spec) {
  StageSpec stage;
  stage.where = position(t.source());
  const std::string who = read_stage_id(reader, t, index, stage);
  read_stage_kind(reader, t, who, stage);
  const Keys allowed = stage.kinds.empty() ? stage_keys_for(every_kind()) : stage_keys_for(stage.kinds);
  reader.check_keys(t, with_other_kinds_keys(reader, t, allowed, who, stage), who);
  read_common_elements(reader, t, who, stage);
  check_tail_range(reader, t, who, stage, spec.technology.temperature);
  read_kind_parameters(reader, t, who, stage);
  read_feeds(reader, t, who, stage);
  read_count(reader, t, who, stage);
  read_tap(reader, t, who, stage);
  spec.stages.push_back(std::move(stage));
}

// The copies of the whole chain (kMaxStageCopies) and the planner's combinations
// (kMaxCombinations), each reported at the stage that passes its limit.
void check_stage_copies(Reader& reader, const ChainSpec& spec) {
  int64_t copies = 0, combinations = 1;
  bool combinations_reported = false;
  for (const auto& s : spec.stages) {
    const int64_t counts = s.count.mode == Adjustable::Mode::range ? static_cast<int64_t>(s.count.max - s.count.min) + 1
                           : s.count.is_fixed()                     ? 1
                                                                    : 8;
    combinations *= std::max<int64_t>(1, static_cast<int64_t>(s.kinds.size())) * counts;
    if (combinations > kMaxCombinations && !combinations_reported) {
      reader.error(s.count.is_fixed() ? (s.kind_where.line > 0 ? s.kind_where : s.where) : s.count.where,
                   "stage '" + s.id + "': the candidate kinds and counts open so far make " +
                       std::to_string(combinations) + " combinations for the planner, over the limit of " +
                       std::to_string(kMaxCombinations) + "; fix some kinds or counts");
      combinations_reported = true;
    }
    combinations = std::min(combinations, kMaxCombinations + 1);  // no overflow over 256 stages
    copies += static_cast<int64_t>(s.count.mode == Adjustable::Mode::range ? s.count.max
                                   : s.count.is_fixed()                     ? s.count.value
                                                                            : 1.0);
    if (copies > kMaxStageCopies) {
      reader.error(s.count.where.line > 0 ? s.count.where : s.where,
                   "stage '" + s.id + "': the chain reaches " + std::to_string(copies) +
                       " stage copies here, over the limit of " + std::to_string(kMaxStageCopies) +
                       " (counted: every fixed count, every range's max)");
      return;
    }
  }
}

std::optional<ChainSpec> read_document(const toml::table& root, Diagnostics& diagnostics) {
  Reader reader(diagnostics);
  ChainSpec spec;
  spec.file = diagnostics.file();
  reader.check_keys(root, kTopKeys, "");
  if (const auto* t = sub_table(reader, root, "chain")) {
    reader.check_keys(*t, kChainKeys, "[chain]: ");
    if (const auto* n = t->get("name")) {
      if (n->is_string())
        spec.name = n->as_string()->get();
      else
        reader.error(*n, "[chain] name: expected a string, saw " + shown(*n));
    }
  }
  read_input(reader, root, spec);
  read_signal(reader, root, spec);
  read_target(reader, root, spec);
  read_limits(reader, root, spec);
  read_technology(reader, root, spec);
  check_signal_limits(reader, spec);
  spec.variation = read_variation(root, diagnostics);

  const auto* stages = root.get("stage");
  const auto* array = stages ? stages->as_array() : nullptr;
  if (!stages) {
    reader.error(SourcePosition{}, "no [[stage]] tables: a chain needs at least one stage");
  } else if (!array || !array->is_array_of_tables()) {
    reader.error(*stages, "'stage' must be an array of tables, written [[stage]]");
  } else if (array->size() > kMaxStageTables) {
    reader.error(*array->get(kMaxStageTables), "[[stage]] table " + std::to_string(kMaxStageTables + 1) +
                                                   " is over the limit of " + std::to_string(kMaxStageTables) +
                                                   " stages in a chain file");
  } else {
    for (size_t i = 0; i < array->size(); ++i) read_stage(reader, *array->get(i)->as_table(), i, spec);
    check_stage_copies(reader, spec);
    check_large_signal_requirements(reader, root, spec);
  }
  if (spec.name.empty()) spec.name = std::filesystem::path(spec.file).stem().string();
  if (!diagnostics.empty()) return std::nullopt;
  return spec;
}

}  // namespace

std::string_view to_string(Objective objective) {
  switch (objective) {
    case Objective::flattest: return "flattest";
    case Objective::widest: return "widest";
    case Objective::leanest: return "leanest";
    case Objective::quietest: return "quietest";
  }
  return "flattest";
}

std::optional<Objective> objective_from_name(std::string_view name) {
  for (auto o : {Objective::flattest, Objective::widest, Objective::leanest, Objective::quietest})
    if (to_string(o) == name) return o;
  return std::nullopt;
}

const Adjustable* StageSpec::find(std::string_view key) const {
  const auto it = values.find(key);
  return it == values.end() ? nullptr : &it->second;
}

const std::vector<std::string_view>& common_stage_keys() { return kStageKeys; }

std::vector<FileTable> chain_file_tables() {
  return {{"chain", kChainKeys},   {"input", kInputKeys},           {"input.photodiode", kPhotodiodeKeys},
          {"signal", kSignalKeys},
          {"target", kTargetKeys}, {"limits", kLimitsKeys},         {"technology", kTechnologyKeys},
          {"stage", stage_keys_for(every_kind())}};
}

std::optional<ChainSpec> parse_chain_spec(std::string_view text, Diagnostics& diagnostics) {
  return parse_chain_spec(text, {}, diagnostics);
}

std::optional<ChainSpec> parse_chain_spec(std::string_view text, const std::vector<Override>& overrides,
                                          Diagnostics& diagnostics) {
  if (!check_nesting(text, diagnostics)) return std::nullopt;  // TOML++ recurses per level
  try {
    toml::table root = toml::parse(text, diagnostics.file());
    apply_overrides(root, overrides, diagnostics);
    return read_document(root, diagnostics);
  } catch (const toml::parse_error& e) {
    diagnostics.error(position(e.source()), "TOML syntax: " + std::string(e.description()));
    return std::nullopt;
  }
}

std::optional<ChainSpec> read_chain_spec(const std::string& path, const std::vector<Override>& overrides,
                                         Diagnostics& diagnostics) {
  const auto text = read_chain_text(path, diagnostics);
  if (!text) return std::nullopt;
  return parse_chain_spec(*text, overrides, diagnostics);
}

std::optional<ChainSpec> read_chain_spec(const std::string& path, Diagnostics& diagnostics) {
  return read_chain_spec(path, {}, diagnostics);
}

std::vector<std::string> stage_ids(const ChainSpec& spec) {
  std::vector<std::string> ids;
  for (const auto& s : spec.stages) ids.push_back(s.id);
  return ids;
}

}  // namespace peakplan
