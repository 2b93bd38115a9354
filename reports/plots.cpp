#include "reports/plots.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <numbers>
#include <stdexcept>

#include "models/units.hpp"
#include "reports/svg_chart.hpp"

namespace peakplan {
namespace {

using svg::AxisSpec;
using svg::AxisUnit;
using svg::Chart;
using svg::engineering;
using svg::format_number;
using svg::MarkerShape;
using svg::Scale;
using svg::Stroke;
using svg::TextStyle;

constexpr double kInf = std::numeric_limits<double>::infinity();
constexpr double kTwoPi = 2.0 * std::numbers::pi;
const AxisUnit kHz{"Hz", true};
const AxisUnit kSeconds{"s", true};
const AxisUnit kDb{"dB", false};
const AxisUnit kPlain{"", false};

Stroke stroke(std::string_view colour, double width, std::string dash = {}, double opacity = 1.0) {
  Stroke s;
  s.colour = std::string(colour);
  s.width = width;
  s.dash = std::move(dash);
  s.opacity = opacity;
  return s;
}

TextStyle text_style(TextStyle::Anchor anchor, std::string_view colour, double dx, double dy, bool bold = false) {
  TextStyle t;
  t.anchor = anchor;
  t.colour = std::string(colour);
  t.dx = dx;
  t.dy = dy;
  t.bold = bold;
  return t;
}

const std::string& stage_id(const Chain& chain, int stage) { return chain.stages[static_cast<size_t>(stage)].id; }

std::string stage_label(const Chain& chain, int stage) {
  const auto& s = chain.stages[static_cast<size_t>(stage)];
  return fmt::format("{} ({})", s.id, to_string(s.circuit.kind));
}

double rounded_down(double x, double step) { return std::floor(x / step) * step; }
double rounded_up(double x, double step) { return std::ceil(x / step) * step; }

std::vector<double> scaled(const std::vector<double>& v, double factor) {
  std::vector<double> r(v.size());
  std::transform(v.begin(), v.end(), r.begin(), [&](double x) { return x * factor; });
  return r;
}

std::string gain_summary(const FrequencyMetrics& f) {
  std::string s = fmt::format("{} dB", format_number(to_db(f.dc_gain), 1));
  if (std::isfinite(f.bandwidth_hz)) s += ", " + engineering(f.bandwidth_hz, "Hz") + " bandwidth";
  if (f.peaking_db > 0.005) s += fmt::format(", {} dB peaking", format_number(f.peaking_db, 2));
  return s;
}

PlotFile magnitude_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& main = analysis.outputs.back();
  const auto [f_lo, f_hi] = plotted_frequency_span(analysis);
  const double main_dc_db = to_db(main.response.frequency.dc_gain);
  double top = -kInf, lowest_dc = kInf;
  auto track = [&](const ResponseSummary& r) {
    for (double v : r.sampled.magnitude_db()) top = std::max(top, v);
    lowest_dc = std::min(lowest_dc, to_db(r.frequency.dc_gain));
  };
  for (const auto& s : analysis.stages) track(s.alone);
  for (const auto& o : analysis.outputs) track(o.response);
  // The gains on top, and 40 dB below the smallest of them for the roll-offs.
  const double y_hi = rounded_up(top + 4.0, 10.0), y_lo = rounded_down(lowest_dc - 40.0, 10.0);

  Chart chart("magnitude", "Magnitude of every stage alone and of the cascade",
              fmt::format("{}: cascade to {}: {}", chain.name, stage_id(chain, main.stage),
                          gain_summary(main.response.frequency)),
              AxisSpec{"Frequency", kHz, Scale::log, f_lo, f_hi}, AxisSpec{"Gain", kDb, Scale::linear, y_lo, y_hi});
  for (size_t i = 0; i < analysis.stages.size(); ++i) {
    const auto& s = analysis.stages[i].alone.sampled;
    chart.line(s.frequency_hz, s.magnitude_db(), stroke(svg::theme::series_colour(i), 1.6, std::string(svg::theme::series_dash(i))),
               stage_label(chain, analysis.stages[i].stage) + " alone");
  }
  for (size_t k = 0; k + 1 < analysis.outputs.size(); ++k) {
    const auto& o = analysis.outputs[k];
    chart.line(o.response.sampled.frequency_hz, o.response.sampled.magnitude_db(),
               stroke(svg::theme::series_colour(static_cast<size_t>(o.stage)), 2.2, "7 4"),
               "cascade to " + stage_id(chain, o.stage));
  }
  chart.line(main.response.sampled.frequency_hz, main.response.sampled.magnitude_db(),
             stroke(svg::theme::main_series, 2.8), "cascade to " + stage_id(chain, main.stage));

