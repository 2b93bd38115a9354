#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <string>
#include <vector>

#include "models/eye_traces.hpp"
#include "reports/plots.hpp"
#include "reports/svg_chart.hpp"
#include "reports/variation_views.hpp"
#include "test_support.hpp"

using namespace peakplan;

namespace {

constexpr double kTs = 1e-12;  // the rational blocks' time scale

// One plain stage, gm 20 mS into 100 ohm and 100 fF (tau = 10 ps), driven ideally.
Chain one_stage_chain(std::string id = "a1") {
  Chain chain;
  chain.name = "one plain stage (test)";
  chain.stages.push_back(test::make_stage(std::move(id), -1, test::plain_circuit(0.02, 100.0, 100e-15), 0.0));
  fill_node_capacitances(chain);
  return chain;
}

Signal nrz(double bit_rate, PrbsKind pattern = PrbsKind::prbs7) {
  Signal s;
  s.bit_rate = bit_rate;
  s.pattern = pattern;
  return s;
}

AnalysisOptions with_signal(const Signal& signal) {
  AnalysisOptions o;
  o.signal = signal;
  return o;
}

std::vector<std::string> labels(const std::vector<svg::Tick>& ticks, bool major) {
  std::vector<std::string> r;
  for (const auto& t : ticks)
    if (t.major == major && major) r.push_back(t.label);
  return r;
}

// The value of attribute `name` in the first element carrying `anchor` (e.g. data-marker="x").
std::string attribute_near(const std::string& svg, const std::string& anchor, const std::string& name) {
  const auto at = svg.find(anchor);
  if (at == std::string::npos) return {};
  const auto open = svg.rfind('<', at);
  const auto close = svg.find('>', at);
  const std::string element = svg.substr(open, close - open);
  const auto key = element.find(" " + name + "=\"");
  if (key == std::string::npos) return {};
  const auto start = key + name.size() + 3;
  return element.substr(start, element.find('"', start) - start);
}

std::pair<double, double> two_numbers(const std::string& text) {
  char* end = nullptr;
  const double a = std::strtod(text.c_str(), &end);
  const double b = std::strtod(end, nullptr);
  return {a, b};
}

// The axis a plot publishes on its plot-area group: scale, domain and pixel range.
svg::Axis published_axis(const std::string& svg, char which) {
  const std::string prefix = std::string("data-") + which + "-";
  const auto scale = attribute_near(svg, "class=\"plot-area\"", prefix + "scale");
  const auto [lo, hi] = two_numbers(attribute_near(svg, "class=\"plot-area\"", prefix + "domain"));
  const auto [p0, p1] = two_numbers(attribute_near(svg, "class=\"plot-area\"", prefix + "pixels"));
  return svg::Axis(scale == "log" ? svg::Scale::log : svg::Scale::linear, lo, hi, p0, p1);
}

// A small XML checker: one root element that is <svg>, every tag closed in order, attribute
// values quoted, and every '&' the start of an entity. Returns "" or what is wrong.
std::string xml_problem(const std::string& doc) {
  if (doc.rfind("<svg", 0) != 0) return "does not start with <svg";
  std::vector<std::string> open;
  bool root_closed = false;
  size_t i = 0;
  auto entity_ok = [&](size_t at) {
    for (const char* e : {"&amp;", "&lt;", "&gt;", "&quot;", "&apos;"})
      if (doc.compare(at, std::char_traits<char>::length(e), e) == 0) return true;
    return false;
  };
  while (i < doc.size()) {
    if (doc[i] == '&' && !entity_ok(i)) return "bare & at " + std::to_string(i);
    if (doc[i] != '<') {
      if (root_closed && !std::isspace(static_cast<unsigned char>(doc[i]))) return "text after the root";
      ++i;
      continue;
    }
    if (root_closed) return "a second root element";
    const bool closing = doc[i + 1] == '/';
    size_t j = i + (closing ? 2 : 1);
    const size_t name_start = j;
    while (j < doc.size() && (std::isalnum(static_cast<unsigned char>(doc[j])) || doc[j] == '-' || doc[j] == ':')) ++j;
    const std::string name = doc.substr(name_start, j - name_start);
    if (name.empty()) return "empty tag name at " + std::to_string(i);
    bool self_closing = false;
    while (j < doc.size() && doc[j] != '>') {
      if (doc[j] == '"') {
        const size_t end = doc.find('"', j + 1);
        if (end == std::string::npos) return "unterminated attribute";
        for (size_t k = j + 1; k < end; ++k) {
          if (doc[k] == '<') return "< inside an attribute";
          if (doc[k] == '&' && !entity_ok(k)) return "bare & in an attribute";
        }
        j = end + 1;
        continue;
      }
      if (doc[j] == '\'') return "single-quoted attribute";
      if (doc[j] == '/' && j + 1 < doc.size() && doc[j + 1] == '>') self_closing = true;
      ++j;
    }
    if (j >= doc.size()) return "unterminated tag";
    if (closing) {
      if (open.empty() || open.back() != name) return "</" + name + "> closes " + (open.empty() ? "nothing" : open.back());
      open.pop_back();
      if (open.empty()) root_closed = true;
    } else if (!self_closing) {
      open.push_back(name);
    } else if (open.empty()) {
      return "self-closing root";
    }
    i = j + 1;
  }
  if (!open.empty()) return "<" + open.back() + "> never closed";
  return root_closed ? "" : "no root";
}

// At the sample of `offset_s`, the lowest trace of `upper` minus the highest of `lower`.
double traced_opening(const EyeTraces& tr, double offset_s, int lower, int upper) {
  const auto it = std::min_element(tr.offset_s.begin(), tr.offset_s.end(), [&](double a, double b) {
    return std::fabs(a - offset_s) < std::fabs(b - offset_s);
  });
  const auto k = static_cast<size_t>(it - tr.offset_s.begin());
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (const auto& t : tr.traces) {
    if (t.level == upper) lo = std::min(lo, t.y[k]);
    if (t.level == lower) hi = std::max(hi, t.y[k]);
  }
  return lo - hi;
}

}  // namespace

