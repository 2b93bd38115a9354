#include "planner/input/variation_file.hpp"

#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <map>
#include <sstream>

#include "models/units.hpp"
#include "planner/input/toml_text.hpp"
#include "planner/input/toml_reading.hpp"

namespace peakplan {
namespace {

using Keys = std::vector<std::string_view>;

const Keys kVariationKeys{"gm", "capacitance", "inductance", "resistance", "coupling",
                          "distribution", "samples", "seed", "corners", "corner"};
const Keys kClassKeys{"gm", "capacitance", "inductance", "resistance", "coupling"};
const Keys kSpreadKeys{"global", "local"};
const Keys kDistributions{"gaussian", "uniform"};
const Keys kCornerModes{"extremes", "none"};
constexpr int kMaxSamples = 1'000'000;

// "10 %" for a bare 0.1, "5 %" for a bare 5: the percentage a user most likely meant.
std::string percent_suggestion(double x, bool sign) {
  const double pct = std::fabs(x) < 1.0 ? 100.0 * x : x;
  return fmt::format("\"{}{:g} %\"", sign && pct >= 0.0 ? "+" : "", pct);
}

class VariationReader {
 public:
  explicit VariationReader(Diagnostics& diagnostics) : diag_(diagnostics) {}

  void error(const toml::node& node, std::string message) { diag_.error(position(node.source()), std::move(message)); }
  void error(SourcePosition where, std::string message) { diag_.error(std::move(where), std::move(message)); }
  size_t errors() const { return diag_.list().size() + diag_.dropped(); }

  void check_keys(const toml::table& table, const Keys& allowed, const std::string& context) {
    check_known_keys(diag_, table, allowed, context);
  }


  // A relative amount written as a percentage string ("10 %", "-12 %"). A bare number is
  // ambiguous (0.1 % or 10 %?) and is an error showing the string to write.
  std::optional<double> percent(const toml::node& node, const std::string& what, bool sign) {
    if (const auto v = node.value<double>(); v && !node.is_string()) {
      error(node, fmt::format("{}: a bare number is ambiguous here ({} as a fraction or in %?); write a "
                              "percentage string such as {}, saw {}", what, shown(node),
                              percent_suggestion(*v, sign), shown(node)));
      return std::nullopt;
    }
    const std::string example = sign ? "\"-12 %\"" : "\"10 %\"";
    if (!node.is_string()) {
      error(node, what + ": expected a percentage such as " + example + ", saw " + shown(node));
      return std::nullopt;
    }
    const std::string text = node.as_string()->get();
    const auto end = text.find_last_not_of(" \t");
    if (end == std::string::npos || text[end] != '%') {
      error(node, what + ": expected a percentage such as " + example + ", saw " + shown(node));
      return std::nullopt;
    }
    const auto parsed = parse_quantity(text, Dimension::fraction);
    if (!parsed.value) error(node, what + ": " + parsed.error);
    return parsed.value;
  }

  // An absolute coupling amount: a plain number (or a string holding one, as in "0.02").
  std::optional<double> absolute(const toml::node& node, const std::string& what) {
    if (const auto v = node.value<double>(); v && !node.is_string()) {
      if (!std::isfinite(*v)) {
        error(node, what + " must be finite, saw " + shown(node));
        return std::nullopt;
      }
      return *v;
    }
    if (node.is_string()) {
      const std::string text = node.as_string()->get();
      if (text.find('%') != std::string::npos) {
        error(node, what + ": coupling moves k by an absolute amount; write a plain number such as 0.02, not a "
                           "percentage, saw " + shown(node));
        return std::nullopt;
      }
      const auto parsed = parse_quantity(text, Dimension::dimensionless);
      if (!parsed.value) error(node, what + ": " + parsed.error);
      return parsed.value;
    }
    error(node, what + ": expected a plain number such as 0.02, saw " + shown(node));
    return std::nullopt;
  }

