#include "reports/svg_chart.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <stdexcept>

#include "reports/markup.hpp"

namespace peakplan::svg {
namespace {

constexpr std::string_view kMinus = "\u2212";

// SI prefixes from 1e-24 to 1e24 in steps of 1e3.
constexpr std::array<std::string_view, 17> kPrefixes{"y", "z", "a", "f", "p", "n", "\u00b5", "m", "",
                                                     "k", "M", "G", "T", "P", "E", "Z", "Y"};

// The exponent (a multiple of 3) of the prefix that leaves 1 <= |mantissa| < 1000.
int prefix_exponent(double magnitude) {
  if (!(magnitude > 0.0) || !std::isfinite(magnitude)) return 0;
  const int e = static_cast<int>(std::floor(std::log10(magnitude) + 1e-9));
  return std::clamp(static_cast<int>(std::floor(e / 3.0)) * 3, -24, 24);
}

std::string_view prefix(int exponent) { return kPrefixes[static_cast<size_t>((exponent + 24) / 3)]; }

std::string with_unit(std::string number, std::string_view prefix_text, std::string_view unit) {
  if (unit.empty() && prefix_text.empty()) return number;
  return fmt::format("{} {}{}", number, prefix_text, unit);
}

// Tenths of a pixel, clamped far outside the figure so a stray point cannot blow up the file.
long tenths(double pixel) { return std::lround(std::clamp(pixel, -5000.0, 5000.0) * 10.0); }

std::string tenths_text(long t) {
  const long whole = t / 10, frac = std::labs(t % 10);
  const char* sign = t < 0 && whole == 0 ? "-" : "";
  return frac == 0 ? fmt::format("{}{}", sign, whole) : fmt::format("{}{}.{}", sign, whole, frac);
}

std::string px(double pixel) { return tenths_text(tenths(pixel)); }

double text_width(std::string_view text, double size) {
  // An average advance of 0.56 em for a sans-serif face; UTF-8 continuation bytes do not count.
  double chars = 0;
  for (unsigned char c : text)
    if ((c & 0xC0) != 0x80) chars += 1;
  return chars * size * 0.56;
}

// A label placed beside a point turns to the point's other side when it would spill out of the
// plot area (over the tick labels, or off the page): an end-anchored label near the left edge
// reads to the right of its point instead.
TextStyle kept_inside(double x, std::string_view content, TextStyle style, double left, double right) {
  const double w = text_width(content, style.size);
  auto extent = [&](const TextStyle& t) -> std::pair<double, double> {
    const double at = x + t.dx;
    switch (t.anchor) {
      case TextStyle::Anchor::start: return {at, at + w};
      case TextStyle::Anchor::end: return {at - w, at};
      case TextStyle::Anchor::middle: return {at - w / 2, at + w / 2};
    }
    return {at, at};
  };
  auto [lo, hi] = extent(style);
  if (lo >= left && hi <= right) return style;
  if (style.anchor != TextStyle::Anchor::middle) {
    TextStyle mirrored = style;
    mirrored.anchor = style.anchor == TextStyle::Anchor::start ? TextStyle::Anchor::end : TextStyle::Anchor::start;
    mirrored.dx = -style.dx;
    const auto [mlo, mhi] = extent(mirrored);
    if (mlo >= left && mhi <= right) return mirrored;
  }
  // Neither side fits: shift it inside by the overhang.
  if (lo < left) style.dx += left - lo;
  else if (hi > right) style.dx -= hi - right;
  return style;
}

std::string stroke_attributes(const Stroke& s) {
  std::string a = fmt::format(R"( stroke="{}" stroke-width="{}")", s.colour, format_number(s.width, 2));
  if (!s.dash.empty()) a += fmt::format(R"( stroke-dasharray="{}")", s.dash);
  if (s.opacity < 1.0) a += fmt::format(R"( stroke-opacity="{}")", format_number(s.opacity, 3));
  return a;
}

std::string text_element(double x, double y, std::string_view content, const TextStyle& st) {
  const char* anchor = st.anchor == TextStyle::Anchor::middle ? "middle"
                       : st.anchor == TextStyle::Anchor::end  ? "end"
                                                              : "start";
  std::string a = fmt::format(R"(<text x="{}" y="{}" font-size="{}" fill="{}")", px(x + st.dx),
                              px(y + st.dy), format_number(st.size, 1), st.colour);
  if (st.anchor != TextStyle::Anchor::start) a += fmt::format(R"( text-anchor="{}")", anchor);
  if (st.bold) a += R"( font-weight="600")";
  if (st.halo)
    a += R"( stroke="#ffffff" stroke-width="3" stroke-linejoin="round" paint-order="stroke")";
  return a + ">" + xml_escape(content) + "</text>\n";
}

std::string marker_element(double x, double y, MarkerShape shape, std::string_view colour, double size,
                           std::string_view name) {
  const std::string data = name.empty() ? "" : fmt::format(R"( data-marker="{}")", xml_escape(name));
  switch (shape) {
    case MarkerShape::dot:
      return fmt::format(R"(<circle cx="{}" cy="{}" r="{}" fill="{}" stroke="#ffffff" stroke-width="1.5"{}/>)",
                         px(x), px(y), px(size), colour, data) + "\n";
    case MarkerShape::ring:
      return fmt::format(R"(<circle cx="{}" cy="{}" r="{}" fill="#ffffff" stroke="{}" stroke-width="2"{}/>)",
                         px(x), px(y), px(size), colour, data) + "\n";
    case MarkerShape::cross: {
      const double h = size * 0.85;
      return fmt::format(R"(<path d="M{} {}L{} {}M{} {}L{} {}" stroke="{}" stroke-width="2.2" stroke-linecap="round"{}/>)",
                         px(x - h), px(y - h), px(x + h), px(y + h), px(x - h), px(y + h), px(x + h),
                         px(y - h), colour, data) + "\n";
    }
  }
  return {};
}

// Path data through the finite points: relative moves between points rounded to tenths of a
// pixel, which is short and, being differences of rounded positions, does not drift.
std::string path_data(const std::vector<double>& xs, const std::vector<double>& ys, const Axis& xa, const Axis& ya) {
  std::string d;
  bool pen_down = false;
  long last_x = 0, last_y = 0;
  for (size_t i = 0; i < xs.size() && i < ys.size(); ++i) {
    const double px_x = xa.pixel(xs[i]), px_y = ya.pixel(ys[i]);
    if (!std::isfinite(px_x) || !std::isfinite(px_y)) {
      pen_down = false;
      continue;
    }
    const long tx = tenths(px_x), ty = tenths(px_y);
    if (!pen_down) {
      if (!d.empty() && d.back() == 'l') d.pop_back();  // a lone point draws nothing
      d += fmt::format("M{} {}l", tenths_text(tx), tenths_text(ty));
      pen_down = true;
    } else {
      const std::string sx = tenths_text(tx - last_x), sy = tenths_text(ty - last_y);
      if (d.back() != 'l' && sx[0] != '-') d += ' ';
      d += sx;
      if (sy[0] != '-') d += ' ';
      d += sy;
    }
    last_x = tx;
    last_y = ty;
  }
  if (!d.empty() && d.back() == 'l') d.pop_back();
  return d;
}

}  // namespace

std::string xml_escape(std::string_view text) { return escape_markup(text, "&apos;"); }

std::string format_number(double x, int decimals) {
  if (std::isnan(x)) return "n/a";
  if (std::isinf(x)) return x > 0 ? "\u221e" : std::string(kMinus) + "\u221e";
  std::string s = fmt::format("{:.{}f}", std::fabs(x), std::max(0, decimals));
  if (s.find('.') != std::string::npos) {
    while (s.back() == '0') s.pop_back();
    if (s.back() == '.') s.pop_back();
  }
  const bool zero = s.find_first_not_of("0.") == std::string::npos;
  return (x < 0 && !zero) ? std::string(kMinus) + s : s;
}

std::string engineering(double value, std::string_view unit, int digits) {
  if (!std::isfinite(value)) return with_unit(format_number(value, 0), "", unit);
  if (value == 0.0) return with_unit("0", "", unit);
  // Round to the significant digits first: 999.7e6 at 3 digits is 1 GHz, not 1000 MHz.
  const int magnitude = static_cast<int>(std::floor(std::log10(std::fabs(value))));
  const double scale = std::pow(10.0, magnitude - digits + 1);
  const double rounded = std::round(value / scale) * scale;
  const int e = prefix_exponent(std::fabs(rounded));
  const double mantissa = rounded / std::pow(10.0, e);
  const int integer_digits = static_cast<int>(std::floor(std::log10(std::fabs(mantissa)) + 1e-9)) + 1;
  return with_unit(format_number(mantissa, std::max(0, digits - integer_digits)), prefix(e), unit);
}

std::string engineering_as(double value, double reference, std::string_view unit, int decimals) {
  if (!std::isfinite(value)) return with_unit(format_number(value, 0), "", unit);
  const int e = prefix_exponent(std::fabs(reference));
  return with_unit(format_number(value / std::pow(10.0, e), decimals), prefix(e), unit);
}

std::vector<Tick> log_ticks(double lo, double hi, const AxisUnit& unit) {
  if (!(lo > 0.0 && hi > lo)) throw std::invalid_argument("log_ticks: needs 0 < lo < hi");
  auto label = [&](double v) {
    if (!unit.si_prefix) return with_unit(format_number(v, 6), "", unit.symbol);
    const int e = prefix_exponent(v);
    return with_unit(format_number(v / std::pow(10.0, e), 3), prefix(e), unit.symbol);
  };
  const double slack = 1e-9;
  const int first = static_cast<int>(std::floor(std::log10(lo) - slack));
  const int last = static_cast<int>(std::ceil(std::log10(hi) + slack));
  int decades_inside = 0;
  for (int d = first; d <= last; ++d) {
    const double v = std::pow(10.0, d);
    if (v >= lo * (1 - slack) && v <= hi * (1 + slack)) ++decades_inside;
  }
  std::vector<Tick> ticks;
  for (int d = first; d <= last; ++d) {
    for (int m = 1; m <= 9; ++m) {
      const double v = m * std::pow(10.0, d);
      if (v < lo * (1 - slack) || v > hi * (1 + slack)) continue;
      const bool major = m == 1 || (decades_inside < 2 && (m == 2 || m == 5));
      ticks.push_back({v, major ? label(v) : std::string{}, major});
    }
  }
  return ticks;
}

std::vector<Tick> linear_ticks(double lo, double hi, const AxisUnit& unit, int max_intervals) {
  if (!(hi > lo) || !std::isfinite(lo) || !std::isfinite(hi))
    throw std::invalid_argument("linear_ticks: needs finite lo < hi");
  max_intervals = std::max(1, max_intervals);
  const double raw = (hi - lo) / max_intervals;
  const double decade = std::pow(10.0, std::floor(std::log10(raw)));
  double step = 10.0 * decade;
  for (double m : {1.0, 2.0, 5.0}) {
    if (m * decade >= raw * (1 - 1e-9)) {
      step = m * decade;
      break;
    }
  }
  const long i0 = static_cast<long>(std::ceil(lo / step - 1e-9));
  const long i1 = static_cast<long>(std::floor(hi / step + 1e-9));
  double largest = 0.0;
  for (long i = i0; i <= i1; ++i) largest = std::max(largest, std::fabs(i * step));
  const int e = unit.si_prefix ? prefix_exponent(largest) : 0;
  const double unit_scale = std::pow(10.0, e);
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step / unit_scale) + 1e-9)));
  std::vector<Tick> ticks;
  for (long i = i0; i <= i1; ++i) {
    const double v = static_cast<double>(i) * step;
    ticks.push_back({v, with_unit(format_number(v / unit_scale, decimals), unit.si_prefix ? prefix(e) : "",
                                  unit.symbol),
                     true});
  }
  return ticks;
}