TEST_CASE("plots: a log axis from 100 MHz to 100 GHz labels its four decades") {
  // derived: the decades 1e8 .. 1e11 lie inside; 2x .. 9x of the first three are minor ticks.
  const auto ticks = svg::log_ticks(1e8, 1e11, {"Hz", true});
  CHECK(labels(ticks, true) == std::vector<std::string>{"100 MHz", "1 GHz", "10 GHz", "100 GHz"});
  CHECK(std::count_if(ticks.begin(), ticks.end(), [](const svg::Tick& t) { return !t.major; }) == 24);
  // derived: 2 GHz .. 8 GHz holds no decade, so the 2x and 5x ticks carry the labels.
  CHECK(labels(svg::log_ticks(2e9, 8e9, {"Hz", true}), true) == std::vector<std::string>{"2 GHz", "5 GHz"});
}

TEST_CASE("plots: linear ticks take the smallest 1-2-5 step and one prefix per axis") {
  // derived: 87 ps / 6 intervals = 14.5 ps, so the step is 20 ps.
  const auto ps = svg::linear_ticks(0.0, 87e-12, {"s", true});
  CHECK(labels(ps, true) == std::vector<std::string>{"0 ps", "20 ps", "40 ps", "60 ps", "80 ps"});
  REQUIRE(ps.size() == 5);
  CHECK(ps[3].value == doctest::Approx(60e-12).epsilon(1e-12));
  // derived: 1.5 ns / 6 = 0.25 ns, step 0.5 ns; the largest tick picks "n" for every label.
  CHECK(labels(svg::linear_ticks(0.0, 1.5e-9, {"s", true}), true) ==
        std::vector<std::string>{"0 ns", "0.5 ns", "1 ns", "1.5 ns"});
  // derived: dB takes no prefix; negative values carry U+2212.
  CHECK(labels(svg::linear_ticks(-3.0, 0.0, {"dB", false}, 3), true) ==
        std::vector<std::string>{"\u22123 dB", "\u22122 dB", "\u22121 dB", "0 dB"});
  CHECK(labels(svg::linear_ticks(-40.0, 12.0, {"dB", false}), true) ==
        std::vector<std::string>{"\u221240 dB", "\u221230 dB", "\u221220 dB", "\u221210 dB", "0 dB", "10 dB"});
}

TEST_CASE("plots: engineering labels round before choosing the prefix") {
  // derived: three significant digits.
  CHECK(svg::engineering(4.12e10, "Hz") == "41.2 GHz");
  CHECK(svg::engineering(999.7e6, "Hz") == "1 GHz");
  CHECK(svg::engineering(-2.5e-3, "V", 2) == "\u22122.5 mV");
  CHECK(svg::engineering_as(0.97e-12, 12.1e-12, "s", 2) == "0.97 ps");
  CHECK(svg::format_number(-0.0001, 2) == "0");
}

