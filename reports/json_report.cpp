#include "reports/json_report.hpp"

#include <cmath>

#include "models/units.hpp"

namespace peakplan {
namespace {

nlohmann::json number(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

nlohmann::json roots_json(const std::vector<std::complex<double>>& roots) {
  auto list = nlohmann::json::array();
  for (const auto& r : roots) list.push_back({r.real(), r.imag()});
  return list;
}

void put_metrics(nlohmann::json& j, const ResponseSummary& r) {
  const auto& f = r.frequency;
  j["dc_gain"] = number(std::fabs(f.dc_gain));
  j["dc_gain_db"] = number(to_db(f.dc_gain));
  j["polarity"] = f.dc_gain < 0.0 ? -1 : 1;
  j["bandwidth_hz"] = number(f.bandwidth_hz);
  j["peaking_db"] = number(f.peaking_db);
  j["peak_frequency_hz"] = number(f.peak_frequency_hz);
  j["group_delay_s"] = number(f.group_delay_s);
  j["group_delay_ripple_s"] = number(f.group_delay_ripple_s);
  j["ripple_band_hz"] = number(f.ripple_band_hz);
  j["sag_db"] = number(f.sag_db);
  j["sag_frequency_hz"] = f.sag_db < 0.0 ? number(f.sag_frequency_hz) : nlohmann::json(nullptr);
  j["overshoot_pct"] = number(r.step.overshoot_pct);
  j["rise_time_s"] = number(r.step.rise_time_s);
  j["settling_time_s"] = number(r.step.settling_time_s);
  j["poles_rad_s"] = roots_json(r.poles);
  j["zeros_rad_s"] = roots_json(r.zeros);
}

nlohmann::json opening_json(const EyeOpening& e) {
  return {{"height", number(e.height)}, {"width_ui", number(e.width_ui)},
          {"open_span_ui", number(e.open_span_ui)}, {"best_offset_s", number(e.best_offset_s)}};
}

nlohmann::json eye_json(const EyeSummary& eye, const Signal& signal) {
  const auto& pda = eye.estimate.pda;
  const auto& prbs = eye.estimate.prbs;
  nlohmann::json j{{"modulation", signal.modulation == Modulation::pam4 ? "pam4" : "nrz"},
                   {"bit_rate", signal.bit_rate},
                   {"symbol_rate", signal.symbol_rate()},
                   {"pattern", std::string(to_string(signal.pattern))},
                   {"pda_height", number(pda.height)},
                   {"sample_time_s", number(pda.sample_time_s)},
                   {"prbs_height", number(prbs.eye.height)},
                   {"prbs_width_ui", number(prbs.eye.width_ui)},
                   {"prbs_width_centred_ui", number(prbs.width_centred_ui)},
                   {"open_span_ui", number(prbs.eye.open_span_ui)},
                   {"prbs_sample_time_s", number(prbs.sample_time_s)},
                   {"ddj_pp_s", number(prbs.ddj_pp_s)},
                   {"symbols_overlaid", prbs.symbols_overlaid},
                   {"pattern_truncated", prbs.pattern_truncated}};
  if (signal.modulation == Modulation::pam4) {
    j["eyes"] = nlohmann::json::array();
    for (const auto& e : prbs.eyes) j["eyes"].push_back(opening_json(e));
    j["worst_eye"] = prbs.worst_eye;
  }
  if (eye.statistical) {
    const auto& st = *eye.statistical;
    j["q"] = number(st.q);
    j["ber"] = number(st.ber);
    j["target_ber"] = st.target_ber;
    j["height_at_ber"] = number(st.height_at_ber);
    j["height_at_ber_v"] = number(st.height_at_ber_v);
    j["width_at_ber_ui"] = number(st.width_at_ber_ui);
  }
  return j;
}

nlohmann::json noise_json(const NoiseSummary& n) {
  return {{"output_rms_v", number(n.output_rms_v)},
          {"differential_rms_v", number(n.differential_rms_v)},
          {"receiver_bandwidth_hz", n.receiver_bandwidth_hz > 0.0 ? number(n.receiver_bandwidth_hz) : nlohmann::json(nullptr)},
          {"noise_bandwidth_hz", number(n.noise_bandwidth_hz)},
          {"input_density_v_rthz", number(n.equivalent_input_density)}};
}

// docs/physics.md (large signals): the clipped waveform's eye, in differential volts for the [signal]
// swing taken as the differential peak-to-peak input.
nlohmann::json large_signal_json(const Chain& chain, const LargeSignalEye& ls) {
  auto list = [](const std::vector<double>& xs) {
    auto a = nlohmann::json::array();
    for (double x : xs) a.push_back(number(x));
    return a;
  };
  nlohmann::json j{{"input_swing_v", number(ls.input_swing_v)},
                   {"height_v", number(ls.height_v)},
                   {"width_ui", number(ls.width_ui)},
                   {"ddj_pp_s", number(ls.ddj_pp_s)},
                   {"levels_v", list(ls.levels_v)},
                   {"delay_s", number(ls.delay_s)},
                   {"linear_delay_s", number(ls.linear_delay_s)},
                   {"delay_shift_s", number(ls.delay_shift_s)},
                   {"step_s", number(ls.step_s)},
                   {"steps_per_ui", ls.steps_per_ui},
                   {"step_change", number(ls.step_change)},
                   {"step_converged", ls.converged}};
  if (ls.modulation == Modulation::pam4) {
    j["eye_heights_v"] = list(ls.eye_heights_v);
    j["level_compression"] = number(ls.level_compression);
  }
  auto compression = nlohmann::json::array();
  for (const auto& c : ls.compression)
    compression.push_back({{"stage", chain.stages[static_cast<size_t>(c.stage)].id}, {"compression_input_v", number(c.input_v)}});
  j["stages"] = std::move(compression);
  return j;
}

// models/receiver.hpp: a photocurrent-driven chain's transimpedance, input noise and sensitivity.
nlohmann::json receiver_json(const ReceiverSummary& r, const Chain& chain, const std::optional<Signal>& signal) {
  std::vector<double> f, density;
  for (const auto& p : r.spectrum) {
    f.push_back(p.frequency_hz);
    density.push_back(p.input_density);
  }
  nlohmann::json j{{"transimpedance_ohm", number(r.transimpedance_ohm)},
                   {"transimpedance_dbohm", number(to_db(r.transimpedance_ohm))},
                   {"input_noise_rms_a", number(r.input_rms_a)},
                   {"input_noise_density_avg_a_rthz", number(r.input_density_avg)},
                   {"noise_bandwidth_hz", number(r.noise_bandwidth_hz)},
                   {"input_noise_spectrum", {{"frequency_hz", f}, {"density_a_rthz", density}}},
                   {"sensitivity", nullptr}};
  if (r.sensitivity && signal) {
    const auto& s = *r.sensitivity;
    j["sensitivity"] = {{"target_ber", signal->target_ber},
                        {"q", number(s.q)},
                        {"responsivity_a_w", chain.photodiode ? number(chain.photodiode->responsivity) : nlohmann::json(nullptr)},
                        {"extinction_ratio", number(s.extinction_ratio)},
                        {"oma_w", number(s.oma_w)},
                        {"oma_dbm", number(to_dbm(s.oma_w))},
                        {"average_w", number(s.average_w)},
                        {"average_dbm", number(to_dbm(s.average_w))}};
  }
  return j;
}

}  // namespace

nlohmann::json stage_values_json(const ChainStage& stage) {
  const auto& c = stage.circuit;
  nlohmann::json v{{"gm", c.gm}, {"rd", c.rd}, {"c_in", stage.c_in}, {"c_out", c.c_out},
                   {"c_load", stage.c_load}, {"c_node", c.c_node}, {"c_output_node", output_node_capacitance(c)}, {"r_load", number(c.r_load)}};
  if (stage.limit) {
    v["tail_current"] = stage.limit->tail_current;
    v["pair"] = std::string(to_string(stage.limit->pair));
  }
  for (const auto& p : load_kind_info(c.kind).parameters)
    if (p.field && p.role != ParameterRole::alias) v[std::string(p.key)] = c.*(p.field);
  return v;
}

nlohmann::json analysis_json(const Chain& chain, const ChainAnalysis& analysis, const JsonOptions& options) {
  nlohmann::json doc;
  doc["chain"] = chain.name;
  // What the chain's gains are per: volts in (V/V) or a photocurrent (ohm, and dBohm in *_db).
  doc["input"] = {{"kind", chain.current_input() ? "current" : "voltage"},
                  {"gain_unit", chain.current_input() ? "ohm" : "V/V"},
                  {"photodiode", nullptr}};
  if (chain.photodiode)
    doc["input"]["photodiode"] = {{"capacitance_f", chain.photodiode->capacitance},
                                  {"responsivity_a_w", chain.photodiode->responsivity},
                                  {"dark_current_a", chain.photodiode->dark_current}};
  doc["outputs"] = nlohmann::json::array();
  for (const auto& out : analysis.outputs) {
    nlohmann::json o;
    o["node"] = chain.stages[static_cast<size_t>(out.stage)].id;
    put_metrics(o, out.response);
    if (out.eye && analysis.signal) {
      o["eye"] = eye_json(*out.eye, *analysis.signal);
      o["noise"] = noise_json(out.eye->noise);
    }
    if (out.large_signal) o["large_signal"] = large_signal_json(chain, *out.large_signal);
    if (out.receiver) o["receiver"] = receiver_json(*out.receiver, chain, analysis.signal);
    if (options.include_response && !out.response.sampled.frequency_hz.empty()) {
      o["response"] = {{"frequency_hz", out.response.sampled.frequency_hz},
                       {"magnitude_db", out.response.sampled.magnitude_db()},
                       {"group_delay_s", out.response.sampled.group_delay_s}};
    }
    doc["outputs"].push_back(std::move(o));
  }
  doc["stages"] = nlohmann::json::array();
  for (const auto& s : analysis.stages) {
    const auto& stage = chain.stages[static_cast<size_t>(s.stage)];
    nlohmann::json j;
    j["id"] = stage.id;
    j["kind"] = std::string(to_string(stage.circuit.kind));
    j["driver"] = stage.driver < 0 ? nlohmann::json("input")
                                   : nlohmann::json(chain.stages[static_cast<size_t>(stage.driver)].id);
    put_metrics(j, s.alone);
    j["values"] = stage_values_json(stage);
    const auto& node = s.cumulative.frequency;
    j["cumulative"] = {{"dc_gain_db", number(to_db(node.dc_gain))},
                       {"bandwidth_hz", number(node.bandwidth_hz)},
                       {"peaking_db", number(node.peaking_db)},
                       {"group_delay_s", number(node.group_delay_s)}};
    if (s.design_check) {
      const auto& d = *s.design_check;
      j["design_check"] = {{"design", d.label},
                           {"ideal_bandwidth_hz", number(d.ideal_bandwidth_hz)},
                           {"ideal_peaking_db", number(d.ideal_peaking_db)},
                           {"ideal_overshoot_pct", number(d.ideal_overshoot_pct)},
                           {"bandwidth_departure", number(d.bandwidth_departure)},
                           {"peaking_departure_db", number(d.peaking_departure_db)},
                           {"input_impedance_error", number(d.input_impedance_error)}};
    }
    doc["stages"].push_back(std::move(j));
  }
  return doc;
}

}  // namespace peakplan