Axis::Axis(Scale scale, double lo, double hi, double pixel_lo, double pixel_hi)
    : scale_(scale), lo_(lo), hi_(hi), pixel_lo_(pixel_lo), pixel_hi_(pixel_hi) {
  if (!(hi > lo) || (scale == Scale::log && !(lo > 0.0)))
    throw std::invalid_argument("Axis: needs lo < hi (and lo > 0 for a log scale)");
}

double Axis::unit(double v) const { return scale_ == Scale::log ? std::log10(v) : v; }

double Axis::pixel(double v) const {
  if (scale_ == Scale::log && !(v > 0.0)) return std::numeric_limits<double>::quiet_NaN();
  return pixel_lo_ + (unit(v) - unit(lo_)) / (unit(hi_) - unit(lo_)) * (pixel_hi_ - pixel_lo_);
}

double Axis::value(double p) const {
  const double u = unit(lo_) + (p - pixel_lo_) / (pixel_hi_ - pixel_lo_) * (unit(hi_) - unit(lo_));
  return scale_ == Scale::log ? std::pow(10.0, u) : u;
}

std::string_view theme::series_colour(size_t index) {
  // Twelve hues apart in hue or lightness; past twelve stages the plots add a dash pattern
  // (series_dash), so no two legend entries look alike up to 36 stages.
  static constexpr std::array<std::string_view, 12> kColours{
      "#d3892a", "#5e8f3c", "#9b4f8c", "#3f79b8", "#c0593a", "#2f8f87",
      "#7a6bb0", "#8d7441", "#b8345f", "#56a0d3", "#a39a1f", "#e07b91"};
  return kColours[index % kColours.size()];
}