  // A spread: zero or positive, below 100 % (relative) or below 1 (coupling).
  std::optional<double> spread(const toml::node& node, VariationClass c, const std::string& what) {
    const auto v = is_relative(c) ? percent(node, what, false) : absolute(node, what);
    if (!v) return std::nullopt;
    if (*v < 0.0) {
      error(node, what + " must be zero or positive (a spread is a +- amount), saw " + shown(node));
      return std::nullopt;
    }
    if (is_relative(c) && *v >= 1.0) {
      error(node, what + " must be below 100 % (a spread of 100 % or more takes values to zero), saw " +
                      shown(node));
      return std::nullopt;
    }
    if (!is_relative(c) && *v >= 1.0) {
      error(node, what + " must be below 1 (k lies in (-1, 1)), saw " + shown(node));
      return std::nullopt;
    }
    return v;
  }

 private:
  Diagnostics& diag_;
};

void read_class(VariationReader& reader, const toml::node& node, VariationClass c, VariationSpec& spec) {
  const std::string who = "[variation] " + std::string(to_string(c));
  const auto ci = static_cast<size_t>(c);
  spec.class_where[ci] = position(node.source());
  const auto* t = node.as_table();
  if (!t) {
    reader.error(node, who + ": expected a table such as " +
                           std::string(is_relative(c) ? "{ global = \"10 %\", local = \"2 %\" }" : "{ global = 0.02 }") +
                           ", saw " + shown(node));
    return;
  }
  reader.check_keys(*t, kSpreadKeys, who + ": ");
  if (t->empty()) reader.error(node, who + ": give global, local or both, e.g. { global = \"10 %\" }");
  auto& s = spec.variation.spread(c);
  if (const auto* n = t->get("global"))
    if (auto v = reader.spread(*n, c, who + " global")) s.global = *v;
  if (const auto* n = t->get("local"))
    if (auto v = reader.spread(*n, c, who + " local")) s.local = *v;
  spec.given[ci] = true;
}

// A relative class must stay positive wherever a draw can take it: uniform draws reach the
// half-width, gaussian draws (cut at +-6 sigma) twice the +-3 sigma spread.
void check_reach(VariationReader& reader, const toml::table& t, VariationSpec& spec) {
  for (auto c : all_variation_classes) {
    const auto ci = static_cast<size_t>(c);
    if (!spec.given[ci] || !is_relative(c)) continue;
    const auto& s = spec.variation.spread(c);
    const bool uniform = spec.variation.distribution == Distribution::uniform;
    const double reach = (uniform ? 1.0 : 2.0) * (s.global + s.local);
    if (reach < 1.0) continue;
    const std::string total = fmt::format("{:g} %", 100.0 * (s.global + s.local));
    const std::string name(to_string(c));
    reader.error(*t.get(name),
                 uniform ? fmt::format("[variation] {}: uniform spreads global + local = {} would make some values "
                                       "zero or negative; keep global + local below 100 %", name, total)
                         : fmt::format("[variation] {}: gaussian draws reach twice the spread (they are cut at "
                                       "+-6 sigma), so global + local = {} would make some values zero or "
                                       "negative; keep global + local below 50 %", name, total));
  }
}

void read_corners(VariationReader& reader, const toml::node& node, VariationSpec& spec) {
  const auto* array = node.as_array();
  if (!array || !array->is_array_of_tables()) {
    reader.error(node, "[variation] corner must be an array of tables, written [[variation.corner]]");
    return;
  }
  Keys keys{"name"};
  keys.insert(keys.end(), kClassKeys.begin(), kClassKeys.end());
  std::map<std::string, int, std::less<>> seen;  // name -> line
  for (size_t i = 0; i < array->size(); ++i) {
    const auto& t = *array->get(i)->as_table();
    std::string who = "[[variation.corner]] " + std::to_string(i + 1) + ": ";
    NamedCornerSpec corner;
    corner.where = position(t.source());
    bool ok = true;
    if (const auto* n = t.get("name")) {
      if (!n->is_string() || n->as_string()->get().empty()) {
        reader.error(*n, who + "name must be a non-empty string, saw " + shown(*n));
        ok = false;
      } else {
        corner.corner.name = n->as_string()->get();
        corner.where = position(n->source());
        who = "corner '" + corner.corner.name + "': ";
        const auto [it, fresh] = seen.emplace(corner.corner.name, corner.where.line);
        if (!fresh) {
          reader.error(*n, fmt::format("{}name already used by the corner at line {}; corner names must differ",
                                       who, it->second));
          ok = false;
        }
      }
    } else {
      reader.error(corner.where, who + "missing name, e.g. name = \"slow\"");
      ok = false;
    }
    reader.check_keys(t, keys, who);
    for (auto c : all_variation_classes) {
      const auto* n = t.get(to_string(c));
      if (!n) continue;
      const auto ci = static_cast<size_t>(c);
      const std::string what = who + std::string(to_string(c));
      corner.offset_where[ci] = position(n->source());
      const auto v = is_relative(c) ? reader.percent(*n, what, true) : reader.absolute(*n, what);
      if (!v) {
        ok = false;
        continue;
      }
      if (is_relative(c) && *v <= -1.0) {
        reader.error(*n, what + " must be above -100 % (the value would be zero or negative), saw " + shown(*n));
        ok = false;
        continue;
      }
      if (!is_relative(c) && std::fabs(*v) >= 1.0) {
        reader.error(*n, what + " must lie in (-1, 1) (k lies in (-1, 1)), saw " + shown(*n));
        ok = false;
        continue;
      }
      corner.corner.offset[ci] = *v;
      corner.corner.named[ci] = true;
    }
    if (ok) spec.corners.push_back(std::move(corner));
  }
}

}  // namespace

std::optional<VariationSpec> read_variation(const toml::table& root, Diagnostics& diagnostics) {
  const auto* node = root.get("variation");
  if (!node) return std::nullopt;
  VariationReader reader(diagnostics);
  const auto* t = node->as_table();
  if (!t) {
    reader.error(*node, "'variation' must be a table ([variation])");
    return std::nullopt;
  }
  const size_t errors_before = reader.errors();
  VariationSpec spec;
  spec.where = position(t->source());
  reader.check_keys(*t, kVariationKeys, "[variation]: ");

  if (const auto* n = t->get("distribution")) {
    const std::string value = n->is_string() ? n->as_string()->get() : "";
    if (value == "gaussian" || value == "uniform") {
      spec.variation.distribution = value == "gaussian" ? Distribution::gaussian : Distribution::uniform;
    } else {
      const auto suggestion = n->is_string() ? closest_match(value, kDistributions) : std::string();
      reader.error(*n, "[variation] distribution: expected one of " + quoted_list(kDistributions) + ", saw " + shown(*n) +
                           (suggestion.empty() ? "" : " (did you mean \"" + suggestion + "\"?)"));
    }
  }
  for (auto c : all_variation_classes)
    if (const auto* n = t->get(to_string(c))) read_class(reader, *n, c, spec);
  check_reach(reader, *t, spec);

  if (const auto* n = t->get("samples")) {
    const auto* i = n->as_integer();
    if (!i || i->get() < 1 || i->get() > kMaxSamples)
      reader.error(*n, fmt::format("[variation] samples: expected a whole number of Monte Carlo samples from 1 to "
                                   "{}, saw {}", kMaxSamples, shown(*n)));
    else
      spec.samples = static_cast<int>(i->get());
  }
  if (const auto* n = t->get("seed")) {
    const auto* i = n->as_integer();
    if (!i || i->get() < 0)
      reader.error(*n, "[variation] seed: expected a whole number >= 0, saw " + shown(*n));
    else
      spec.seed = static_cast<std::uint64_t>(i->get());
  }
  if (const auto* n = t->get("corners")) {
    const std::string value = n->is_string() ? n->as_string()->get() : "";
    if (value == "extremes" || value == "none") {
      spec.extremes = value == "extremes";
    } else {
      const auto suggestion = n->is_string() ? closest_match(value, kCornerModes) : std::string();
      reader.error(*n, "[variation] corners: expected one of " + quoted_list(kCornerModes) + ", saw " + shown(*n) +
                           (suggestion.empty() ? "" : " (did you mean \"" + suggestion + "\"?)") +
                           "; named corners go in [[variation.corner]] tables");
    }
  }
  if (const auto* n = t->get("corner")) read_corners(reader, *n, spec);
  if (reader.errors() != errors_before) return std::nullopt;
  return spec;
}

void check_variation(const VariationSpec& spec, const Chain& chain, Diagnostics& diagnostics) {
  const auto ci = static_cast<size_t>(VariationClass::coupling);
  for (const auto& stage : chain.stages) {
    const LoadParameter* coupling = nullptr;
    for (const auto& p : load_kind_info(stage.circuit.kind).parameters)
      if (p.technology == TechnologyBound::coupling) coupling = &p;
    if (!coupling) continue;
    const double k = stage.circuit.*(coupling->field);
    if (spec.given[ci]) {
      const auto& s = spec.variation.spread(VariationClass::coupling);
      const double reach = (spec.variation.distribution == Distribution::uniform ? 1.0 : 2.0) * (s.global + s.local);
      if (std::fabs(k) + reach >= 1.0) {
        diagnostics.error(spec.class_where[ci],
                          fmt::format("[variation] coupling: draws reach k = {:g} +- {:g} at stage '{}', outside "
                                      "(-1, 1); reduce the spread", k, reach, stage.id));
        return;
      }
    }
    for (const auto& corner : spec.corners) {
      if (!corner.corner.named[ci]) continue;
      const double moved = k + corner.corner.offset[ci];
      if (!(moved > -1.0 && moved < 1.0)) {
        diagnostics.error(corner.offset_where[ci],
                          fmt::format("corner '{}': coupling moves k of stage '{}' from {:g} to {:g}, outside "
                                      "(-1, 1)", corner.corner.name, stage.id, k, moved));
        return;
      }
    }
  }
}

namespace {

// The shortest "x %" (or plain number, for coupling) that reads back to exactly `fraction`.
std::string amount_text(VariationClass c, double value, bool sign) {
  for (int digits = 1; digits <= 17; ++digits) {
    const double shown_value = is_relative(c) ? 100.0 * value : value;
    const std::string text = fmt::format("{:.{}g}", shown_value, digits);
    if (text.find('e') != std::string::npos) continue;  // "1e+01 %" reads back, but nobody writes it
    const auto parsed = parse_quantity(text + (is_relative(c) ? " %" : ""), is_relative(c) ? Dimension::fraction
                                                                                            : Dimension::dimensionless);
    if (parsed.value && *parsed.value == value) {
      const std::string signed_text = sign && value >= 0.0 ? "+" + text : text;
      return is_relative(c) ? "\"" + signed_text + " %\"" : signed_text;
    }
  }
  return fmt::format("{:.17g}", value);
}

}  // namespace

std::string variation_toml(const VariationSpec& spec) {
  std::string out = "\n[variation]\n";
  for (auto c : all_variation_classes) {
    if (!spec.given[static_cast<size_t>(c)]) continue;
    const auto& s = spec.variation.spread(c);
    out += fmt::format("{} = {{ global = {}, local = {} }}\n", to_string(c), amount_text(c, s.global, false),
                       amount_text(c, s.local, false));
  }
  out += fmt::format("distribution = \"{}\"\nsamples = {}\nseed = {}\ncorners = \"{}\"\n",
                     to_string(spec.variation.distribution), spec.samples, spec.seed,
                     spec.extremes ? "extremes" : "none");
  for (const auto& named : spec.corners) {
    out += "\n[[variation.corner]]\nname = " + toml_basic_string(named.corner.name) + "\n";
    for (auto c : all_variation_classes)
      if (named.corner.named[static_cast<size_t>(c)])
        out += fmt::format("{} = {}\n", to_string(c), amount_text(c, named.corner.offset[static_cast<size_t>(c)], true));
  }
  return out;
}

}  // namespace peakplan