  const double bw = main.response.frequency.bandwidth_hz;
  if (std::isfinite(bw)) {
    // |H| = |H(0)|/sqrt(2) there by definition, which is 3.01 dB down.
    const double level = main_dc_db - 10.0 * std::log10(2.0);
    chart.segment(bw, level, bw, -kInf, stroke(svg::theme::accent, 1.2, "3 3"));
    chart.marker(bw, level, MarkerShape::dot, svg::theme::accent, 5.5, "bandwidth");
    chart.text(bw, level, fmt::format("\u22123 dB at {}", engineering(bw, "Hz")),
               text_style(TextStyle::Anchor::start, svg::theme::accent, 9.0, -9.0, true));
  }
  return {"magnitude.svg", "Magnitude of every stage alone and of the cascade", chart.render()};
}

PlotFile group_delay_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& main = analysis.outputs.back();
  const auto [f_lo, f_hi] = plotted_frequency_span(analysis);
  double top = 0.0, bottom = 0.0;
  auto track = [&](const SampledResponse& s) {
    for (double v : s.group_delay_s) {
      if (!std::isfinite(v)) continue;
      top = std::max(top, v);
      bottom = std::min(bottom, v);
    }
  };
  for (const auto& s : analysis.stages) track(s.alone.sampled);
  for (const auto& o : analysis.outputs) track(o.response.sampled);
  if (!(top > bottom)) top = bottom + 1e-12;
  const double pad = 0.12 * (top - bottom);

  const auto& f = main.response.frequency;
  Chart chart("group_delay", "Group delay of the cascade and of every stage alone",
              fmt::format("{}: cascade to {}: {} at DC, ripple {}", chain.name, stage_id(chain, main.stage),
                          engineering(f.group_delay_s, "s"),
                          svg::engineering_as(f.group_delay_ripple_s, f.group_delay_s, "s", 2)),
              AxisSpec{"Frequency", kHz, Scale::log, f_lo, f_hi},
              AxisSpec{"Group delay", kSeconds, Scale::linear, bottom < 0.0 ? bottom - pad : 0.0, top + pad});

  // The ripple band first, under the curves: its frequency span, and the ripple's height
  // hung from the highest sampled delay inside it.
  const auto& s = main.response.sampled;
  if (f.ripple_band_hz > 0.0 && std::isfinite(f.ripple_band_hz)) {
    double band_max = -kInf;
    for (size_t i = 0; i < s.frequency_hz.size(); ++i)
      if (s.frequency_hz[i] <= f.ripple_band_hz && std::isfinite(s.group_delay_s[i]))
        band_max = std::max(band_max, s.group_delay_s[i]);
    chart.band(-kInf, f.ripple_band_hz, -kInf, kInf, svg::theme::highlight, 0.13);
    if (std::isfinite(band_max)) {
      chart.band(-kInf, f.ripple_band_hz, band_max - f.group_delay_ripple_s, band_max, svg::theme::highlight, 0.45);
      chart.text(f.ripple_band_hz, band_max,
                 fmt::format("ripple {} up to {}", svg::engineering_as(f.group_delay_ripple_s, f.group_delay_s, "s", 2),
                             engineering(f.ripple_band_hz, "Hz")),
                 text_style(TextStyle::Anchor::end, "#8a6412", -6.0, -8.0, true));
    }
    chart.segment(f.ripple_band_hz, -kInf, f.ripple_band_hz, kInf, stroke("#b58a2a", 1.2, "4 3"));
  }
  for (size_t i = 0; i < analysis.stages.size(); ++i) {
    const auto& st = analysis.stages[i].alone.sampled;
    chart.line(st.frequency_hz, st.group_delay_s, stroke(svg::theme::series_colour(i), 1.3, std::string(svg::theme::series_dash(i))),
               stage_label(chain, analysis.stages[i].stage) + " alone");
  }
  for (size_t k = 0; k + 1 < analysis.outputs.size(); ++k) {
    const auto& o = analysis.outputs[k];
    chart.line(o.response.sampled.frequency_hz, o.response.sampled.group_delay_s,
               stroke(svg::theme::series_colour(static_cast<size_t>(o.stage)), 2.2, "7 4"),
               "cascade to " + stage_id(chain, o.stage));
  }
  chart.line(s.frequency_hz, s.group_delay_s, stroke(svg::theme::main_series, 2.8),
             "cascade to " + stage_id(chain, main.stage));
  return {"group_delay.svg", "Group delay of the cascade and of every stage alone", chart.render()};
}