std::string_view theme::series_dash(size_t index) {
  static constexpr std::array<std::string_view, 3> kDashes{"", "6 3", "2 2"};
  return kDashes[(index / 12) % kDashes.size()];
}

Chart::Chart(std::string plot_name, std::string title, std::string subtitle, AxisSpec x, AxisSpec y)
    : name_(std::move(plot_name)), title_(std::move(title)), subtitle_(std::move(subtitle)),
      x_(std::move(x)), y_(std::move(y)) {
  // Fail here, where the caller is, rather than at render time.
  Axis(x_.scale, x_.lo, x_.hi, 0, 1);
  Axis(y_.scale, y_.lo, y_.hi, 0, 1);
}

void Chart::line(const std::vector<double>& x, const std::vector<double>& y, const Stroke& stroke,
                 std::string legend) {
  if (x.size() != y.size()) throw std::invalid_argument("Chart::line: x and y differ in length");
  elements_.emplace_back(Line{x, y, stroke});
  if (!legend.empty()) legend_.push_back({std::move(legend), true, stroke, MarkerShape::dot});
}

void Chart::lines(const std::vector<double>& x, const std::vector<std::vector<double>>& ys, const Stroke& stroke) {
  for (const auto& y : ys)
    if (y.size() != x.size()) throw std::invalid_argument("Chart::lines: x and y differ in length");
  elements_.emplace_back(LineGroup{x, ys, stroke});
}