TEST_CASE("plots: text is XML-escaped wherever a stage id appears") {
  CHECK(svg::xml_escape("<b>&\"'") == "&lt;b&gt;&amp;&quot;&apos;");
  const auto chain = one_stage_chain("a<b>&\"'");
  const auto plots = chain_plots(chain, analyze_chain(chain, with_signal(nrz(40e9))));
  REQUIRE(plots.size() == 5);
  for (const auto& p : plots) {
    CAPTURE(p.name);
    CHECK(p.svg.find("<b>") == std::string::npos);
    CHECK(p.svg.find("&\"'") == std::string::npos);
    CHECK(xml_problem(p.svg) == "");
  }
  CHECK(plots[0].svg.find("a&lt;b&gt;&amp;&quot;&apos;") != std::string::npos);
}

TEST_CASE("plots: every plot is a well-formed standalone SVG, the same bytes each time") {
  const auto chain = one_stage_chain();
  const auto analysis = analyze_chain(chain, with_signal(nrz(40e9)));
  const auto plots = chain_plots(chain, analysis);
  std::vector<std::string> names;
  for (const auto& p : plots) names.push_back(p.name);
  CHECK(names == std::vector<std::string>{"magnitude.svg", "group_delay.svg", "step.svg", "eye.svg", "pole_zero.svg"});
  for (const auto& p : plots) {
    CAPTURE(p.name);
    CHECK(xml_problem(p.svg) == "");
    const std::string id = p.name.substr(0, p.name.size() - 4);
    CHECK(p.svg.find("class=\"peakplan-plot\" data-plot=\"" + id + "\"") != std::string::npos);
    CHECK(p.svg.find("<title") != std::string::npos);
    CHECK(!p.title.empty());
  }
  CHECK(chain_plots(chain, analysis)[3].svg == plots[3].svg);
  // Without a signal there is no eye, and the rest keep their order.
  CHECK(chain_plots(chain, analyze_chain(chain)).size() == 4);
  AnalysisOptions bare;
  bare.keep_waveforms = false;
  CHECK_THROWS_AS(chain_plots(chain, analyze_chain(chain, bare)), std::invalid_argument);
}

TEST_CASE("plots: the -3 dB marker sits on the analysed bandwidth") {
  const auto chain = one_stage_chain();
  const auto analysis = analyze_chain(chain);
  const double bw = analysis.outputs.back().response.frequency.bandwidth_hz;
  // derived: a single pole at 1/(2 pi R C) with R C = 10 ps; the metric bisects to ~1e-14 in log f.
  CHECK(bw == doctest::Approx(1.0 / (2.0 * test::pi * 10e-12)).epsilon(1e-9));
  const auto svg_text = chain_plots(chain, analysis).front().svg;
  const auto x = published_axis(svg_text, 'x');
  const auto y = published_axis(svg_text, 'y');
  CHECK(x.scale() == svg::Scale::log);
  const double cx = std::strtod(attribute_near(svg_text, "data-marker=\"bandwidth\"", "cx").c_str(), nullptr);
  const double cy = std::strtod(attribute_near(svg_text, "data-marker=\"bandwidth\"", "cy").c_str(), nullptr);
  // common practice: within one pixel of where the axis puts the bandwidth (printed to 0.1 px).
  CHECK(std::fabs(cx - x.pixel(bw)) <= 1.0);
  CHECK(x.value(cx) == doctest::Approx(bw).epsilon(0.01));
  // derived: gm Rd = 2 is 6.02 dB; the marker is 10 log10(2) = 3.01 dB below it.
  CHECK(std::fabs(cy - y.pixel(20.0 * std::log10(2.0) - 10.0 * std::log10(2.0))) <= 1.0);
}