// The first time the waveform reaches `level`, linearly interpolated; NaN if never.
double first_crossing(const StepResponse& w, double level) {
  for (size_t k = 1; k < w.y.size(); ++k)
    if (w.y[k - 1] < level && w.y[k] >= level)
      return w.time(k - 1) + (level - w.y[k - 1]) / (w.y[k] - w.y[k - 1]) * w.dt;
  return std::numeric_limits<double>::quiet_NaN();
}

PlotFile step_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& main = analysis.outputs.back();
  const auto& w = main.response.step_wave;
  const auto& m = main.response.step;
  const double duration = w.time(w.y.size() - 1);
  const double t10 = first_crossing(w, 0.1);
  const double t90 = std::isfinite(t10) ? t10 + m.rise_time_s : std::numeric_limits<double>::quiet_NaN();
  // Long enough to see the settling, not so long that the edge is a sliver.
  double t_end = std::max(1.3 * m.settling_time_s, std::isfinite(t90) ? 3.0 * t90 : 0.0);
  if (!(t_end > 0.0) || t_end > duration) t_end = duration;
  // About one point per pixel is all a polyline can show; the peak is kept exactly.
  size_t shown = 0, peak = 0;
  while (shown < w.y.size() && w.time(shown) <= t_end * 1.02) {
    if (w.y[shown] > w.y[peak]) peak = shown;
    ++shown;
  }
  const size_t stride = std::max<size_t>(1, shown / 700);
  std::vector<double> t, y;
  for (size_t k = 0; k < shown; ++k) {
    if (k % stride != 0 && k != peak && k + 1 != shown) continue;
    t.push_back(w.time(k));
    y.push_back(w.y[k]);
  }
  const double t_peak = w.time(peak), y_peak = w.y[peak];
  const double y_max = *std::max_element(y.begin(), y.end()), y_min = *std::min_element(y.begin(), y.end());

  Chart chart("step", "Step response at the main output",
              fmt::format("{}: cascade to {}, divided by its DC gain", chain.name, stage_id(chain, main.stage)),
              AxisSpec{"Time", kSeconds, Scale::linear, 0.0, t_end},
              AxisSpec{"Output \u00f7 DC gain", kPlain, Scale::linear, std::min(-0.05, y_min - 0.03),
                       std::max(1.2, y_max + 0.08)});
  chart.band(-kInf, kInf, 0.99, 1.01, svg::theme::highlight, 0.45);
  chart.text(t_end, 1.01, "1 \u00b1 1 %", text_style(TextStyle::Anchor::end, "#8a6412", -6.0, -6.0, true));
  for (double level : {0.1, 0.9})
    chart.segment(0.0, level, t_end, level, stroke(svg::theme::frame, 1.0, "2 4"));
  if (m.settling_time_s > 0.0 && m.settling_time_s <= t_end) {
    chart.segment(m.settling_time_s, -kInf, m.settling_time_s, kInf, stroke(svg::theme::muted, 1.2, "5 4"));
    chart.note(m.settling_time_s / t_end, 0.93,
               fmt::format("within \u00b11 % after {}", svg::engineering_as(m.settling_time_s, t_end, "s", 1)),
               text_style(TextStyle::Anchor::end, svg::theme::muted, -6.0, 0.0));
  }
  chart.line(t, y, stroke(svg::theme::main_series, 2.6), "");

  if (std::isfinite(t90)) {
    chart.segment(t10, 0.1, t90, 0.1, stroke(svg::theme::accent, 2.0), true);
    chart.segment(t90, 0.1, t90, 0.9, stroke(svg::theme::accent, 1.0, "3 3"));
    chart.marker(t10, 0.1, MarkerShape::dot, svg::theme::accent, 4.0, "rise-start");
    chart.marker(t90, 0.9, MarkerShape::dot, svg::theme::accent, 4.0, "rise-end");
    chart.text(t90, 0.1, fmt::format("rise (10\u201390 %) {}", svg::engineering_as(m.rise_time_s, t_end, "s", 1)),
               text_style(TextStyle::Anchor::start, svg::theme::accent, 8.0, 4.0, true));
  }
  if (m.overshoot_pct > 0.0) {
    chart.marker(t_peak, y_peak, MarkerShape::dot, svg::theme::accent, 4.5, "overshoot");
    chart.text(t_peak, y_peak, fmt::format("overshoot {} %", format_number(m.overshoot_pct, 2)),
               text_style(TextStyle::Anchor::start, svg::theme::accent, 8.0, -10.0, true));
  } else {
    chart.note(0.98, 0.93, "no overshoot", text_style(TextStyle::Anchor::end, svg::theme::muted, 0.0, 0.0));
  }
  return {"step.svg", "Step response at the main output", chart.render()};
}