void Chart::band(double x0, double x1, double y0, double y1, std::string_view colour, double opacity) {
  elements_.emplace_back(Band{x0, x1, y0, y1, std::string(colour), opacity});
}

void Chart::segment(double x0, double y0, double x1, double y1, const Stroke& stroke, bool caps) {
  elements_.emplace_back(Segment{x0, y0, x1, y1, stroke, caps});
}

void Chart::marker(double x, double y, MarkerShape shape, std::string_view colour, double size,
                   std::string name) {
  elements_.emplace_back(Marker{x, y, shape, std::string(colour), size, std::move(name)});
}

void Chart::text(double x, double y, std::string content, const TextStyle& style) {
  elements_.emplace_back(Text{x, y, false, std::move(content), style});
}

void Chart::note(double fx, double fy, std::string content, const TextStyle& style) {
  elements_.emplace_back(Text{fx, fy, true, std::move(content), style});
}

void Chart::legend_marker(MarkerShape shape, std::string_view colour, std::string label) {
  Stroke s;
  s.colour = std::string(colour);
  legend_.push_back({std::move(label), false, s, shape});
}

namespace {
constexpr double kLeft = 80.0, kRight = Chart::width - 26.0, kBottom = Chart::height - 56.0;
constexpr double kLegendTop = 66.0, kRowHeight = 19.0, kFont = 12.0;
}  // namespace

Chart::Box Chart::plot_box(int legend_rows) {
  const double top = legend_rows > 0 ? kLegendTop + (legend_rows - 1) * kRowHeight + 16.0 : kLegendTop;
  return {kLeft, top, kRight, kBottom};
}

