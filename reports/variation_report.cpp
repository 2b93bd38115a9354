#include "reports/variation_report.hpp"

#include <cmath>
#include <fmt/format.h>

#include "models/units.hpp"

namespace peakplan {
namespace {

nlohmann::json number(double x) { return std::isfinite(x) ? nlohmann::json(x) : nlohmann::json(nullptr); }

std::string metric_text(const CaseMetric& m, double x) {
  if (!std::isfinite(x)) return "n/a";
  if (m.unit == "dB") return fmt::format("{:.2f}", x);
  if (m.unit == "%") return fmt::format("{:.2f} %", x);
  if (m.unit == "UI") return fmt::format("{:.3f} UI", x);
  if (m.unit.empty()) return fmt::format("{:.3f}", x);
  return format_si(x, m.unit);
}

std::string heading(const CaseMetric& m) { return m.unit == "dB" ? std::string(m.label) + " dB" : std::string(m.label); }

std::string offset_text(VariationClass c, double x) {
  if (is_relative(c)) return fmt::format("{} {:+g} %", symbol(c), 100.0 * x);
  return fmt::format("{} {:+g}", symbol(c), x);
}

std::string offsets_text(const Corner& corner) {
  std::string out;
  for (auto c : all_variation_classes)
    if (corner.named[static_cast<size_t>(c)])
      out += (out.empty() ? "" : ", ") + offset_text(c, corner.offset[static_cast<size_t>(c)]);
  return out.empty() ? "-" : out;
}

std::string check_limit_text(const PlanCheck& c) {
  const std::string op = c.is_minimum ? ">= " : "<= ";
  if (c.unit == "dB") return op + fmt::format("{:.2f} dB", c.limit);
  if (c.unit == "%") return op + fmt::format("{:.2f} %", c.limit);
  return op + format_si(c.limit, c.unit, 4);
}

std::string spread_text(const VariationResult& r) {
  std::string out;
  for (auto c : all_variation_classes) {
    const auto ci = static_cast<size_t>(c);
    if (!r.spec.given[ci]) continue;
    const auto& s = r.spec.variation.spread(c);
    auto amount = [&](double x) { return is_relative(c) ? fmt::format("{:g} %", 100.0 * x) : fmt::format("{:g}", x); };
    std::string parts;
    if (s.global > 0.0) parts = "+-" + amount(s.global) + " global";
    if (s.local > 0.0) parts += (parts.empty() ? "" : ", ") + std::string("+-") + amount(s.local) + " local";
    out += fmt::format("{}{} {}", out.empty() ? "" : "; ", to_string(c), parts.empty() ? "none" : parts);
  }
  return out.empty() ? "no spreads" : out;
}

}  // namespace

nlohmann::json variation_json(const VariationResult& r) {
  nlohmann::json doc;
  doc["distribution"] = std::string(to_string(r.spec.variation.distribution));
  doc["spreads"] = nlohmann::json::object();
  for (auto c : all_variation_classes)
    if (r.spec.given[static_cast<size_t>(c)])
      doc["spreads"][std::string(to_string(c))] = {{"global", r.spec.variation.spread(c).global},
                                                   {"local", r.spec.variation.spread(c).local}};
  doc["corners"] = nlohmann::json::array();
  for (const auto& corner : r.corners) {
    nlohmann::json j;
    j["name"] = corner.corner.name;
    j["offsets"] = nlohmann::json::object();
    for (auto c : all_variation_classes)
      if (corner.corner.named[static_cast<size_t>(c)])
        j["offsets"][std::string(to_string(c))] = corner.corner.offset[static_cast<size_t>(c)];
    j["metrics"] = nlohmann::json::object();
    for (const auto* m : r.metrics) j["metrics"][std::string(m->key)] = number(m->get(corner.metrics));
    j["checks"] = nlohmann::json::array();
    for (const auto& c : corner.checks)
      j["checks"].push_back({{"name", c.name}, {"unit", c.unit}, {"value", number(c.value)}, {"limit", c.limit},
                             {"kind", c.is_minimum ? "minimum" : "maximum"}, {"margin", number(c.margin)},
                             {"met", c.met}});
    j["met"] = corner.met;
    doc["corners"].push_back(std::move(j));
  }
  doc["worst"] = nlohmann::json::object();
  for (const auto& [metric, corner] : r.worst)
    doc["worst"][metric] = corner.empty() ? nlohmann::json(nullptr) : nlohmann::json(corner);
  if (r.monte_carlo) {
    const auto& mc = *r.monte_carlo;
    nlohmann::json j;
    j["samples"] = mc.samples;
    j["seed"] = mc.seed;
    j["distribution"] = std::string(to_string(mc.distribution));
    j["stats"] = nlohmann::json::object();
    for (const auto& s : mc.stats)
      j["stats"][s.key] = {{"count", s.stats.count}, {"mean", number(s.stats.mean)}, {"std", number(s.stats.std)},
                           {"min", number(s.stats.min)}, {"p0_135", number(s.stats.p0_135)},
                           {"p50", number(s.stats.p50)}, {"p99_865", number(s.stats.p99_865)},
                           {"max", number(s.stats.max)}};
    j["yield"] = nlohmann::json::object();
    for (const auto& y : mc.yield) j["yield"][y.name] = y.fraction;
    const bool checked = !mc.yield.empty();
    j["overall_yield"] = checked ? nlohmann::json(mc.overall_yield) : nlohmann::json(nullptr);
    j["yield_ci95"] = checked ? nlohmann::json::array({mc.ci95.lo, mc.ci95.hi}) : nlohmann::json(nullptr);
    j["interval"] = "wilson";
    doc["monte_carlo"] = std::move(j);
  }
  return doc;
}

std::string variation_text(const VariationResult& r) {
  std::string out = fmt::format("\nprocess variation: {} draws, spread = {}\n  spreads: {}\n",
                                to_string(r.spec.variation.distribution),
                                r.spec.variation.distribution == Distribution::gaussian ? "+-3 sigma" : "half-width",
                                spread_text(r));
  size_t name_width = 8, offsets_width = 7;
  for (const auto& c : r.corners) {
    name_width = std::max(name_width, c.corner.name.size());
    offsets_width = std::max(offsets_width, offsets_text(c.corner).size());
  }
  const auto* first_checks = r.corners.empty() ? nullptr : &r.corners.front().checks;
  out += "corners (main output; every target and limit checked at each)\n";
  out += fmt::format("  {:<{}}  {:<{}}", "corner", name_width, "offsets", offsets_width);
  for (const auto* m : r.metrics) out += fmt::format(" {:>11}", heading(*m));
  if (first_checks)
    for (const auto& c : *first_checks) out += fmt::format(" {:>{}}", c.name, std::max<size_t>(4, c.name.size()));
  out += "\n";
  for (const auto& corner : r.corners) {
    out += fmt::format("  {:<{}}  {:<{}}", corner.corner.name, name_width, offsets_text(corner.corner), offsets_width);
    for (const auto* m : r.metrics) out += fmt::format(" {:>11}", metric_text(*m, m->get(corner.metrics)));
    for (const auto& c : corner.checks)
      out += fmt::format(" {:>{}}", c.met ? "pass" : "FAIL", std::max<size_t>(4, c.name.size()));
    out += "\n";
  }
  if (first_checks && !first_checks->empty()) {
    out += "  checks:";
    for (const auto& c : *first_checks) out += fmt::format(" {} {};", c.name, check_limit_text(c));
    out.back() = '\n';
    size_t failing = 0;
    for (const auto& c : r.corners) failing += c.met ? 0 : 1;
    out += fmt::format("  {} of {} corners meet every check\n", r.corners.size() - failing, r.corners.size());
  }
  std::string worst, same;
  for (size_t i = 0; i < r.worst.size(); ++i) {
    const auto label = std::string(r.metrics[i]->label);
    if (r.worst[i].second.empty())
      same += (same.empty() ? "" : ", ") + label;
    else
      worst += (worst.empty() ? "" : "; ") + label + " at " + r.worst[i].second;
  }
  if (!worst.empty()) out += "  worst corner per metric: " + worst + "\n";
  if (!same.empty()) out += "  the same at every corner: " + same + "\n";
  if (!r.monte_carlo) return out + "  (no Monte Carlo run here: peakplan analyze of the chain gives the yield)\n";
  const auto& mc = *r.monte_carlo;
  out += fmt::format("\nmonte carlo ({} samples, seed {}, {}; percentiles 0.135 / 50 / 99.865 are -3 / 0 / +3 sigma)\n",
                     mc.samples, mc.seed, to_string(mc.distribution));
  out += fmt::format("  {:<12} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11}\n", "metric", "mean", "std", "min",
                     "p0.135", "p50", "p99.865", "max");
  for (size_t i = 0; i < mc.stats.size(); ++i) {
    const auto& m = *r.metrics[i];
    const auto& s = mc.stats[i].stats;
    out += fmt::format("  {:<12} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11} {:>11}\n", heading(m), metric_text(m, s.mean),
                       metric_text(m, s.std), metric_text(m, s.min), metric_text(m, s.p0_135), metric_text(m, s.p50),
                       metric_text(m, s.p99_865), metric_text(m, s.max));
  }
  if (mc.yield.empty()) {
    out += "  yield: the file sets no [target] or [limits] to check\n";
    return out;
  }
  out += "  yield (fraction of samples that meet each check)\n";
  const auto& checks = r.corners.front().checks;
  for (size_t i = 0; i < mc.yield.size(); ++i)
    out += fmt::format("    {:<20} {:<16} {:>8.2f} %\n", mc.yield[i].name,
                       i < checks.size() ? check_limit_text(checks[i]) : "", 100.0 * mc.yield[i].fraction);
  out += fmt::format("    {:<37} {:>8.2f} %  (95 % Wilson score interval {:.2f} % .. {:.2f} %)\n", "overall (every check)",
                     100.0 * mc.overall_yield, 100.0 * mc.ci95.lo, 100.0 * mc.ci95.hi);
  return out;
}

}  // namespace peakplan
