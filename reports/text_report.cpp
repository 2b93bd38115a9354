#include "reports/text_report.hpp"

#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"
#include "reports/budget.hpp"
#include "reports/caution.hpp"

namespace peakplan {
namespace {

std::string db(double x) { return show_number(x, 2); }
std::string pct(double x) { return show_pct(x); }

}  // namespace

std::string load_elements_text(const StageCircuit& c) {
  std::string out;
  auto loss = [](double r) { return r > 0.0 ? " (+" + format_si(r, "ohm") + ")" : std::string(); };
  // Main elements in table order, each with its coil's loss; then parasitics that are present.
  const auto& info = load_kind_info(c.kind);
  auto shown = [](const LoadParameter& p, double v) {
    return p.dimension == Dimension::dimensionless ? fmt::format("{:.3f}", v) : format_si(v, unit_symbol(p.dimension));
  };
  for (const auto& p : info.parameters) {
    if (p.role != ParameterRole::element) continue;
    if (p.omit_when_zero && !(c.*(p.field) > 0.0)) continue;  // an absent optional element (a tia's cf)
    out += (out.empty() ? "" : ", ") + std::string(p.label) + " " + shown(p, c.*(p.field));
    if (const auto* l = loss_of(info, p.key)) out += loss(c.*(l->field));
  }
  for (const auto& p : info.parameters)
    if (p.role == ParameterRole::parasitic && c.*(p.field) > 0.0)
      out += ", " + std::string(p.label) + " " + shown(p, c.*(p.field));
  if (out.empty()) out = "-";
  return out;
}

std::string analysis_text(const Chain& chain, const ChainAnalysis& analysis) {
  std::string out = fmt::format("chain: {}\n{}\n\nstages (each alone, driving its actual load)\n", chain.name,
                                kPlanningCaution);
  out += fmt::format("  {:<10} {:<7} {:>9} {:>9} {:>9} {:>9} {:>8} {:>10} {:>8} {:>9} {:>10}  {}\n", "id",
                     "kind", "gm", "Rd", "C out", "C node", "gain dB", "bandwidth", "peak dB",
                     "delay", "overshoot", "load");
  for (const auto& s : analysis.stages) {
    const auto& st = chain.stages[static_cast<size_t>(s.stage)];
    const auto& f = s.alone.frequency;
    out += fmt::format("  {:<10} {:<7} {:>9} {:>9} {:>9} {:>9} {:>8} {:>10} {:>8} {:>9} {:>10}  {}\n", st.id,
                       to_string(st.circuit.kind), format_si(st.circuit.gm, "S"), format_si(st.circuit.rd, "ohm"),
                       format_si(st.circuit.c_out, "F"), format_si(output_node_capacitance(st.circuit), "F"), db(to_db(f.dc_gain)),
                       format_si(f.bandwidth_hz, "Hz"), db(f.peaking_db), format_si(f.group_delay_s, "s"),
                       pct(s.alone.step.overshoot_pct), load_elements_text(st.circuit));
  }
  for (const auto& s : analysis.stages) {
    if (!s.design_check) continue;
    const auto& d = *s.design_check;
    out += fmt::format(
        "  note: {} designed as {}: the closed form promises {} and {:.2f} dB peaking; the circuit gives "
        "{:+.2f} % bandwidth, {:+.3f} dB peaking; input impedance within {:.2f} % of Rd up to 3x bandwidth\n",
        chain.stages[static_cast<size_t>(s.stage)].id, d.label, format_si(d.ideal_bandwidth_hz, "Hz"),
        d.ideal_peaking_db, 100.0 * d.bandwidth_departure, d.peaking_departure_db, 100.0 * d.input_impedance_error);
  }
  const bool current_input = chain.current_input();
  if (current_input)
    out += fmt::format("  note: {}'s gain is a transimpedance, dB re 1 ohm (dBohm); the other stages' are voltage gains\n",
                       chain.stages[static_cast<size_t>(chain.input_stage())].id);
  out += current_input ? "\noutputs (the cascade from the photocurrent: gains are transimpedances)\n"
                       : "\noutputs (the cascade from the input)\n";
  out += fmt::format("  {:<10} {:>8} {:>4} {:>10} {:>8} {:>9} {:>9} {:>10} {:>9} {:>9}\n", "node",
                     current_input ? "dBohm" : "gain dB", "pol",
                     "bandwidth", "peak dB", "delay", "ripple", "overshoot", "rise", "settle");
  for (const auto& o : analysis.outputs) {
    const auto& f = o.response.frequency;
    const auto& t = o.response.step;
    out += fmt::format("  {:<10} {:>8} {:>4} {:>10} {:>8} {:>9} {:>9} {:>10} {:>9} {:>9}\n",
                       chain.stages[static_cast<size_t>(o.stage)].id, db(to_db(f.dc_gain)), f.dc_gain < 0 ? "-" : "+",
                       format_si(f.bandwidth_hz, "Hz"), db(f.peaking_db), format_si(f.group_delay_s, "s"),
                       format_si(f.group_delay_ripple_s, "s"), pct(t.overshoot_pct), format_si(t.rise_time_s, "s"),
                       format_si(t.settling_time_s, "s"));
  }
  bool header = false;
  for (const auto& o : analysis.outputs) {
    if (!o.eye) continue;
    if (!header) {
      out += "\neyes (pulse response superposed; heights as a fraction of the ideal eye)\n";
      out += fmt::format("  {:<10} {:>9} {:>9} {:>9} {:>9} {:>11} {:>10} {:>8} {:>10}\n", "node", "PDA", "PRBS h",
                         "PRBS w", "DDJ pp", "noise diff", "noise BW", "Q", "BER");
      header = true;
    }
    const auto& e = *o.eye;
    const auto& p = e.estimate.prbs;
    out += fmt::format("  {:<10} {:>9} {:>9} {:>6.3f} UI {:>9} {:>11} {:>10} {:>8} {:>10}\n",
                       chain.stages[static_cast<size_t>(o.stage)].id, show_eye_height(e.estimate.pda.height),
                       show_eye_height(p.eye.height),
                       p.eye.width_ui, format_si(p.ddj_pp_s, "s"), format_si(e.noise.differential_rms_v, "V"),
                       format_si(e.noise.noise_bandwidth_hz, "Hz"),
                       e.statistical ? show_q(e.statistical->q) : "-",
                       e.statistical ? show_ber(e.statistical->ber) : "-");
    if (p.modulation == Modulation::pam4)
      out += fmt::format("  note: PAM4 width {:.3f} UI at the nominal thresholds (1/6, 1/2, 5/6), {:.3f} UI at thresholds "
                         "centred in each eye; Q and BER use the threshold-free statistical eye\n",
                         p.eye.width_ui, p.width_centred_ui);
    if (p.pattern_truncated)
      out += fmt::format("  note: the pattern is longer than the simulation bound; {} symbols were overlaid\n",
                         p.symbols_overlaid);
  }
  out += receiver_text(chain, analysis);
  out += large_signal_text(chain, analysis);
  return out;
}

std::string receiver_text(const Chain& chain, const ChainAnalysis& analysis) {
  std::string out;
  bool header = false;
  for (const auto& o : analysis.outputs) {
    if (!o.receiver) continue;
    const auto& r = *o.receiver;
    if (!header) {
      out += "\nreceiver (the photocurrent into one half circuit; noise referred to the input as a current)\n";
      out += fmt::format("  {:<10} {:>13} {:>9} {:>12} {:>13} {:>10} {:>11} {:>12}\n", "node", "transimpedance",
                         "dBohm", "in noise rms", "avg density", "noise BW", "OMA", "avg power");
      header = true;
    }
    const auto& sens = r.sensitivity;
    out += fmt::format("  {:<10} {:>13} {:>9} {:>12} {:>13} {:>10} {:>11} {:>12}\n",
                       chain.stages[static_cast<size_t>(o.stage)].id, format_si(r.transimpedance_ohm, "ohm"),
                       db(to_db(r.transimpedance_ohm)), format_si(r.input_rms_a, "A"),
                       format_si(r.input_density_avg, "A/rtHz"), format_si(r.noise_bandwidth_hz, "Hz"),
                       sens ? fmt::format("{:.2f} dBm", to_dbm(sens->oma_w)) : std::string("-"),
                       sens ? fmt::format("{:.2f} dBm", to_dbm(sens->average_w)) : std::string("-"));
    if (sens && analysis.signal)
      out += fmt::format("  {:<10} sensitivity at BER {:.0e} (Q = {:.2f}), responsivity {}, extinction ratio {}; "
                         "PIN estimate: no signal-dependent noise\n",
                         "", analysis.signal->target_ber, sens->q,
                         format_si(chain.photodiode->responsivity, "A/W"),
                         std::isinf(sens->extinction_ratio) ? std::string("ideal")
                                                            : fmt::format("{:.1f} dB", 10.0 * std::log10(sens->extinction_ratio)));
  }
  return out;
}

std::string large_signal_text(const Chain& chain, const ChainAnalysis& analysis) {
  std::string out;
  auto id = [&](int s) { return chain.stages[static_cast<size_t>(s)].id; };
  bool header = false;
  for (const auto& o : analysis.outputs) {
    if (!o.large_signal) continue;
    const auto& ls = *o.large_signal;
    if (!header) {
      out += fmt::format("\nlarge signal (limited stages clip; the swing {} is the differential peak-to-peak input, "
                         "volts are differential at the output)\n", format_si(ls.input_swing_v, "V"));
      out += fmt::format("  {:<10} {:>10} {:>9} {:>9} {:>11}  {}\n", "node", "height", "width", "DDJ pp",
                         "delay shift", "settled levels");
      header = true;
    }
    std::string levels;
    for (double l : ls.levels_v) levels += (levels.empty() ? "" : ", ") + format_si(l, "V");
    out += fmt::format("  {:<10} {:>10} {:>6.3f} UI {:>9} {:>11}  {}\n", id(o.stage), format_si(ls.height_v, "V"),
                       ls.width_ui, format_si(ls.ddj_pp_s, "s"), format_si(ls.delay_shift_s, "s"), levels);
    if (ls.modulation == Modulation::pam4) {
      std::string eyes;
      for (double h : ls.eye_heights_v) eyes += (eyes.empty() ? "" : ", ") + format_si(h, "V");
      out += fmt::format("  {:<10} eyes (lower first) {}; outer/middle level spacing {:.3f}{}\n", "", eyes,
                         ls.level_compression,
                         ls.level_compression < 0.999 ? ": the limiting stages squeeze the outer eyes" : "");
    }
    std::string comp;
    for (const auto& c : ls.compression)
      comp += (comp.empty() ? "" : ", ") + id(c.stage) + " " +
              (std::isfinite(c.input_v) ? format_si(c.input_v, "V") : std::string("never (limited ahead)"));
    out += fmt::format("  {:<10} 1 dB compression at input swing: {}\n", "", comp);
    out += fmt::format("  {:<10} step {} ({} per UI; halving it moves the height {:.3f} %{})\n", "",
                       format_si(ls.step_s, "s"), ls.steps_per_ui, 100.0 * ls.step_change,
                       ls.converged ? "" : ", above the tolerance: the finest step allowed");
  }
  return out;
}

}  // namespace peakplan