std::vector<Chart::PlacedEntry> Chart::place_legend() const {
  // Entries flow in rows under the subtitle; the plot area starts below them.
  std::vector<PlacedEntry> placed;
  double x = kLeft, y = kLegendTop;
  for (const auto& e : legend_) {
    const double w = 26.0 + text_width(e.label, kFont) + 20.0;
    if (x > kLeft && x + w > kRight) {
      x = kLeft;
      y += kRowHeight;
    }
    placed.push_back({x, y, &e});
    x += w;
  }
  return placed;
}

// The layout render decides once the legend is placed: the plot box, the data-to-pixel maps
// and the document-wide ids every part draws with.
struct Chart::Frame {
  double left, top, right, bottom;
  Axis xa, ya;
  std::string id_prefix;  // ids are document-wide once inlined into HTML: "peakplan-<plot name>"
  std::string clip;       // the plot area's clip path

  // Pixels of a data value, +-infinity standing for the plot area's edges.
  double x_px(double v) const { return std::isinf(v) ? (v > 0 ? right : left) : xa.pixel(v); }
  double y_px(double v) const { return std::isinf(v) ? (v > 0 ? top : bottom) : ya.pixel(v); }
};

std::string Chart::render() const {
  const auto placed = place_legend();
  const int rows = placed.empty() ? 0 : static_cast<int>(std::lround((placed.back().y - kLegendTop) / kRowHeight)) + 1;
  const auto box = plot_box(rows);
  const Frame f{box.left,
                box.top,
                box.right,
                box.bottom,
                Axis(x_.scale, x_.lo, x_.hi, box.left, box.right),
                Axis(y_.scale, y_.lo, y_.hi, box.bottom, box.top),
                "peakplan-" + name_,
                "peakplan-" + name_ + "-plot-area"};

  std::string out;
  out.reserve(64 * 1024);
  out += render_heading(f);
  out += render_plot_area(f);
  out += render_grid_and_ticks(f);
  out += render_axis_titles(f);
  for (const auto& element : elements_) out += std::visit([&](const auto& e) { return draw(e, f); }, element);
  out += fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" fill="none" stroke="{}" stroke-width="1"/>)" "\n",
                     px(f.left), px(f.top), px(f.right - f.left), px(f.bottom - f.top), theme::frame);
  out += "</g>\n";
  out += render_legend(placed);
  out += "</svg>\n";
  return out;
}

// The document's opening, its title and the subtitle.
std::string Chart::render_heading(const Frame& f) const {
  std::string out = fmt::format(
      R"(<svg xmlns="http://www.w3.org/2000/svg" class="peakplan-plot" data-plot="{}" width="{}" height="{}" viewBox="0 0 {} {}" font-family="{}" role="img" aria-labelledby="{}-title">)"
      "\n",
      xml_escape(name_), width, height, width, height, xml_escape(theme::font_family), xml_escape(f.id_prefix));
  out += fmt::format(R"(<title id="{}-title">{}</title>)" "\n", xml_escape(f.id_prefix), xml_escape(title_));
  out += fmt::format(R"(<rect width="{}" height="{}" fill="#ffffff"/>)" "\n", width, height);
  out += text_element(f.left - 56.0, 30.0, title_, {TextStyle::Anchor::start, 17.0, std::string(theme::ink), true, false});
  if (subtitle_.empty()) return out;
  // A long chain name must not run off the page: the subtitle's type shrinks to fit (to 9 px).
  // Longer still, it is cut at a character boundary and ends in an ellipsis.
  const double room = width - 12.0 - (f.left - 56.0);
  const double size = std::clamp(12.5 * room / std::max(1.0, text_width(subtitle_, 12.5)), 9.0, 12.5);
  std::string shown = subtitle_;
  if (text_width(shown, size) > room) {
    while (!shown.empty() && text_width(shown + "\u2026", size) > room) {
      while (!shown.empty() && (static_cast<unsigned char>(shown.back()) & 0xC0) == 0x80) shown.pop_back();
      if (!shown.empty()) shown.pop_back();  // the character's lead byte, or an ASCII character
    }
    shown += "\u2026";
  }
  return out + text_element(f.left - 56.0, 49.0, shown, {TextStyle::Anchor::start, size, std::string(theme::muted), false, false});
}

// The plot area's group (left open for the grid, the elements and the frame), its clip path and
// its fill. The mapping is published on the group so tests and scripts can turn pixels back
// into data.
std::string Chart::render_plot_area(const Frame& f) const {
  std::string out = fmt::format(
      R"(<g class="plot-area" data-x-scale="{}" data-x-domain="{} {}" data-x-pixels="{} {}" data-y-scale="{}" data-y-domain="{} {}" data-y-pixels="{} {}">)"
      "\n",
      x_.scale == Scale::log ? "log" : "linear", x_.lo, x_.hi, f.left, f.right,
      y_.scale == Scale::log ? "log" : "linear", y_.lo, y_.hi, f.bottom, f.top);
  out += fmt::format(R"(<clipPath id="{}"><rect x="{}" y="{}" width="{}" height="{}"/></clipPath>)" "\n",
                     xml_escape(f.clip), px(f.left), px(f.top), px(f.right - f.left), px(f.bottom - f.top));
  out += fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" fill="{}"/>)" "\n", px(f.left), px(f.top),
                     px(f.right - f.left), px(f.bottom - f.top), theme::plot_fill);
  return out;
}

