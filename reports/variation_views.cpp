#include "reports/variation_views.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "models/units.hpp"
#include "reports/svg_chart.hpp"

namespace peakplan {
namespace {

using Align = TableView::Align;

std::string metric_cell(const CaseMetric& m, double x) {
  if (!std::isfinite(x)) return "n/a";
  if (m.unit == "dB") return show_db(x);
  if (m.unit == "%") return show_pct(x);
  if (m.unit == "UI") return fmt::format("{:.3f} UI", x);
  if (m.unit.empty()) return show_eye_height(x);
  return format_si(x, m.unit);
}

std::string offsets_cell(const Corner& corner) {
  std::string out;
  for (auto c : all_variation_classes) {
    const auto i = static_cast<size_t>(c);
    if (!corner.named[i]) continue;
    const double x = corner.offset[i];
    out += (out.empty() ? "" : ", ") +
           (is_relative(c) ? fmt::format("{} {:+g} %", symbol(c), 100.0 * x) : fmt::format("{} {:+g}", symbol(c), x));
  }
  return out.empty() ? "-" : out;
}

std::string limit_cell(const PlanCheck& c) {
  const std::string op = c.is_minimum ? "\u2265 " : "\u2264 ";
  if (c.unit == "dB") return op + show_db(c.limit);
  if (c.unit == "%") return op + show_pct(c.limit);
  return op + format_si(c.limit, c.unit, 4);
}

std::string csv_number(double x) { return std::isfinite(x) ? fmt::format("{:.9g}", x) : std::string(); }

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\r\n") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) out += c == '"' ? std::string("\"\"") : std::string(1, c);
  return out + "\"";
}

std::string csv_line(const std::vector<std::string>& fields) {
  std::string out;
  for (size_t i = 0; i < fields.size(); ++i) out += (i ? "," : "") + fields[i];
  return out + "\r\n";
}

const PlanCheck* find_check(const VariationResult& r, std::string_view name) {
  if (r.corners.empty()) return nullptr;
  for (const auto& c : r.corners.front().checks)
    if (c.name == name) return &c;
  return nullptr;
}

struct HistogramPlot {
  std::string_view metric, check, file, title, axis;
  svg::AxisUnit unit;
  double scale;  // shown value = SI value * scale
};

PlotFile histogram_plot(const std::string& chain_name, const VariationResult& r, const HistogramPlot& h,
                        const std::vector<double>& values) {
  const auto& mc = *r.monte_carlo;
  auto scaled = values;
  for (auto& v : scaled) v *= h.scale;
  const auto hist = histogram(scaled, 30);
  const PlanCheck* check = find_check(r, h.check);
  const double limit = check ? check->limit * h.scale : std::numeric_limits<double>::quiet_NaN();
  double lo = hist.lo, hi = hist.hi;
  if (std::isfinite(limit)) {
    lo = std::min(lo, limit);
    hi = std::max(hi, limit);
  }
  const double pad = hi > lo ? 0.06 * (hi - lo) : std::max(1e-12, 0.01 * std::fabs(hi));
  size_t peak = 1;
  for (auto c : hist.counts) peak = std::max(peak, c);
  size_t finite = 0;
  for (auto c : hist.counts) finite += c;

  svg::Chart chart(std::string(h.file.substr(0, h.file.size() - 4)), std::string(h.title),
                   fmt::format("{}: {} Monte Carlo samples (seed {}, {}), {} bins", chain_name, finite, mc.seed,
                               to_string(mc.distribution), hist.counts.size()),
                   svg::AxisSpec{std::string(h.axis), h.unit, svg::Scale::linear, lo - pad, hi + pad},
                   svg::AxisSpec{"Samples", svg::AxisUnit{"", false}, svg::Scale::linear, 0.0,
                                 1.15 * static_cast<double>(peak)});
  const double width = hist.counts.empty() ? 0.0 : (hist.hi - hist.lo) / static_cast<double>(hist.counts.size());
  for (size_t b = 0; b < hist.counts.size(); ++b) {
    if (hist.counts[b] == 0) continue;
    const double x0 = hist.lo + width * static_cast<double>(b);
    chart.band(x0, width > 0.0 ? x0 + width : x0 + pad, 0.0, static_cast<double>(hist.counts[b]), svg::theme::main_series,
               0.75);
  }
  if (std::isfinite(limit)) {
    svg::Stroke s;
    s.colour = std::string(svg::theme::accent);
    s.width = 2.0;
    s.dash = "5 3";
    chart.segment(limit, 0.0, limit, 1.15 * static_cast<double>(peak), s);
    svg::TextStyle t;
    t.colour = std::string(svg::theme::accent);
    t.bold = true;
    t.dx = 6.0;
    t.dy = 14.0;
    chart.text(limit, 1.15 * static_cast<double>(peak),
               fmt::format("{} {}", check->is_minimum ? "target \u2265" : "limit \u2264",
                           h.unit.si_prefix ? svg::engineering(limit, h.unit.symbol)
                                            : svg::format_number(limit, 3) + (h.unit.symbol.empty() ? "" : " " + h.unit.symbol)),
               t);
  } else {
    svg::TextStyle t;
    t.anchor = svg::TextStyle::Anchor::end;
    t.colour = std::string(svg::theme::muted);
    chart.note(0.98, 0.93, "the file sets no limit on this metric", t);
  }
  return {std::string(h.file), std::string(h.title), chart.render()};
}

// The indices of x (increasing) a plot over [lo, hi] draws: the points inside and one beyond
// each end, so the curves and the band reach the edges (the chart clips them there).
std::pair<size_t, size_t> shown_indices(const std::vector<double>& x, double lo, double hi) {
  size_t first = 0, last = x.empty() ? 0 : x.size() - 1;
  while (first + 1 < x.size() && x[first + 1] <= lo) ++first;
  while (last > first && x[last - 1] >= hi) --last;
  return {first, last};
}

struct EnvelopeCurves {
  const std::vector<double>&x, &nominal, &lo, &hi;
};

PlotFile envelope_plot(const std::string& chain_name, int corners, std::string_view file, std::string_view title,
                       svg::AxisSpec x_axis, std::string y_title, svg::AxisUnit y_unit, const EnvelopeCurves& c,
                       double y_floor) {
  const auto [first, last] = shown_indices(c.x, x_axis.lo, x_axis.hi);
  auto shown = [&, first = first, last = last](const std::vector<double>& v) {
    return std::vector<double>(v.begin() + static_cast<std::ptrdiff_t>(first), v.begin() + static_cast<std::ptrdiff_t>(last) + 1);
  };
  const auto x = shown(c.x), nominal = shown(c.nominal), lo = shown(c.lo), hi = shown(c.hi);
  double y_lo = std::numeric_limits<double>::infinity(), y_hi = -y_lo;
  for (const auto* v : {&nominal, &lo, &hi})
    for (size_t k = 0; k < x.size(); ++k) {
      const double y = (*v)[k];
      if (std::isfinite(y) && x[k] >= x_axis.lo && x[k] <= x_axis.hi) {
        y_lo = std::min(y_lo, y);
        y_hi = std::max(y_hi, y);
      }
    }
  y_lo = std::max(y_lo, y_floor);
  const double pad = 0.06 * std::max(y_hi - y_lo, 1e-9);
  svg::Chart chart(std::string(file.substr(0, file.size() - 4)), std::string(title),
                   fmt::format("{}: the band from the least to the greatest of {} corners, the nominal on top", chain_name,
                               corners),
                   std::move(x_axis), svg::AxisSpec{std::move(y_title), std::move(y_unit), svg::Scale::linear, y_lo - pad, y_hi + pad});
  // The band as one rectangle per grid interval, spanning both ends' extremes.
  for (size_t k = 0; k + 1 < x.size(); ++k) {
    const double a = std::min(lo[k], lo[k + 1]), b = std::max(hi[k], hi[k + 1]);
    if (std::isfinite(a) && std::isfinite(b)) chart.band(x[k], x[k + 1], a, b, svg::theme::highlight, 0.55);
  }
  svg::Stroke edge;
  edge.colour = "#b58a2a";
  edge.width = 1.0;
  chart.line(x, lo, edge, "least over the corners");
  chart.line(x, hi, edge, "greatest over the corners");
  svg::Stroke main;
  main.colour = std::string(svg::theme::main_series);
  main.width = 2.6;
  chart.line(x, nominal, main, "nominal");
  return {std::string(file), std::string(title), chart.render()};
}

// The step plot's window rule (reports/plots.cpp: 1.3 times the settling time or 3 times the
// 90 % crossing, whichever is later) applied to the band's slower edges: the last time either
// edge is outside 1 +- 1 %, and the first time the least edge reaches 0.9.
double band_step_end(const CornerEnvelope& e) {
  double settled = 0.0, t90 = 0.0;
  for (size_t k = 0; k < e.time_s.size(); ++k) {
    if (std::fabs(e.step_lo[k] - 1.0) > 0.01 || std::fabs(e.step_hi[k] - 1.0) > 0.01) settled = e.time_s[k];
    if (t90 == 0.0 && e.step_lo[k] >= 0.9) t90 = e.time_s[k];
  }
  const double end = std::max(1.3 * settled, 3.0 * t90);
  return end > e.time_s.front() && end < e.time_s.back() ? end : e.time_s.back();
}

}  // namespace

