#include "reports/sweep_report.hpp"

#include <algorithm>
#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

nlohmann::json number(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

std::string status_name(Plan::Termination t) { return t == Plan::Termination::met ? "met" : "not_met"; }

std::string name_of(const std::string& stage, const std::string& key) { return stage + "." + key; }

// A value of a key in the unit the chain file would write it in.
std::string shown(double x, const std::string& unit, bool whole = false) {
  if (!std::isfinite(x)) return "-";
  if (whole) return fmt::format("{}", static_cast<long long>(std::llround(x)));
  if (unit == "%") return fmt::format("{:.2f} %", 100.0 * x);
  if (unit == "dB") return fmt::format("{:.2f} dB", x);
  if (unit.empty()) return fmt::format("{:.4g}", x);
  return format_si(x, unit, 4);
}

std::string fixed(double x, const char* pattern) { return std::isfinite(x) ? fmt::format(fmt::runtime(pattern), x) : "-"; }

std::string csv_number(double x) { return std::isfinite(x) ? fmt::format("{:.10g}", x) : ""; }

std::string chosen_text(const ChosenValue& v, const OpenValue& o) {
  if (!v.text.empty()) return v.text;
  return shown(v.number, o.unit, o.key == "count");
}

std::string heading(const SweepResult& s) {
  std::string out = fmt::format("sweep of {} over {} points{}, chain: {}\n", name_of(s.target, s.key), s.rows.size(),
                                s.log ? " (log spacing)" : "", s.chain_name);
  if (s.has_large_signal)
    out += "clipped: the large-signal eye of the main output, differential volts; the swing is the differential "
           "peak-to-peak input\n";
  if (s.has_variation)
    out += fmt::format("with [variation]: each metric also at its worst of the {} corners, and the Monte Carlo yield of "
                       "every target and limit together (as analyze reports them)\n",
                       s.rows.empty() || !s.rows.front().variation ? 0 : s.rows.front().variation->corners);
  if (s.replan)
    out += "each point re-planned with the varied value fixed\n";
  else if (s.held_plan)
    out += fmt::format("the file leaves values open: planned once ({}), every other value held at that plan\n",
                       s.held_plan == Plan::Termination::met ? "every target and limit met" : "NOT MET");
  else
    out += "every other value as written\n";
  return out;
}

}  // namespace

