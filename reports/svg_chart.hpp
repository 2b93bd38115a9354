// A small writer of standalone SVG charts: one plot area with linear or logarithmic axes,
// engineering tick labels, grid lines, polylines, bands, markers, text and a legend.
//
// Everything is given in data coordinates and mapped to pixels when the chart is rendered, so
// the layout (which depends on how many legend rows there are) is decided once, at the end.
// The output uses presentation attributes only, no <style> element and no ids other than ones
// starting "peakplan-<plot name>-", so several charts can be inlined into one HTML page without
// leaking styles or clashing. Coordinates are printed to 0.1 px to keep files small.
#pragma once

#include <string>
#include <string_view>
#include <variant>
#include <vector>

namespace peakplan::svg {

// &, <, >, " and ' as entities; everything else (UTF-8 included) unchanged.
std::string xml_escape(std::string_view text);

// x with at most `decimals` decimals, trailing zeros dropped, U+2212 as the minus sign and no
// negative zero: format_number(-3.0, 1) = "−3", format_number(0.25, 3) = "0.25".
std::string format_number(double x, int decimals);

// `digits` significant digits with the SI prefix that leaves 1 <= |mantissa| < 1000, trailing
// zeros dropped: engineering(4.12e10, "Hz") = "41.2 GHz", engineering(1.8e-12, "s", 2) = "1.8 ps".
std::string engineering(double value, std::string_view unit, int digits = 3);

// value with the SI prefix engineering() would give `reference`, and at most `decimals`
// decimals: engineering_as(0.97e-12, 12.1e-12, "s", 2) = "0.97 ps" (not "970 fs"), so the
// figures of one plot share a prefix.
std::string engineering_as(double value, double reference, std::string_view unit, int decimals);

enum class Scale { linear, log };

struct Tick {
  double value = 0.0;
  std::string label;   // empty for a minor tick
  bool major = true;   // major ticks carry a label and a stronger grid line
};

// How an axis labels its values: with SI prefixes (Hz, s, V; one prefix for every tick of a
// linear axis, chosen by its largest tick) or as plain numbers followed by the unit (dB, UI, "").
struct AxisUnit {
  std::string symbol;   // "Hz", "s", "dB", "UI", ""
  bool si_prefix = false;
};

// Decades inside [lo, hi] labelled ("100 MHz", "1 GHz") with minor ticks at 2..9 times each
// decade; when fewer than two decades fall inside, the 2x and 5x ticks are labelled as well.
// Requires 0 < lo < hi.
std::vector<Tick> log_ticks(double lo, double hi, const AxisUnit& unit);
// Multiples of the smallest 1-2-5 step that divides [lo, hi] into at most max_intervals parts.
// Requires lo < hi.
std::vector<Tick> linear_ticks(double lo, double hi, const AxisUnit& unit, int max_intervals = 6);

// Data to pixels along one axis. For a log scale lo and hi must be positive.
class Axis {
 public:
  Axis(Scale scale, double lo, double hi, double pixel_lo, double pixel_hi);
  double pixel(double value) const;
  double value(double pixel) const;
  Scale scale() const { return scale_; }
  double lo() const { return lo_; }
  double hi() const { return hi_; }
  double pixel_lo() const { return pixel_lo_; }
  double pixel_hi() const { return pixel_hi_; }

 private:
  double unit(double value) const;  // value in the scale's units: itself or log10
  Scale scale_;
  double lo_, hi_, pixel_lo_, pixel_hi_;
};

struct AxisSpec {
  std::string title;  // "Frequency"
  AxisUnit unit;
  Scale scale = Scale::linear;
  double lo = 0.0, hi = 1.0;
};

// The colours and type every plot shares.
namespace theme {
inline constexpr std::string_view font_family = "Helvetica, Arial, sans-serif";
inline constexpr std::string_view ink = "#22262e";
inline constexpr std::string_view muted = "#687080";
inline constexpr std::string_view frame = "#9aa0aa";
inline constexpr std::string_view grid_major = "#e2e0da";
inline constexpr std::string_view grid_minor = "#efede8";
inline constexpr std::string_view plot_fill = "#fbfaf7";
inline constexpr std::string_view main_series = "#12607c";
inline constexpr std::string_view accent = "#c23b2e";
inline constexpr std::string_view highlight = "#e9b73f";
// Stages in file order: twelve colours, then the same colours with series_dash's patterns.
std::string_view series_colour(size_t index);
std::string_view series_dash(size_t index);  // "" for the first twelve
}  // namespace theme

struct Stroke {
  std::string colour{theme::ink};
  double width = 1.5;
  std::string dash;      // SVG dash array, "" for solid
  double opacity = 1.0;
};

enum class MarkerShape { dot, ring, cross };

struct TextStyle {
  enum class Anchor { start, middle, end } anchor = Anchor::start;
  double size = 12.0;
  std::string colour{theme::ink};
  bool bold = false;
  bool halo = true;  // a white outline so text stays legible over lines
  double dx = 0.0, dy = 0.0;  // pixel offsets from the anchor point
};

class Chart {
 public:
  static constexpr double width = 720.0, height = 440.0;
  struct Box {
    double left, top, right, bottom;  // pixels; y grows downwards
  };
  // The plot area under `legend_rows` rows of legend (what render uses), for callers that need
  // the aspect ratio, such as an s-plane drawn to equal scales.
  static Box plot_box(int legend_rows);