std::vector<PlotFile> envelope_plots(const std::string& chain_name, const CornerEnvelope& e,
                                     std::pair<double, double> frequency_span) {
  if (e.frequency_hz.size() < 2 || e.time_s.size() < 2) return {};
  std::vector<PlotFile> plots;
  // 60 dB below the nominal DC gain is roll-off enough to compare the corners' edges.
  const double floor_db = e.magnitude_db.front() - 60.0;
  plots.push_back(envelope_plot(chain_name, e.corners, "corners_magnitude.svg", "Magnitude across the process corners",
                                svg::AxisSpec{"Frequency", svg::AxisUnit{"Hz", true}, svg::Scale::log, frequency_span.first,
                                              frequency_span.second},
                                "Gain", svg::AxisUnit{"dB", false},
                                {e.frequency_hz, e.magnitude_db, e.magnitude_lo_db, e.magnitude_hi_db}, floor_db));
  plots.push_back(envelope_plot(chain_name, e.corners, "corners_step.svg", "Step response across the process corners",
                                svg::AxisSpec{"Time", svg::AxisUnit{"s", true}, svg::Scale::linear, e.time_s.front(), band_step_end(e)},
                                "Output \u00f7 DC gain", svg::AxisUnit{"", false}, {e.time_s, e.step, e.step_lo, e.step_hi},
                                -std::numeric_limits<double>::infinity()));
  return plots;
}

