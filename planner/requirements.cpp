#include "planner/requirements.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>
#include <string_view>

#include "models/units.hpp"

namespace peakplan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double finite_or_zero(double x) { return std::isfinite(x) ? x : 0.0; }
double or_nan(const std::optional<double>& x) { return x ? *x : kNaN; }

// How close to its limit a value still meets it: relative to the limit, or absolute in the unit.
struct Slack {
  bool relative = false;
  double amount = 0.0;
};

struct Requirement {
  std::string_view name, unit;
  bool minimum;
  Slack slack;
  // The required value in the check's unit, or none when the file does not ask for it.
  std::optional<double> (*limit)(const ChainSpec&);
  // The measured value in the same unit; NaN when it was not measured.
  double (*value)(const ChainSpec&, const Measured&);
  // The search's constraint from (value, limit): <= 0 when met, a little inside the limit.
  double (*violation)(double value, double limit);
  bool needs_measurement = false;  // the check appears only when the value was measured
};

std::optional<double> overshoot_pct(const ChainSpec& s) {
  return s.limits.overshoot ? std::optional(100.0 * *s.limits.overshoot) : std::nullopt;
}
// 3 dB or more allows any shape the first-crossing bandwidth allows: no check.
std::optional<double> sag_limit(const ChainSpec& s) {
  return s.limits.sag_db && *s.limits.sag_db < 3.0 ? s.limits.sag_db : std::nullopt;
}
std::optional<double> current_budget(const ChainSpec& s) {
  return s.technology.current_budget && s.technology.gm_over_id ? s.technology.current_budget : std::nullopt;
}
std::optional<double> sensitivity_dbm(const ChainSpec& s) {
  return s.target.sensitivity_w ? std::optional(to_dbm(*s.target.sensitivity_w)) : std::nullopt;
}

// In the search's constraint order (the order COBYLA has always been given them).
const std::array kRequirements{
    Requirement{"gain", "dB", true, {true, 1e-9}, [](const ChainSpec& s) { return s.target.gain_db; },
                [](const ChainSpec&, const Measured& m) { return to_db(m.f.dc_gain); },
                [](double v, double l) { return (l + 1e-4 - v) / 3.0; }},
    Requirement{"bandwidth", "Hz", true, {true, 1e-9}, [](const ChainSpec& s) { return s.target.bandwidth; },
                [](const ChainSpec&, const Measured& m) { return m.f.bandwidth_hz; },
                [](double v, double l) { return 1.0 + 2e-5 - finite_or_zero(v) / l; }},
    Requirement{"gain_bandwidth", "Hz", true, {true, 1e-9}, [](const ChainSpec& s) { return s.target.gain_bandwidth; },
                [](const ChainSpec&, const Measured& m) { return std::fabs(m.f.dc_gain) * m.f.bandwidth_hz; },
                [](double v, double l) { return 1.0 + 2e-5 - finite_or_zero(v) / l; }},
    Requirement{"overshoot", "%", false, {false, 1e-4}, overshoot_pct,
                [](const ChainSpec&, const Measured& m) { return m.t.overshoot_pct; },
                [](double v, double l) { return (v - l + 5e-3) / 5.0; }},
    // A 0 dB peaking limit is aimed at exactly: peaking is never below 0.
    Requirement{"peaking", "dB", false, {false, 1e-4}, [](const ChainSpec& s) { return s.limits.peaking_db; },
                [](const ChainSpec&, const Measured& m) { return m.f.peaking_db; },
                [](double v, double l) { return v - (l - std::min(1e-4, 0.1 * l)); }},
    Requirement{"group_delay_ripple", "s", false, {true, 1e-9},
                [](const ChainSpec& s) { return s.limits.group_delay_ripple; },
                [](const ChainSpec&, const Measured& m) { return m.f.group_delay_ripple_s; },
                [](double v, double l) { return (v - l * (1.0 - 2e-3)) / std::max(l, 1e-12); }},
    // sag_db is the dip's level against DC (<= 0); its depth must stay within the limit. A plan
    // always has one (plan_chain gives the default): a response that dips to -2.99 dB and
    // recovers meets the first-crossing bandwidth but is no amplifier.
    Requirement{"sag", "dB", false, {false, 1e-4}, sag_limit,
                [](const ChainSpec&, const Measured& m) { return 0.0 - m.f.sag_db; },
                [](double v, double l) { return v - (l - 1e-3); }},
    Requirement{"min_stage_gain", "dB", true, {false, 1e-4}, [](const ChainSpec& s) { return s.limits.min_stage_gain_db; },
                [](const ChainSpec&, const Measured& m) { return or_nan(m.min_stage_gain_db); },
                // Not measured: no planned stage on the main path, nothing to hold.
                [](double v, double l) { return std::isnan(v) ? -1.0 : (l + 1e-4 - v) / 3.0; }, true},
    Requirement{"current", "A", false, {true, 1e-9}, current_budget,
                [](const ChainSpec& s, const Measured& m) {
                  return m.total_gm ? *m.total_gm / *s.technology.gm_over_id : kNaN;
                },
                [](double v, double l) { return std::isnan(v) ? 10.0 : v / l - 1.0; }, true},
    Requirement{"transimpedance", "ohm", true, {true, 1e-9}, [](const ChainSpec& s) { return s.target.transimpedance; },
                [](const ChainSpec&, const Measured& m) { return std::fabs(m.f.dc_gain); },
                [](double v, double l) { return 1.0 + 2e-5 - v / l; }},
    // In dB of optical power, aimed 1e-3 dB inside.
    Requirement{"sensitivity", "dBm", false, {false, 1e-4}, sensitivity_dbm,
                [](const ChainSpec& s, const Measured& m) {
                  const double need = m.input_noise_rms_a ? sensitivity_power(s, *m.input_noise_rms_a) : kNaN;
                  return std::isfinite(need) ? to_dbm(need) : std::numeric_limits<double>::infinity();
                },
                [](double v, double l) { return std::isfinite(v) ? v - l + 1e-3 : 10.0; }, true},
    // On the large-signal eye (docs/physics.md (large signals)). The search measures a shorter,
    // coarser eye than the final check (plan_large_signal_eye), so it aims 1 % inside each, ten
    // times the 0.1 % the final eye's step is refined to; what a pattern longer than PRBS7 adds
    // is left to the final check and its repair. On the shipped example the two eyes agree to
    // 1e-12 (the step settles at 16 per UI, and PRBS15's worst case is PRBS7's).
    Requirement{"output_swing", "V", true, {true, 1e-9}, [](const ChainSpec& s) { return s.target.output_swing; },
                [](const ChainSpec&, const Measured& m) { return or_nan(m.eye_height_v); },
                [](double v, double l) { return std::isfinite(v) ? 1.01 - v / l : 10.0; }, true},
    Requirement{"ddj", "s", false, {true, 1e-9}, [](const ChainSpec& s) { return s.limits.ddj; },
                [](const ChainSpec&, const Measured& m) { return or_nan(m.ddj_pp_s); },
                [](double v, double l) { return std::isfinite(v) ? (v - 0.99 * l) / std::max(l, 1e-13) : 10.0; }, true},
    // Aimed 0.1 % inside.
    Requirement{"noise_rms", "V", false, {true, 1e-9}, [](const ChainSpec& s) { return s.limits.noise_rms; },
                [](const ChainSpec&, const Measured& m) { return or_nan(m.output_noise_rms_v); },
                [](double v, double l) { return std::isnan(v) ? 10.0 : v / l - 1.0 + 1e-3; }, true},
    // In decades (a BER spans many), a hundredth of one inside; three decades over is a large
    // miss. A BER of 0 (no noise) is far inside.
    Requirement{"ber", "", false, {true, 1e-9}, [](const ChainSpec& s) { return s.limits.ber; },
                [](const ChainSpec&, const Measured& m) { return or_nan(m.ber); },
                [](double v, double l) {
                  return std::isnan(v) ? 10.0 : (std::log10(std::max(v, 1e-300)) - std::log10(l) + 0.01) / 3.0;
                }, true},
};