TEST_CASE("plots: the traced eye opening is the one the models measured") {
  const auto chain = one_stage_chain();
  for (auto modulation : {Modulation::nrz, Modulation::pam4}) {
    CAPTURE(static_cast<int>(modulation));
    Signal signal = nrz(40e9, PrbsKind::prbs9);
    signal.modulation = modulation;
    const auto analysis = analyze_chain(chain, with_signal(signal));
    const auto& eye = *analysis.outputs.back().eye;
    REQUIRE(eye.traces);
    const auto& tr = *eye.traces;
    const auto& prbs = eye.estimate.prbs;
    CHECK(tr.symbols_overlaid == prbs.symbols_overlaid);
    // derived: the traces are the same superposition summed in the same order, and the kept
    // ones include every trace that sets an inner edge at the best offset.
    double worst = std::numeric_limits<double>::infinity();
    for (int e = 0; e < tr.eye_count(); ++e)
      worst = std::min(worst, tr.eye_count() * traced_opening(tr, prbs.eye.best_offset_s, e, e + 1));
    CHECK(std::fabs(worst - prbs.eye.height) < 1e-9);
    for (int e = 0; e < tr.eye_count(); ++e) {
      const auto& m = tr.eyes[static_cast<size_t>(e)];
      const auto& opening = prbs.eyes[static_cast<size_t>(e)];
      CHECK(std::fabs(tr.eye_count() * (m.edges.upper_bottom - m.edges.lower_top) - opening.height) < 1e-9);
      // derived: the same interpolation as the model's open span.
      CHECK(std::fabs((m.width_right_s - m.width_left_s) / tr.ui_s - opening.width_ui) < 1e-9);
    }
    CHECK(tr.traces.size() <= 512);
    CHECK(tr.offset_s.front() >= -tr.ui_s * (1 + 1e-12));
    CHECK(tr.offset_s.back() <= tr.ui_s * (1 + 1e-12));
  }
}

TEST_CASE("plots: thinned and truncated overlays still hold the edge-setting traces") {
  const auto chain = one_stage_chain();
  const auto cascade = output_cascade(chain, chain.outputs().back());
  // prbs23 exceeds the overlay bound: the truncated, seeded branch of the overlay.
  for (auto pattern : {PrbsKind::prbs9, PrbsKind::prbs23}) {
    CAPTURE(static_cast<int>(pattern));
    const auto signal = nrz(40e9, pattern);
    const auto estimate = estimate_eye(cascade, signal);
    const auto tr = eye_traces(estimate.pulse, estimate.prbs, signal, {16, 8});
    CHECK(tr.traces.size() <= 16);
    CHECK(tr.offset_s.size() <= 2 * 8 + 1);
    // derived: as above, to rounding.
    CHECK(std::fabs(traced_opening(tr, estimate.prbs.eye.best_offset_s, 0, 1) - estimate.prbs.eye.height) < 1e-9);
  }
}

TEST_CASE("plots: an ideal chain traces exactly 0 and 1 at the sampling instant") {
  // derived: a pure gain holds each symbol's level for its whole UI and nothing after.
  const Cascade ideal({Rational({-3.0}, {1.0}, kTs)});
  const auto signal = nrz(56e9);
  const auto estimate = estimate_eye(ideal, signal);
  const auto tr = eye_traces(estimate.pulse, estimate.prbs, signal);
  const auto k = static_cast<size_t>(std::min_element(tr.offset_s.begin(), tr.offset_s.end(), [&](double a, double b) {
                                       return std::fabs(a - estimate.prbs.eye.best_offset_s) <
                                              std::fabs(b - estimate.prbs.eye.best_offset_s);
                                     }) - tr.offset_s.begin());
  REQUIRE(tr.traces.size() == 127);  // derived: prbs7's period, below the bound
  int ones = 0;
  for (const auto& t : tr.traces) {
    CHECK(std::fabs(t.y[k] - t.level) < 1e-12);
    ones += t.level;
  }
  // derived: a period holds every nonzero 7-bit word once, and 2^6 of them start with a one.
  CHECK(ones == 64);
}

TEST_CASE("plots: every stage alone and every cascade are sampled over one span, edge to edge") {
  // Two stages whose own bandwidths are two decades apart (tau 10 ps and 1 ps): each alone
  // would pick its own natural span; drawn together each must reach both ends of the axis.
  Chain chain;
  chain.name = "two stages a decade apart (test)";
  chain.stages.push_back(test::make_stage("slow", -1, test::plain_circuit(0.02, 100.0, 100e-15), 0.0));
  chain.stages.push_back(test::make_stage("fast", 0, test::plain_circuit(0.02, 10.0, 100e-15), 0.0));
  fill_node_capacitances(chain);
  const auto analysis = analyze_chain(chain);
  const auto& main = analysis.outputs.back().response.sampled;
  REQUIRE_FALSE(main.frequency_hz.empty());
  for (const auto& s : analysis.stages) {
    CAPTURE(s.stage);
    REQUIRE_FALSE(s.alone.sampled.frequency_hz.empty());
    CHECK(s.alone.sampled.frequency_hz.front() == main.frequency_hz.front());
    CHECK(s.alone.sampled.frequency_hz.back() == main.frequency_hz.back());
  }
}