// One eye drawing: the overlaid traces and their markers, in the traces' level units mapped to
// the plotted axis by `to_axis` (the identity for the linear eye, to volts for the clipped one).
struct EyeDrawing {
  std::string name, title, y_label;
  AxisUnit y_unit;
  const EyeTraces& traces;
  const PrbsEye& prbs;  // the openings the traces were measured as, in level units
  std::function<double(double)> to_axis;
  // The height's label from its opening (level units) and its inner edges on the plotted axis.
  std::function<std::string(double opening, double lower, double upper)> height_text;
};

PlotFile draw_eye(const Chain& chain, const ChainAnalysis& analysis, const EyeDrawing& d) {
  const auto& main = analysis.outputs.back();
  const auto& tr = d.traces;
  const auto& prbs = d.prbs;
  const bool pam4 = tr.modulation == Modulation::pam4;
  const double ui = tr.ui_s;
  const double bit_rate = analysis.signal ? analysis.signal->bit_rate : (pam4 ? 2.0 : 1.0) / ui;

  std::vector<std::vector<double>> ys;
  ys.reserve(tr.traces.size());
  double lo = std::min(d.to_axis(0.0), d.to_axis(1.0)), hi = std::max(d.to_axis(0.0), d.to_axis(1.0));
  for (const auto& t : tr.traces) {
    auto& y = ys.emplace_back();
    y.reserve(t.y.size());
    for (double v : t.y) {
      y.push_back(d.to_axis(v));
      lo = std::min(lo, y.back());
      hi = std::max(hi, y.back());
    }
  }
  const double pad = 0.08 * (hi - lo);
  Chart chart(d.name, d.title,
              fmt::format("{}: {}, {} {} {}; {} of {} symbols drawn, 1 UI = {}", chain.name,
                          stage_id(chain, main.stage), engineering(bit_rate, "b/s", 6), pam4 ? "PAM4" : "NRZ",
                          to_string(tr.pattern), tr.traces.size(), tr.symbols_overlaid,
                          engineering(ui, "s")),
              AxisSpec{"Time from the sampling instant", AxisUnit{"UI", false}, Scale::linear, -1.0, 1.0},
              AxisSpec{d.y_label, d.y_unit, Scale::linear, lo - pad, hi + pad});

  const auto x = scaled(tr.offset_s, 1.0 / ui);
  // Fainter as traces pile up, so their density stays visible.
  const double opacity = std::clamp(3.0 / std::sqrt(static_cast<double>(std::max<size_t>(1, tr.traces.size()))), 0.08, 0.6);
  chart.lines(x, ys, stroke(svg::theme::main_series, 1.1, "", opacity));
  for (int e = 0; e < tr.eye_count(); ++e) {
    const double threshold = d.to_axis(tr.threshold(e));
    chart.segment(-1.0, threshold, 1.0, threshold, stroke(svg::theme::frame, 1.0, "2 4"));
  }

  const std::string width_colour = "#a86f0c";
  for (int e = 0; e < tr.eye_count(); ++e) {
    // NRZ: the eye; PAM4: each of the three at its own best offset.
    const auto& opening = pam4 ? prbs.eyes[static_cast<size_t>(e)] : prbs.eye;
    const auto& marker = tr.eyes[static_cast<size_t>(e)];
    const auto& edges = marker.edges;
    const double at = edges.offset_s / ui, threshold = d.to_axis(tr.threshold(e));
    const double lower = d.to_axis(edges.lower_top), upper = d.to_axis(edges.upper_bottom);
    const std::string name = pam4 ? std::string(e == 0 ? "lower eye " : e == 1 ? "middle eye " : "upper eye ") : std::string();
    if (!(opening.height > 0.0)) {
      chart.text(at, threshold, name + "eye closed", text_style(TextStyle::Anchor::middle, svg::theme::accent, 0.0, 4.0, true));
      continue;
    }
    chart.segment(at, lower, at, upper, stroke(svg::theme::accent, 2.4), true);
    // NRZ: halfway up the open half; PAM4's eyes are short, so just above the width bar.
    chart.text(at, pam4 ? threshold : 0.5 * (upper + threshold), name + d.height_text(opening.height, lower, upper),
               text_style(TextStyle::Anchor::start, svg::theme::accent, 8.0, pam4 ? -7.0 : 4.0, true));
    if (opening.width_ui > 0.0) {
      chart.segment(marker.width_left_s / ui, threshold, marker.width_right_s / ui, threshold,
                    stroke(width_colour, 2.4), true);
      chart.text(at, threshold, fmt::format("width {} UI", format_number(opening.width_ui, 3)),
                 text_style(TextStyle::Anchor::start, width_colour, 8.0, pam4 ? 16.0 : 18.0, true));
    }
  }
  if (pam4)
    chart.note(0.99, 0.97, fmt::format("common slicer phase: worst eye {}", format_number(prbs.eye.height, 3)),
               text_style(TextStyle::Anchor::end, svg::theme::muted, 0.0, 4.0));
  return {d.name + ".svg", d.title, chart.render()};
}