Histogram histogram(const std::vector<double>& values, int bins) {
  Histogram h;
  h.lo = std::numeric_limits<double>::infinity();
  h.hi = -h.lo;
  for (double v : values)
    if (std::isfinite(v)) {
      h.lo = std::min(h.lo, v);
      h.hi = std::max(h.hi, v);
    }
  if (!(h.hi >= h.lo) || bins < 1) return {0.0, 0.0, {}};
  h.counts.assign(static_cast<size_t>(bins), 0);
  const double width = (h.hi - h.lo) / bins;
  for (double v : values) {
    if (!std::isfinite(v)) continue;
    // The top edge belongs to the last bin; equal values all fall in the first.
    const auto b = width > 0.0 ? std::min<size_t>(static_cast<size_t>((v - h.lo) / width), h.counts.size() - 1) : 0;
    ++h.counts[b];
  }
  return h;
}

std::vector<TableView> variation_views(const VariationResult& r) {
  std::vector<TableView> views;
  TableView corners;
  corners.id = "corners";
  corners.title = "Process corners (main output)";
  corners.headings = {"Corner", "Offsets"};
  corners.align = {Align::left, Align::left};
  for (const auto* m : r.metrics) {
    corners.headings.push_back(std::string(m->label));  // the cells carry their units
    corners.align.push_back(Align::right);
  }
  const auto* checks = r.corners.empty() ? nullptr : &r.corners.front().checks;
  if (checks)
    for (const auto& c : *checks) {
      corners.headings.push_back(c.name + " " + limit_cell(c));
      corners.align.push_back(Align::right);
    }
  size_t meeting = 0;
  for (const auto& corner : r.corners) {
    std::vector<std::string> row{corner.corner.name, offsets_cell(corner.corner)};
    for (const auto* m : r.metrics) row.push_back(metric_cell(*m, m->get(corner.metrics)));
    for (const auto& c : corner.checks) row.push_back(c.met ? "pass" : "FAIL");
    corners.rows.push_back(std::move(row));
    corners.row_state.push_back(corner.checks.empty() ? "" : corner.met ? "pass" : "fail");
    meeting += corner.met ? 1 : 0;
  }
  std::string worst, same;
  for (size_t i = 0; i < r.worst.size() && i < r.metrics.size(); ++i) {
    const auto label = std::string(r.metrics[i]->label);
    if (r.worst[i].second.empty()) same += (same.empty() ? "" : ", ") + label;
    else worst += (worst.empty() ? "" : "; ") + label + ": " + r.worst[i].second;
  }
  if (!worst.empty()) corners.notes.push_back("Worst corner per metric: " + worst + ".");
  if (!same.empty()) corners.notes.push_back("The same at every corner: " + same + ".");
  if (checks && !checks->empty())
    corners.notes.push_back(fmt::format("{} of {} corners meet every check.", meeting, r.corners.size()));
  views.push_back(std::move(corners));

  if (r.monte_carlo && !r.monte_carlo->yield.empty()) {
    const auto& mc = *r.monte_carlo;
    TableView y;
    y.id = "yield";
    y.title = fmt::format("Monte Carlo yield ({} samples, seed {}, {})", mc.samples, mc.seed, to_string(mc.distribution));
    y.headings = {"Check", "Required", "Samples meeting it", "Yield"};
    y.align = {Align::left, Align::right, Align::right, Align::right};
    for (size_t i = 0; i < mc.yield.size(); ++i) {
      y.rows.push_back({mc.yield[i].name, checks && i < checks->size() ? limit_cell((*checks)[i]) : "",
                        fmt::format("{} of {}", mc.yield[i].met, mc.samples), fmt::format("{:.2f} %", 100.0 * mc.yield[i].fraction)});
      y.row_state.push_back("");
    }
    y.rows.push_back({"overall (every check)", "", fmt::format("{} of {}", mc.passed, mc.samples),
                      fmt::format("{:.2f} %", 100.0 * mc.overall_yield)});
    y.row_state.push_back("");
    y.notes.push_back(fmt::format("95 % Wilson score interval of the overall yield: {:.2f} % .. {:.2f} %.",
                                  100.0 * mc.ci95.lo, 100.0 * mc.ci95.hi));
    views.push_back(std::move(y));
  }
  return views;
}

