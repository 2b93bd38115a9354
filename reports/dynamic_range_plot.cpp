#include "reports/dynamic_range_plot.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "reports/svg_chart.hpp"

namespace peakplan {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct Series {
  std::string_view file, title, axis, unit, marker;
  double (*get)(const SweepRow::LargeSignal&);
};

PlotFile series_plot(const SweepResult& sweep, double file_swing_v, const Series& s) {
  std::vector<double> x, y;
  for (const auto& r : sweep.rows) {
    x.push_back(r.value);
    y.push_back(r.large_signal ? s.get(*r.large_signal) : kNaN);
  }
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (double v : y)
    if (std::isfinite(v)) {
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  if (!(hi >= lo)) lo = 0.0, hi = 1.0;
  const double top = hi > 0.0 ? 1.12 * hi : 1.0;
  svg::Chart chart(std::string(s.file.substr(0, s.file.size() - 4)), std::string(s.title),
                   fmt::format("{}: {} points, log-spaced from {} to {} (the file's swing /{:g} to \u00d7{:g})",
                               sweep.chain_name, sweep.rows.size(), svg::engineering(x.front(), "V"),
                               svg::engineering(x.back(), "V"), kDynamicRangeDecade, kDynamicRangeDecade),
                   svg::AxisSpec{"Input swing (differential peak to peak)", svg::AxisUnit{"V", true}, svg::Scale::log,
                                 x.front(), x.back()},
                   svg::AxisSpec{std::string(s.axis), svg::AxisUnit{std::string(s.unit), true}, svg::Scale::linear,
                                 std::min(0.0, lo), top});
  svg::Stroke line;
  line.colour = std::string(svg::theme::main_series);
  line.width = 2.4;
  chart.line(x, y, line);
  for (size_t i = 0; i < x.size(); ++i)
    if (std::isfinite(y[i])) chart.marker(x[i], y[i], svg::MarkerShape::dot, svg::theme::main_series, 3.0);
  // The file's swing is the middle point of the sweep.
  const auto& mid = sweep.rows[sweep.rows.size() / 2];
  const double at = mid.large_signal ? s.get(*mid.large_signal) : kNaN;
  svg::Stroke mark;
  mark.colour = std::string(svg::theme::accent);
  mark.width = 1.2;
  mark.dash = "3 3";
  chart.segment(file_swing_v, -std::numeric_limits<double>::infinity(), file_swing_v,
                std::numeric_limits<double>::infinity(), mark);
  if (std::isfinite(at)) {
    chart.marker(mid.value, at, svg::MarkerShape::dot, svg::theme::accent, 5.5, std::string(s.marker));
    svg::TextStyle t;
    t.colour = std::string(svg::theme::accent);
    t.bold = true;
    t.dx = 8.0;
    t.dy = 16.0;
    chart.text(mid.value, at, fmt::format("{} at the file's swing {}", svg::engineering(at, s.unit),
                                          svg::engineering(file_swing_v, "V")), t);
  }
  return {std::string(s.file), std::string(s.title), chart.render()};
}

}  // namespace

std::vector<PlotFile> dynamic_range_plots(const SweepResult& sweep, double file_swing_v) {
  if (!sweep.has_large_signal || sweep.rows.size() < 2) return {};
  static const Series kSeries[] = {
      {"dynamic_range.svg", "Clipped eye height against the input swing", "Eye height (differential)", "V",
       "file-swing-height", [](const SweepRow::LargeSignal& l) { return l.height_v; }},
      {"dynamic_range_ddj.svg", "Data-dependent jitter of the clipped eye against the input swing", "DDJ (peak to peak)",
       "s", "file-swing-ddj", [](const SweepRow::LargeSignal& l) { return l.ddj_pp_s; }},
  };
  std::vector<PlotFile> plots;
  for (const auto& s : kSeries) plots.push_back(series_plot(sweep, file_swing_v, s));
  return plots;
}

}  // namespace peakplan