std::string sweep_text(const SweepResult& s) {
  std::string out = heading(s) + "\n" + std::string(kPlanningCaution) + "\n";
  const bool whole = s.key == "count";
  const size_t first = std::max<size_t>(12, name_of(s.target, s.key).size());
  std::vector<size_t> widths;
  for (const auto& o : s.open) widths.push_back(std::max<size_t>(10, name_of(o.stage, o.key).size()));
  std::string head = fmt::format("  {:>{}} {:>8} {:>10} {:>8} {:>10} {:>9}", name_of(s.target, s.key), first, "gain dB",
                                 "bandwidth", "peak dB", "overshoot", "ripple");
  if (s.has_signal) head += fmt::format(" {:>7}", "eye h");
  if (s.has_large_signal)
    head += fmt::format(" {:>10} {:>9} {:>9} {:>11}", "clipped h", "width", "DDJ pp", "delay shift");
  if (s.has_receiver) head += fmt::format(" {:>12} {:>12}", "in noise rms", "sensitivity");
  if (s.has_variation) {
    head += fmt::format("  {:>10} {:>10} {:>10} {:>10}", "worst gain", "worst bw", "worst os", "worst rip");
    if (s.has_signal) head += fmt::format(" {:>9}", "worst eye");
    head += fmt::format(" {:>8}", "yield");
  }
  if (s.replan) {
    head += fmt::format("  {:<8}", "status");
    for (size_t i = 0; i < s.open.size(); ++i) head += fmt::format(" {:>{}}", name_of(s.open[i].stage, s.open[i].key), widths[i]);
  }
  out += head + "\n";
  for (const auto& r : s.rows) {
    std::string line = fmt::format("  {:>{}} {:>8} {:>10} {:>8} {:>10} {:>9}",
                                   r.word.empty() ? shown(r.value, s.unit, whole) : r.word, first,
                                   fixed(r.gain_db, "{:.2f}"), shown(r.bandwidth_hz, "Hz"), fixed(r.peaking_db, "{:.2f}"),
                                   fixed(r.overshoot_pct, "{:.2f} %"), shown(r.group_delay_ripple_s, "s"));
    if (s.has_signal) line += fmt::format(" {:>7}", r.eye_height ? fixed(*r.eye_height, "{:.3f}") : "-");
    if (s.has_large_signal) {
      if (const auto& ls = r.large_signal)
        line += fmt::format(" {:>10} {:>6.3f} UI {:>9} {:>11}", shown(ls->height_v, "V"), ls->width_ui,
                            shown(ls->ddj_pp_s, "s"), shown(ls->delay_shift_s, "s"));
      else
        line += fmt::format(" {:>10} {:>9} {:>9} {:>11}", "-", "-", "-", "-");
    }
    if (s.has_receiver) {
      const auto& rx = r.receiver;
      line += fmt::format(" {:>12} {:>12}", rx ? shown(rx->input_noise_rms_a, "A") : "-",
                          rx && rx->sensitivity_dbm ? fmt::format("{:.2f} dBm", *rx->sensitivity_dbm) : "-");
    }
    if (const auto& v = r.variation) {
      line += fmt::format("  {:>10} {:>10} {:>10} {:>10}", fixed(v->gain_db, "{:.2f} dB"), shown(v->bandwidth_hz, "Hz"),
                          fixed(v->overshoot_pct, "{:.2f} %"), shown(v->group_delay_ripple_s, "s"));
      if (s.has_signal) line += fmt::format(" {:>9}", v->eye_height ? fixed(*v->eye_height, "{:.3f}") : "-");
      line += fmt::format(" {:>8}", fixed(100.0 * v->overall_yield, "{:.2f} %"));
    }
    if (s.replan) {
      line += fmt::format("  {:<8}", r.status ? status_name(*r.status) : "-");
      for (size_t i = 0; i < s.open.size(); ++i)
        line += fmt::format(" {:>{}}", i < r.chosen.size() ? chosen_text(r.chosen[i], s.open[i]) : "-", widths[i]);
    }
    out += line + "\n";
  }
  return out;
}

std::string sweep_csv(const SweepResult& s) {
  std::string out = name_of(s.target, s.key) + ",dc_gain_db,bandwidth_hz,peaking_db,overshoot_pct,group_delay_ripple_s";
  if (s.has_signal) out += ",prbs_height";
  if (s.has_large_signal) out += ",large_signal_height_v,large_signal_width_ui,large_signal_ddj_pp_s,delay_shift_s";
  if (s.has_receiver) out += ",input_noise_rms_a,sensitivity_dbm";
  if (s.has_variation) {
    out += ",worst_dc_gain_db,worst_bandwidth_hz,worst_overshoot_pct,worst_group_delay_ripple_s";
    if (s.has_signal) out += ",worst_prbs_height";
    out += ",overall_yield,yield_ci95_lo,yield_ci95_hi";
  }
  if (s.replan) {
    out += ",status";
    for (const auto& o : s.open) out += "," + name_of(o.stage, o.key);
  }
  out += "\n";
  for (const auto& r : s.rows) {
    out += fmt::format("{},{},{},{},{},{}", r.word.empty() ? csv_number(r.value) : r.word, csv_number(r.gain_db), csv_number(r.bandwidth_hz),
                       csv_number(r.peaking_db), csv_number(r.overshoot_pct), csv_number(r.group_delay_ripple_s));
    if (s.has_signal) out += "," + (r.eye_height ? csv_number(*r.eye_height) : std::string());
    if (s.has_large_signal) {
      if (const auto& ls = r.large_signal)
        out += fmt::format(",{},{},{},{}", csv_number(ls->height_v), csv_number(ls->width_ui), csv_number(ls->ddj_pp_s),
                           csv_number(ls->delay_shift_s));
      else
        out += ",,,,";
    }
    if (s.has_receiver) {
      const auto& rx = r.receiver;
      out += "," + (rx ? csv_number(rx->input_noise_rms_a) : std::string()) + "," +
             (rx && rx->sensitivity_dbm ? csv_number(*rx->sensitivity_dbm) : std::string());
    }
    if (const auto& v = r.variation) {
      out += fmt::format(",{},{},{},{}", csv_number(v->gain_db), csv_number(v->bandwidth_hz), csv_number(v->overshoot_pct),
                         csv_number(v->group_delay_ripple_s));
      if (s.has_signal) out += "," + (v->eye_height ? csv_number(*v->eye_height) : std::string());
      out += fmt::format(",{},{},{}", csv_number(v->overall_yield), csv_number(v->yield_lo), csv_number(v->yield_hi));
    }
    if (s.replan) {
      out += "," + (r.status ? status_name(*r.status) : std::string());
      for (const auto& v : r.chosen) out += "," + (v.text.empty() ? csv_number(v.number) : v.text);
    }
    out += "\n";
  }
  return out;
}