std::string corners_csv(const VariationResult& r) {
  std::vector<std::string> columns{"row", "name"};
  for (auto c : all_variation_classes) columns.push_back("offset_" + std::string(to_string(c)));
  for (const auto* m : r.metrics) columns.push_back(std::string(m->key));
  const auto* checks = r.corners.empty() ? nullptr : &r.corners.front().checks;
  if (checks)
    for (const auto& c : *checks) columns.push_back("met_" + c.name);
  columns.push_back("met");
  for (const auto* extra : {"corner", "limit", "met_samples", "samples", "fraction", "ci95_lo", "ci95_hi"})
    columns.push_back(extra);
  auto col = [&](std::string_view name) {
    return static_cast<size_t>(std::find(columns.begin(), columns.end(), name) - columns.begin());
  };
  std::string out = csv_line(columns);
  for (const auto& corner : r.corners) {
    std::vector<std::string> f(columns.size());
    f[0] = "corner";
    f[1] = csv_field(corner.corner.name);
    for (auto c : all_variation_classes)
      if (corner.corner.named[static_cast<size_t>(c)])
        f[col("offset_" + std::string(to_string(c)))] = csv_number(corner.corner.offset[static_cast<size_t>(c)]);
    for (const auto* m : r.metrics) f[col(m->key)] = csv_number(m->get(corner.metrics));
    for (const auto& c : corner.checks) f[col("met_" + c.name)] = c.met ? "1" : "0";
    f[col("met")] = corner.met ? "1" : "0";
    out += csv_line(f);
  }
  for (const auto& [metric, corner] : r.worst) {
    std::vector<std::string> f(columns.size());
    f[0] = "worst";
    f[1] = metric;
    f[col("corner")] = csv_field(corner);
    out += csv_line(f);
  }
  if (r.monte_carlo) {
    const auto& mc = *r.monte_carlo;
    for (size_t i = 0; i < mc.yield.size(); ++i) {
      std::vector<std::string> f(columns.size());
      f[0] = "yield";
      f[1] = mc.yield[i].name;
      if (checks && i < checks->size()) f[col("limit")] = csv_number((*checks)[i].limit);
      f[col("met_samples")] = std::to_string(mc.yield[i].met);
      f[col("samples")] = std::to_string(mc.samples);
      f[col("fraction")] = csv_number(mc.yield[i].fraction);
      out += csv_line(f);
    }
    if (!mc.yield.empty()) {
      std::vector<std::string> f(columns.size());
      f[0] = "overall";
      f[1] = "every check";
      f[col("met_samples")] = std::to_string(mc.passed);
      f[col("samples")] = std::to_string(mc.samples);
      f[col("fraction")] = csv_number(mc.overall_yield);
      f[col("ci95_lo")] = csv_number(mc.ci95.lo);
      f[col("ci95_hi")] = csv_number(mc.ci95.hi);
      out += csv_line(f);
    }
  }
  return out;
}

std::vector<PlotFile> variation_plots(const std::string& chain_name, const VariationResult& r) {
  std::vector<PlotFile> plots;
  if (!r.monte_carlo) return plots;
  static const HistogramPlot kPlots[] = {
      {"bandwidth_hz", "bandwidth", "mc_bandwidth.svg", "Monte Carlo distribution of the bandwidth", "Bandwidth (\u22123 dB)",
       svg::AxisUnit{"Hz", true}, 1.0},
      {"overshoot_pct", "overshoot", "mc_overshoot.svg", "Monte Carlo distribution of the step overshoot", "Step overshoot",
       svg::AxisUnit{"%", false}, 1.0},
      {"prbs_height", "", "mc_eye_height.svg", "Monte Carlo distribution of the PRBS eye height",
       "Eye height (fraction of the ideal eye)", svg::AxisUnit{"", false}, 1.0},
  };
  for (const auto& h : kPlots)
    for (const auto& s : r.monte_carlo->stats)
      if (s.key == h.metric) plots.push_back(histogram_plot(chain_name, r, h, s.values));
  return plots;
}

}  // namespace peakplan