  // plot_name is the data-plot attribute and part of every id in the document.
  Chart(std::string plot_name, std::string title, std::string subtitle, AxisSpec x, AxisSpec y);

  // A polyline through finite points, clipped to the plot area; a non-finite point breaks it.
  // A non-empty legend label adds a legend entry.
  void line(const std::vector<double>& x, const std::vector<double>& y, const Stroke& stroke,
            std::string legend = {});
  // Many polylines on one x grid with one stroke (an eye's traces), written as one group so the
  // shared attributes appear once. Each line is drawn on its own, so opacities pile up.
  void lines(const std::vector<double>& x, const std::vector<std::vector<double>>& ys, const Stroke& stroke);
  // A filled rectangle; +-infinity extends to the plot area's edge.
  void band(double x0, double x1, double y0, double y1, std::string_view colour, double opacity);
  // A straight segment in data coordinates with optional end caps (short perpendicular bars).
  void segment(double x0, double y0, double x1, double y1, const Stroke& stroke, bool caps = false);
  // name, when given, becomes the marker's data-marker attribute (for tests and browsers).
  void marker(double x, double y, MarkerShape shape, std::string_view colour, double size = 5.0,
              std::string name = {});
  void text(double x, double y, std::string content, const TextStyle& style = {});
  // Text at a fraction of the plot area (0..1 left to right, 0..1 bottom to top).
  void note(double fx, double fy, std::string content, const TextStyle& style = {});
  void legend_marker(MarkerShape shape, std::string_view colour, std::string label);

  std::string render() const;

 private:
  struct Line { std::vector<double> x, y; Stroke stroke; };
  struct LineGroup { std::vector<double> x; std::vector<std::vector<double>> ys; Stroke stroke; };
  struct Band { double x0, x1, y0, y1; std::string colour; double opacity; };
  struct Segment { double x0, y0, x1, y1; Stroke stroke; bool caps; };
  struct Marker { double x, y; MarkerShape shape; std::string colour; double size; std::string name; };
  struct Text { double x, y; bool fraction; std::string content; TextStyle style; };
  using Element = std::variant<Line, LineGroup, Band, Segment, Marker, Text>;
  struct LegendEntry { std::string label; bool is_line; Stroke stroke; MarkerShape shape; };
  struct PlacedEntry { double x, y; const LegendEntry* entry; };
  std::vector<PlacedEntry> place_legend() const;

  // render's parts, in the order they are written; each returns its SVG text.
  struct Frame;
  std::string render_heading(const Frame& f) const;
  std::string render_plot_area(const Frame& f) const;
  std::string render_grid_and_ticks(const Frame& f) const;
  std::string render_axis_titles(const Frame& f) const;
  static std::string draw(const Line& l, const Frame& f);
  static std::string draw(const LineGroup& g, const Frame& f);
  static std::string draw(const Band& b, const Frame& f);
  static std::string draw(const Segment& s, const Frame& f);
  static std::string draw(const Marker& m, const Frame& f);
  static std::string draw(const Text& t, const Frame& f);
  std::string render_legend(const std::vector<PlacedEntry>& placed) const;

  std::string name_, title_, subtitle_;
  AxisSpec x_, y_;
  std::vector<Element> elements_;
  std::vector<LegendEntry> legend_;
};

}  // namespace peakplan::svg