nlohmann::json sweep_json(const SweepResult& s) {
  nlohmann::json doc;
  doc["chain"] = s.chain_name;
  doc["vary"] = {{"id", s.target}, {"key", s.key}, {"unit", s.unit}, {"points", s.rows.size()}};
  doc["replan"] = s.replan;
  doc["log"] = s.log;
  doc["held_plan"] = s.held_plan ? nlohmann::json(status_name(*s.held_plan)) : nlohmann::json(nullptr);
  doc["open"] = nlohmann::json::array();
  for (const auto& o : s.open) doc["open"].push_back({{"id", o.stage}, {"key", o.key}, {"unit", o.unit}});
  doc["rows"] = nlohmann::json::array();
  for (const auto& r : s.rows) {
    nlohmann::json row{{"value", r.word.empty() ? nlohmann::json(r.value) : nlohmann::json(r.word)},
                       {"dc_gain_db", number(r.gain_db)},
                       {"bandwidth_hz", number(r.bandwidth_hz)},
                       {"peaking_db", number(r.peaking_db)},
                       {"overshoot_pct", number(r.overshoot_pct)},
                       {"group_delay_ripple_s", number(r.group_delay_ripple_s)}};
    if (s.has_signal) row["prbs_height"] = r.eye_height ? number(*r.eye_height) : nlohmann::json(nullptr);
    if (const auto& ls = r.large_signal)
      row["large_signal"] = {{"height_v", number(ls->height_v)},
                             {"width_ui", number(ls->width_ui)},
                             {"ddj_pp_s", number(ls->ddj_pp_s)},
                             {"delay_shift_s", number(ls->delay_shift_s)}};
    if (const auto& rx = r.receiver)
      row["receiver"] = {{"input_noise_rms_a", number(rx->input_noise_rms_a)},
                         {"sensitivity_dbm", rx->sensitivity_dbm ? number(*rx->sensitivity_dbm) : nlohmann::json(nullptr)}};
    if (const auto& v = r.variation) {
      nlohmann::json worst{{"dc_gain_db", number(v->gain_db)},
                           {"bandwidth_hz", number(v->bandwidth_hz)},
                           {"overshoot_pct", number(v->overshoot_pct)},
                           {"group_delay_ripple_s", number(v->group_delay_ripple_s)}};
      if (v->eye_height) worst["prbs_height"] = number(*v->eye_height);
      row["variation"] = {{"corners", v->corners},
                          {"worst", std::move(worst)},
                          {"overall_yield", number(v->overall_yield)},
                          {"yield_ci95", {number(v->yield_lo), number(v->yield_hi)}}};
    }
    if (r.status) row["status"] = status_name(*r.status);
    if (s.replan) {
      row["chosen"] = nlohmann::json::object();
      for (size_t i = 0; i < s.open.size() && i < r.chosen.size(); ++i) {
        const auto& v = r.chosen[i];
        row["chosen"][name_of(s.open[i].stage, s.open[i].key)] =
            v.text.empty() ? number(v.number) : nlohmann::json(v.text);
      }
    }
    doc["rows"].push_back(std::move(row));
  }
  return doc;
}

}  // namespace peakplan