// Grid lines at every tick (minor ones first, fainter) and the major ticks' labels.
std::string Chart::render_grid_and_ticks(const Frame& f) const {
  const auto xticks = x_.scale == Scale::log ? log_ticks(x_.lo, x_.hi, x_.unit) : linear_ticks(x_.lo, x_.hi, x_.unit);
  const auto yticks = y_.scale == Scale::log ? log_ticks(y_.lo, y_.hi, y_.unit) : linear_ticks(y_.lo, y_.hi, y_.unit);
  std::string minor_d, major_d;
  for (const auto& t : xticks) {
    auto& d = t.major ? major_d : minor_d;
    d += fmt::format("M{} {}V{}", px(f.xa.pixel(t.value)), px(f.top), px(f.bottom));
  }
  for (const auto& t : yticks) {
    auto& d = t.major ? major_d : minor_d;
    d += fmt::format("M{} {}H{}", px(f.left), px(f.ya.pixel(t.value)), px(f.right));
  }
  std::string out;
  if (!minor_d.empty())
    out += fmt::format(R"(<path d="{}" stroke="{}" stroke-width="1" fill="none"/>)" "\n", minor_d, theme::grid_minor);
  if (!major_d.empty())
    out += fmt::format(R"(<path d="{}" stroke="{}" stroke-width="1" fill="none"/>)" "\n", major_d, theme::grid_major);
  const TextStyle tick_style{TextStyle::Anchor::middle, kFont, std::string(theme::muted), false, false};
  for (const auto& t : xticks)
    if (!t.label.empty()) out += text_element(f.xa.pixel(t.value), f.bottom + 18.0, t.label, tick_style);
  TextStyle ytick_style = tick_style;
  ytick_style.anchor = TextStyle::Anchor::end;
  for (const auto& t : yticks)
    if (!t.label.empty()) out += text_element(f.left - 7.0, f.ya.pixel(t.value) + 4.0, t.label, ytick_style);
  return out;
}

// The x axis title under the tick labels, the y axis title turned to read upwards.
std::string Chart::render_axis_titles(const Frame& f) const {
  const TextStyle axis_title{TextStyle::Anchor::middle, 13.0, std::string(theme::ink), false, false};
  std::string out = text_element((f.left + f.right) / 2.0, f.bottom + 42.0, x_.title, axis_title);
  out += fmt::format(R"~(<g transform="translate({} {}) rotate(-90)">)~", px(f.left - 62.0), px((f.top + f.bottom) / 2.0));
  out += text_element(0.0, 0.0, y_.title, axis_title);
  return out + "</g>\n";
}