TEST_CASE("plots: twelve stages get twelve colours, and later stages a dash pattern besides") {
  std::vector<std::string> colours;
  for (size_t i = 0; i < 12; ++i) {
    colours.emplace_back(svg::theme::series_colour(i));
    CHECK(svg::theme::series_dash(i).empty());
  }
  std::sort(colours.begin(), colours.end());
  CHECK(std::unique(colours.begin(), colours.end()) == colours.end());
  CHECK(svg::theme::series_colour(12) == svg::theme::series_colour(0));
  CHECK_FALSE(svg::theme::series_dash(12).empty());
  CHECK(svg::theme::series_dash(24) != svg::theme::series_dash(12));
}

TEST_CASE("plots: labels stay inside the plot area and a long subtitle inside the page") {
  const svg::AxisSpec x{"x", {"", false}, svg::Scale::linear, 0.0, 1.0};
  const svg::AxisSpec y{"y", {"", false}, svg::Scale::linear, 0.0, 1.0};
  const std::string long_name(160, 'n');
  svg::Chart chart("labels", "labels", long_name, x, y);
  svg::TextStyle left_of_point;
  left_of_point.anchor = svg::TextStyle::Anchor::end;
  left_of_point.dx = -6.0;
  // An end-anchored label at the left edge would run over the tick labels: it turns to the right.
  chart.text(0.0, 0.5, "a label that reads leftwards", left_of_point);
  svg::TextStyle right_of_point;
  right_of_point.dx = 6.0;
  chart.text(1.0, 0.5, "a label that reads rightwards", right_of_point);
  const std::string out = chart.render();
  const auto left_label = out.rfind('<', out.find("a label that reads leftwards"));
  CHECK(out.substr(left_label, 120).find("text-anchor=\"end\"") == std::string::npos);
  const auto right_label = out.rfind('<', out.find("a label that reads rightwards"));
  CHECK(out.substr(right_label, 120).find("text-anchor=\"end\"") != std::string::npos);
  // The subtitle's type shrinks (from 12.5 px, to 9 px at least); longer still, it is cut and
  // ends in an ellipsis, so its estimated width (0.56 em a character) stays on the 720 px page.
  const auto subtitle_at = out.find(std::string(20, 'n'));
  REQUIRE(subtitle_at != std::string::npos);
  const auto subtitle = out.rfind('<', subtitle_at);
  const double size = std::strtod(attribute_near(out.substr(subtitle), "font-size", "font-size").c_str(), nullptr);
  CHECK(size == doctest::Approx(9.0));
  const auto end = out.find("</text>", subtitle_at);
  const std::string shown = out.substr(subtitle_at, end - subtitle_at);
  CHECK(shown.ends_with("\u2026"));
  CHECK(static_cast<double>(shown.size() - 2) * size * 0.56 <= 720.0);  // the ellipsis is 3 bytes, 1 character
  svg::Chart short_chart("labels", "labels", "a short subtitle", x, y);
  const std::string short_out = short_chart.render();
  CHECK(attribute_near(short_out.substr(short_out.rfind('<', short_out.find("a short subtitle"))), "font-size",
                       "font-size") == "12.5");
}

// The Monte Carlo histogram's bins (reports/variation_views.hpp).
TEST_CASE("plots: a histogram's bins count every finite value once, the top edge in the last bin") {
  // 0, 1, ..., 99 in 10 equal bins over [0, 99]: width 9.9, so value v falls in floor(v / 9.9)
  // (derived by hand: 0..9 -> bin 0, 10..19 -> bin 1, ..., 90..98 -> bin 9, and 99, the top
  // edge, in bin 9 too), ten values in each bin.
  std::vector<double> values;
  for (int i = 0; i < 100; ++i) values.push_back(i);
  values.push_back(std::numeric_limits<double>::quiet_NaN());  // a bandwidth never reached
  const auto h = peakplan::histogram(values, 10);
  REQUIRE(h.counts.size() == 10);
  CHECK(h.lo == 0.0);
  CHECK(h.hi == 99.0);
  size_t total = 0;
  for (auto c : h.counts) total += c;
  CHECK(total == 100);
  for (size_t b = 0; b < 10; ++b) CHECK(h.counts[b] == 10);
  // Equal values all land in the first bin.
  const auto flat = peakplan::histogram({2.0, 2.0, 2.0}, 5);
  CHECK(flat.counts[0] == 3);
}