bool measured(const Requirement& r, const Measured& m) {
  if (!r.needs_measurement) return true;
  if (r.name == "min_stage_gain") return m.min_stage_gain_db.has_value();
  if (r.name == "current") return m.total_gm.has_value();
  if (r.name == "output_swing") return m.eye_height_v.has_value();
  if (r.name == "ddj") return m.ddj_pp_s.has_value();
  if (r.name == "noise_rms") return m.output_noise_rms_v.has_value();
  if (r.name == "ber") return m.ber.has_value();
  return m.input_noise_rms_a.has_value();
}

}  // namespace

std::vector<PlanCheck> requirement_checks(const ChainSpec& spec, const Measured& m) {
  std::vector<PlanCheck> checks;
  for (const auto& r : kRequirements) {
    const auto limit = r.limit(spec);
    if (!limit || !measured(r, m)) continue;
    double v = r.value(spec, m);
    if (r.minimum && !std::isfinite(v)) v = 0.0;  // a bandwidth not found is none
    const double slack = r.slack.relative ? r.slack.amount * std::fabs(*limit) : r.slack.amount;
    const bool met = r.minimum ? v >= *limit - slack : v <= *limit + slack;
    checks.push_back({std::string(r.name), std::string(r.unit), v, *limit, r.minimum,
                      r.minimum ? v - *limit : *limit - v, met});
  }
  return checks;
}

std::vector<double> requirement_violations(const ChainSpec& spec, const Measured& m) {
  std::vector<double> g;
  for (const auto& r : kRequirements)
    if (const auto limit = r.limit(spec)) g.push_back(r.violation(r.value(spec, m), *limit));
  return g;
}

}  // namespace peakplan

namespace peakplan {

std::vector<PlanCheck> analysis_checks(const ChainSpec& spec, const OutputSummary& main, double total_gm) {
  Measured m{main.response.frequency, main.response.step, total_gm,
             main.receiver ? std::optional(main.receiver->input_rms_a) : std::nullopt, std::nullopt};
  if (const auto& eye = main.eye) {
    m.output_noise_rms_v = eye->noise.differential_rms_v;
    if (eye->statistical) m.ber = eye->statistical->ber;
  }
  if (const auto& ls = main.large_signal) {
    m.eye_height_v = ls->height_v;
    m.ddj_pp_s = ls->ddj_pp_s;
  }
  return requirement_checks(spec, m);
}

}  // namespace peakplan