PlotFile eye_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& eye = *analysis.outputs.back().eye;
  const double ideal_v = eye.statistical ? eye.statistical->ideal_eye_v : std::numeric_limits<double>::quiet_NaN();
  return draw_eye(chain, analysis,
                  {"eye", "PRBS eye at the main output", "Output \u00f7 DC gain", kPlain, *eye.traces,
                   eye.estimate.prbs, [](double level) { return level; },
                   [&](double opening, double, double) {
                     std::string text = fmt::format("height {}", format_number(opening, 3));
                     if (std::isfinite(ideal_v)) text += fmt::format(" ({})", engineering(opening * ideal_v, "V"));
                     return text;
                   }});
}

// The clipped (large-signal) eye in differential volts, drawn as the linear one is.
PlotFile clipped_eye_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& ls = *analysis.outputs.back().large_signal;
  return draw_eye(chain, analysis,
                  {"eye_clipped", fmt::format("Clipped PRBS eye at the main output ({} input swing)",
                                              engineering(ls.input_swing_v, "V")),
                   "Differential output", AxisUnit{"V", true}, *ls.traces, ls.eye,
                   [&](double level) { return ls.volts(level); },
                   [](double, double lower, double upper) {
                     return fmt::format("height {}", engineering(std::fabs(upper - lower), "V"));
                   }});
}

struct RootGroup {
  double sigma_hz, omega_hz;
  int count;
};

// Coincident roots (repeated stages give exact repeats) drawn once with their multiplicity.
std::vector<RootGroup> grouped(const std::vector<std::complex<double>>& roots, double scale_hz) {
  std::vector<RootGroup> groups;
  for (const auto& r : roots) {
    const double s = r.real() / kTwoPi, w = r.imag() / kTwoPi;
    auto same = std::find_if(groups.begin(), groups.end(), [&](const RootGroup& g) {
      return std::hypot(g.sigma_hz - s, g.omega_hz - w) <= 1e-6 * scale_hz;
    });
    if (same != groups.end()) ++same->count;
    else groups.push_back({s, w, 1});
  }
  return groups;
}