std::string Chart::draw(const Line& l, const Frame& f) {
  const std::string d = path_data(l.x, l.y, f.xa, f.ya);
  if (d.empty()) return {};
  return fmt::format(R"~(<path d="{}" fill="none"{} stroke-linejoin="round" clip-path="url(#{})"/>)~" "\n", d,
                     stroke_attributes(l.stroke), xml_escape(f.clip));
}

std::string Chart::draw(const LineGroup& g, const Frame& f) {
  std::string out = fmt::format(R"~(<g fill="none"{} stroke-linejoin="round" clip-path="url(#{})">)~" "\n",
                                stroke_attributes(g.stroke), xml_escape(f.clip));
  for (const auto& y : g.ys) {
    const std::string d = path_data(g.x, y, f.xa, f.ya);
    if (!d.empty()) out += fmt::format(R"(<path d="{}"/>)" "\n", d);
  }
  return out + "</g>\n";
}

std::string Chart::draw(const Band& b, const Frame& f) {
  const double x0 = std::clamp(f.x_px(b.x0), f.left, f.right), x1 = std::clamp(f.x_px(b.x1), f.left, f.right);
  const double y0 = std::clamp(f.y_px(b.y0), f.top, f.bottom), y1 = std::clamp(f.y_px(b.y1), f.top, f.bottom);
  if (!std::isfinite(x0 + x1 + y0 + y1)) return {};
  return fmt::format(R"(<rect x="{}" y="{}" width="{}" height="{}" fill="{}" fill-opacity="{}"/>)" "\n",
                     px(std::min(x0, x1)), px(std::min(y0, y1)), px(std::fabs(x1 - x0)), px(std::fabs(y1 - y0)),
                     b.colour, format_number(b.opacity, 3));
}

std::string Chart::draw(const Segment& s, const Frame& f) {
  const double x0 = f.x_px(s.x0), y0 = f.y_px(s.y0), x1 = f.x_px(s.x1), y1 = f.y_px(s.y1);
  if (!std::isfinite(x0 + y0 + x1 + y1)) return {};
  std::string d = fmt::format("M{} {}L{} {}", px(x0), px(y0), px(x1), px(y1));
  if (s.caps) {
    // Bars of 8 px across the segment's direction at both ends.
    const double len = std::hypot(x1 - x0, y1 - y0);
    const double nx = len > 0 ? -(y1 - y0) / len * 4.0 : 0.0, ny = len > 0 ? (x1 - x0) / len * 4.0 : 4.0;
    d += fmt::format("M{} {}L{} {}M{} {}L{} {}", px(x0 - nx), px(y0 - ny), px(x0 + nx), px(y0 + ny),
                     px(x1 - nx), px(y1 - ny), px(x1 + nx), px(y1 + ny));
  }
  return fmt::format(R"(<path d="{}" fill="none"{} stroke-linecap="round"/>)" "\n", d, stroke_attributes(s.stroke));
}

std::string Chart::draw(const Marker& m, const Frame& f) {
  const double x = f.xa.pixel(m.x), y = f.ya.pixel(m.y);
  if (!std::isfinite(x) || !std::isfinite(y)) return {};
  return marker_element(x, y, m.shape, m.colour, m.size, m.name);
}

std::string Chart::draw(const Text& t, const Frame& f) {
  const double x = t.fraction ? f.left + t.x * (f.right - f.left) : f.x_px(t.x);
  const double y = t.fraction ? f.bottom - t.y * (f.bottom - f.top) : f.y_px(t.y);
  if (!std::isfinite(x) || !std::isfinite(y)) return {};
  return text_element(x, y, t.content, kept_inside(x, t.content, t.style, f.left, f.right));
}

// The legend's rows above the plot area: a stroke sample or a marker, then the label.
std::string Chart::render_legend(const std::vector<PlacedEntry>& placed) const {
  if (placed.empty()) return {};
  std::string out = "<g class=\"legend\">\n";
  for (const auto& p : placed) {
    const auto& e = *p.entry;
    if (e.is_line) {
      Stroke s = e.stroke;
      s.width = std::max(s.width, 2.0);
      s.opacity = std::max(s.opacity, 0.8);
      out += fmt::format(R"(<path d="M{} {}h22" fill="none"{}/>)" "\n", px(p.x), px(p.y), stroke_attributes(s));
    } else {
      out += marker_element(p.x + 11.0, p.y, e.shape, e.stroke.colour, 5.0, "");
    }
    out += text_element(p.x + 28.0, p.y + 4.0, e.label, {TextStyle::Anchor::start, kFont, std::string(theme::ink), false, false});
  }
  return out + "</g>\n";
}

}  // namespace peakplan::svg
