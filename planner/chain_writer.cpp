// planned_chain_toml: the planned chain as a complete chain file.
#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"
#include "planner/planner.hpp"
#include "planner/input/toml_text.hpp"
#include "planner/input/variation_file.hpp"

namespace peakplan {
namespace {

// Full precision so that analyzing the written file reproduces the plan exactly, with the
// engineering form alongside for the reader.
std::string number_line(std::string_view key, double value, std::string_view unit) {
  return fmt::format("{} = {}{}\n", key, toml_number(value), unit.empty() ? "" : fmt::format("    # {}", format_si(value, unit, 4)));
}

std::string chain_table(const ChainSpec& spec) { return "[chain]\nname = " + toml_basic_string(spec.name) + "\n"; }

std::string input_table(const ChainSpec& spec) {
  std::string out = "\n[input]\n" + number_line("r_source", spec.r_source, "ohm");
  if (spec.input_noise_density) out += number_line("noise_density", *spec.input_noise_density, "V/rtHz");
  if (const auto& pd = spec.photodiode) {
    out += "\n[input.photodiode]\n" + number_line("capacitance", pd->capacitance, "F") +
           number_line("responsivity", pd->responsivity, "A/W") + number_line("dark_current", pd->dark_current, "A");
    if (pd->wavelength) out += number_line("wavelength", *pd->wavelength, "m");
  }
  return out;
}

std::string signal_table(const SignalSpec& s) {
  std::string out = "\n[signal]\n" + number_line("bit_rate", s.bit_rate, "b/s");
  out += "modulation = " + toml_basic_string(std::string(to_string(s.modulation))) + "\npattern = " + toml_basic_string(s.pattern) + "\n";
  if (s.input_rise) out += number_line("input_rise", *s.input_rise, "s");
  if (s.swing) out += number_line("swing", *s.swing, "V");
  out += "target_ber = " + toml_number(s.target_ber) + "\n";
  if (s.extinction_ratio_db) out += "extinction_ratio = " + toml_decibels(*s.extinction_ratio_db) + "\n";
  return out;
}

// Empty when the file set no target: the objective alone does not make a [target] table.
std::string target_table(const TargetSpec& t) {
  if (!(t.gain_db || t.bandwidth || t.gain_bandwidth || t.transimpedance || t.sensitivity_w || t.output_swing)) return "";
  std::string out = "\n[target]\n";
  if (t.gain_db) out += "gain = " + toml_decibels(*t.gain_db) + "\n";
  if (t.transimpedance) out += number_line("transimpedance", *t.transimpedance, "ohm");
  if (t.sensitivity_w) out += number_line("sensitivity", *t.sensitivity_w, "W");
  if (t.bandwidth) out += number_line("bandwidth", *t.bandwidth, "Hz");
  if (t.gain_bandwidth) out += number_line("gain_bandwidth", *t.gain_bandwidth, "Hz");
  if (t.output_swing) out += number_line("output_swing", *t.output_swing, "V");
  out += "objective = " + toml_basic_string(std::string(to_string(t.objective))) + "\n";
  if (t.plan_for != "nominal") out += "plan_for = " + toml_basic_string(t.plan_for) + "\n";
  if (t.yield) out += "yield = " + toml_percent(*t.yield) + "\n";
  return out;
}

// Empty when no limit is set.
std::string limits_table(const LimitsSpec& l) {
  if (!(l.overshoot || l.peaking_db || l.group_delay_ripple || l.ripple_band || l.sag_db || l.min_stage_gain_db ||
        l.ddj || l.ber || l.noise_rms))
    return "";
  std::string out = "\n[limits]\n";
  if (l.overshoot) out += "overshoot = " + toml_percent(*l.overshoot) + "\n";
  if (l.peaking_db) out += "peaking = " + toml_decibels(*l.peaking_db) + "\n";
  if (l.group_delay_ripple) out += number_line("group_delay_ripple", *l.group_delay_ripple, "s");
  if (l.ripple_band) out += number_line("ripple_band", *l.ripple_band, "Hz");
  if (l.sag_db) out += "sag = " + toml_decibels(*l.sag_db) + "\n";
  if (l.min_stage_gain_db) out += "min_stage_gain = " + toml_decibels(*l.min_stage_gain_db) + "\n";
  if (l.ddj) out += number_line("ddj", *l.ddj, "s");
  if (l.ber) out += "ber = " + toml_number(*l.ber) + "\n";
  if (l.noise_rms) out += number_line("noise_rms", *l.noise_rms, "V");
  return out;
}

// Always written: gamma and temperature have defaults the reader should see.
std::string technology_table(const TechnologySpec& tech) {
  std::string out = "\n[technology]\n";
  auto opt = [&](std::string_view key, const std::optional<double>& v, std::string_view unit) {
    if (v) out += number_line(key, *v, unit);
  };
  opt("ft", tech.ft, "Hz");
  opt("c_out_ratio", tech.c_out_ratio, "");
  opt("inductor_q", tech.inductor_q, "");
  opt("max_inductance", tech.max_inductance, "H");
  opt("min_cb", tech.min_cb, "F");
  opt("min_gm", tech.min_gm, "S");
  opt("max_gm", tech.max_gm, "S");
  opt("coil_c_per_nh", tech.coil_c_per_nh, "F");
  opt("gm_over_id", tech.gm_over_id, "");
  opt("current_budget", tech.current_budget, "");
  if (tech.k_min && tech.k_max) out += "k_range = [" + toml_number(*tech.k_min) + ", " + toml_number(*tech.k_max) + "]\n";
  out += "gamma = " + toml_number(tech.gamma) + "\ntemperature = " + toml_number(tech.temperature) + "\n";
  return out;
}

// One [[stage]] table with the planner's kind and count; its values come from the first copy
// of the table in the planned chain (every copy of a table is the same circuit).
std::string stage_table(const ChainSpec& spec, const Plan& plan, const PlannedStage& planned) {
  const auto& s = spec.stages[planned.table];
  size_t first = 0;
  while (plan.graph[first].table != planned.table) ++first;
  const auto& stage = plan.chain.stages[first];
  const auto& c = stage.circuit;
  std::string out = "\n[[stage]]\nid = " + toml_basic_string(s.id) + "\nkind = " + toml_basic_string(to_string(planned.kind)) + "\n";
  if (planned.count != 1) out += fmt::format("count = {}\n", planned.count);
  out += number_line("gm", c.gm, "S") + number_line("rd", c.rd, "ohm");
  out += number_line("c_in", stage.c_in, "F") + number_line("c_out", c.c_out, "F");
  if (stage.c_load > 0.0) out += number_line("c_load", stage.c_load, "F");
  if (std::isfinite(c.r_load)) out += number_line("r_load", c.r_load, "ohm");
  if (stage.limit)
    out += number_line("tail_current", stage.limit->tail_current, "A") +
           "pair = " + toml_basic_string(to_string(stage.limit->pair)) + "\n";
  // The kind's own element values; aliases and design factors are already resolved into them.
  for (const auto& p : load_kind_info(planned.kind).parameters) {
    if (!p.field || p.role == ParameterRole::alias || p.role == ParameterRole::design) continue;
    const double v = c.*(p.field);
    if (p.omit_when_zero && !(v > 0.0)) continue;
    if (p.role == ParameterRole::structure) {
      out += fmt::format("{} = {}\n", p.key, std::lround(v));
      continue;
    }
    out += p.dimension == Dimension::dimensionless ? std::string(p.key) + " = " + toml_number(v) + "\n"
                                                   : number_line(p.key, v, unit_symbol(p.dimension));
  }
  if (s.feeds) {
    out += "feeds = [";
    for (size_t i = 0; i < s.feeds->size(); ++i) out += (i ? ", " : "") + toml_basic_string((*s.feeds)[i]);
    out += "]\n";
  }
  if (s.tap) out += "tap = true\n";
  return out;
}

}  // namespace

std::string planned_chain_toml(const ChainSpec& spec, const Plan& plan) {
  std::string out = fmt::format(
      "# Planned by peakplan from {}: {}.\n# Every value is written out; analyzing this file reproduces the plan.\n\n",
      spec.file, plan.termination == Plan::Termination::met ? "every target and limit met" : "NOT MET (" + plan.message + ")");
  out += chain_table(spec) + input_table(spec);
  if (spec.signal) out += signal_table(*spec.signal);
  out += target_table(spec.target) + limits_table(spec.limits) + technology_table(spec.technology);
  if (spec.variation) out += variation_toml(*spec.variation);
  for (const auto& planned : plan.stages) out += stage_table(spec, plan, planned);
  return out;
}

}  // namespace peakplan