PlotFile pole_zero_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& main = analysis.outputs.back();
  const auto& r = main.response;
  double scale = 0.0;
  for (const auto* set : {&r.poles, &r.zeros})
    for (const auto& z : *set) scale = std::max(scale, std::abs(z) / kTwoPi);
  if (!(scale > 0.0)) scale = 1e9;
  const auto poles = grouped(r.poles, scale), zeros = grouped(r.zeros, scale);

  double s_lo = 0.0, s_hi = 0.0, w_max = 0.0;
  for (const auto* set : {&poles, &zeros})
    for (const auto& g : *set) {
      s_lo = std::min(s_lo, g.sigma_hz);
      s_hi = std::max(s_hi, g.sigma_hz);
      w_max = std::max(w_max, std::fabs(g.omega_hz));
    }
  const double span = std::max({s_hi - s_lo, 2.0 * w_max, 0.1 * scale});
  double x_lo = s_lo - 0.1 * span, x_hi = s_hi + 0.1 * span;
  double y_hi = std::max(w_max * 1.15, 0.1 * span);
  // Equal hertz per pixel on both axes, so angles (damping) read true.
  const int legend_rows = 1;
  const auto box = Chart::plot_box(legend_rows);
  const double px_w = box.right - box.left, px_h = box.bottom - box.top;
  const double per_px = std::max((x_hi - x_lo) / px_w, 2.0 * y_hi / px_h);
  const double grow_x = per_px * px_w - (x_hi - x_lo);
  x_lo -= grow_x * (x_hi > 0.0 && s_hi > 0.0 ? 0.5 : 0.85);
  x_hi = x_lo + per_px * px_w;
  y_hi = 0.5 * per_px * px_h;

  Chart chart("pole_zero", "Poles and zeros of the cascade to the main output",
              fmt::format("{}: cascade to {}, {} poles, {} finite zeros", chain.name, stage_id(chain, main.stage),
                          r.poles.size(), r.zeros.size()),
              AxisSpec{"\u03c3/2\u03c0 (real part)", kHz, Scale::linear, x_lo, x_hi},
              AxisSpec{"\u03c9/2\u03c0 (imaginary part)", kHz, Scale::linear, -y_hi, y_hi});
  chart.segment(0.0, -kInf, 0.0, kInf, stroke(svg::theme::frame, 1.3));
  chart.segment(-kInf, 0.0, kInf, 0.0, stroke(svg::theme::frame, 1.3));
  // Constant damping zeta = 1/sqrt(2): poles inside the 45-degree wedge are damped more.
  const double reach = std::min(-x_lo, y_hi) * 0.96;
  if (reach > 0.0) {
    for (double sign : {1.0, -1.0})
      chart.segment(0.0, 0.0, -reach, sign * reach, stroke(svg::theme::muted, 1.0, "2 4"));
    chart.text(-reach, reach, "\u03b6 = 0.707", text_style(TextStyle::Anchor::end, svg::theme::muted, -6.0, 12.0));
  }
  auto label_multiplicity = [&](const RootGroup& g, std::string_view colour) {
    if (g.count > 1)
      chart.text(g.sigma_hz, g.omega_hz, fmt::format("\u00d7{}", g.count),
                 text_style(TextStyle::Anchor::start, colour, 8.0, -7.0, true));
  };
  for (const auto& g : zeros) {
    chart.marker(g.sigma_hz, g.omega_hz, MarkerShape::ring, svg::theme::main_series, 5.5, "zero");
    label_multiplicity(g, svg::theme::main_series);
  }
  for (const auto& g : poles) {
    chart.marker(g.sigma_hz, g.omega_hz, MarkerShape::cross, svg::theme::accent, 5.5, "pole");
    label_multiplicity(g, svg::theme::accent);
  }
  chart.legend_marker(MarkerShape::cross, svg::theme::accent, "pole");
  chart.legend_marker(MarkerShape::ring, svg::theme::main_series, zeros.empty() ? "zero (none finite)" : "zero");
  return {"pole_zero.svg", "Poles and zeros of the cascade to the main output", chart.render()};
}

// A receiver's input-referred noise current density against frequency (models/receiver.hpp), with
// its average over the noise bandwidth: what the sensitivity is computed from.
PlotFile input_noise_plot(const Chain& chain, const ChainAnalysis& analysis) {
  const auto& main = analysis.outputs.back();
  const auto& r = *main.receiver;
  std::vector<double> f, density;
  double lo = kInf, hi = 0.0;
  for (const auto& p : r.spectrum) {
    if (!std::isfinite(p.input_density) || !(p.input_density > 0.0)) continue;
    // Drawn in pA/rtHz, the unit densities are quoted in, so that tick labels stay short.
    f.push_back(p.frequency_hz);
    density.push_back(p.input_density * 1e12);
    lo = std::min(lo, density.back());
    hi = std::max(hi, density.back());
  }
  const double average = r.input_density_avg * 1e12;
  if (!(hi > lo)) hi = lo * 10.0;
  // Up to two decades above the average at most: far above the bandwidth the density rises with
  // f (the input capacitance's share), which matters only where the chain has rolled off.
  const double top = std::min(hi * 1.5, std::max(average, lo) * 100.0);
  Chart chart("input_noise", "Input-referred noise current density",
              fmt::format("{}: {} rms over {} (noise bandwidth), average {}", chain.name, engineering(r.input_rms_a, "A"),
                          engineering(r.noise_bandwidth_hz, "Hz"), engineering(r.input_density_avg, "A/rtHz")),
              AxisSpec{"Frequency", kHz, Scale::log, f.front(), f.back()},
              AxisSpec{"Noise current density (pA/rtHz)", kPlain, Scale::log, lo / 1.5, top});
  chart.line(f, density, stroke(svg::theme::series_colour(0), 2.0), "referred to the photocurrent");
  chart.segment(-kInf, average, kInf, average, stroke("#b58a2a", 1.2, "4 3"));
  chart.text(f.front(), average, fmt::format("average {}", engineering(r.input_density_avg, "A/rtHz")),
             text_style(TextStyle::Anchor::start, "#8a6412", 6.0, -6.0, true));
  const double bw = main.response.frequency.bandwidth_hz;
  if (std::isfinite(bw)) chart.segment(bw, -kInf, bw, kInf, stroke(svg::theme::frame, 1.0, "2 3"));
  return {"input_noise.svg", "Input-referred noise current density of the receiver", chart.render()};
}

}  // namespace

std::pair<double, double> plotted_frequency_span(const ChainAnalysis& analysis) {
  double lo = kInf, hi = 0.0;
  auto include = [&](const SampledResponse& s) {
    if (s.frequency_hz.empty()) return;
    lo = std::min(lo, s.frequency_hz.front());
    hi = std::max(hi, s.frequency_hz.back());
  };
  for (const auto& s : analysis.stages) include(s.alone.sampled);
  for (const auto& o : analysis.outputs) include(o.response.sampled);
  // Beyond a few times the widest bandwidth there is only roll-off: stop at the decade above 5x.
  double widest = 0.0;
  for (const auto& s : analysis.stages)
    if (std::isfinite(s.alone.frequency.bandwidth_hz)) widest = std::max(widest, s.alone.frequency.bandwidth_hz);
  for (const auto& o : analysis.outputs)
    if (std::isfinite(o.response.frequency.bandwidth_hz)) widest = std::max(widest, o.response.frequency.bandwidth_hz);
  if (widest > 0.0) {
    const double cap = std::pow(10.0, std::ceil(std::log10(5.0 * widest)));
    if (cap > lo) hi = std::min(hi, cap);
  }
  return {lo, hi};
}


std::vector<PlotFile> chain_plots(const Chain& chain, const ChainAnalysis& analysis) {
  if (analysis.outputs.empty() || analysis.stages.empty())
    throw std::invalid_argument("chain_plots: the analysis has no stages or outputs");
  if (analysis.outputs.back().response.sampled.frequency_hz.empty() ||
      analysis.outputs.back().response.step_wave.y.empty())
    throw std::invalid_argument("chain_plots: the analysis kept no waveforms (keep_waveforms = false)");
  std::vector<PlotFile> plots;
  plots.push_back(magnitude_plot(chain, analysis));
  plots.push_back(group_delay_plot(chain, analysis));
  plots.push_back(step_plot(chain, analysis));
  const auto& eye = analysis.outputs.back().eye;
  const bool linear_eye = eye && eye->traces && !eye->traces->traces.empty();
  const auto& ls = analysis.outputs.back().large_signal;
  const bool clipped_eye = linear_eye && ls && ls->traces && !ls->traces->traces.empty();
  // The clipped eye sits beside the linear one: the pole-zero map goes ahead of the pair then.
  if (clipped_eye) plots.push_back(pole_zero_plot(chain, analysis));
  if (linear_eye) plots.push_back(eye_plot(chain, analysis));
  if (clipped_eye) plots.push_back(clipped_eye_plot(chain, analysis));
  if (!clipped_eye) plots.push_back(pole_zero_plot(chain, analysis));
  if (analysis.outputs.back().receiver && !analysis.outputs.back().receiver->spectrum.empty())
    plots.push_back(input_noise_plot(chain, analysis));
  return plots;
}

}  // namespace peakplan
