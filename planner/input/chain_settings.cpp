#include "planner/input/chain_settings.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <fmt/format.h>
#include <sstream>
#include <toml++/toml.h>
#include <utility>

#include "models/units.hpp"
#include "planner/input/chain_file.hpp"

namespace peakplan {
namespace {

using Flat = std::vector<std::pair<std::string, std::string>>;

// Strings in double quotes as a user types them (TOML++ would print 'literal' strings); a float
// to 9 digits, as a written plan's 4.0000000000000003e-15 is 4e-15 to a reader.
std::string toml_text(const toml::node& node) {
  if (const auto* text = node.as_string()) return "\"" + text->get() + "\"";
  if (const auto* x = node.as_floating_point()) return fmt::format("{:.9g}", x->get());
  std::ostringstream out;
  node.visit([&](const auto& value) { out << value; });
  return out.str();
}

// The value a setting's text stands for, in SI: a number, or a quantity with its unit ("50 ohm"
// and 50 are one setting, as a written plan gives what its file wrote with a unit). None for a
// word ("auto", "shunt"), a list or a table.
std::optional<double> setting_value(const std::string& text) {
  if (text.size() >= 2 && text.front() == '"' && text.back() == '"') {
    const std::string inner = text.substr(1, text.size() - 2);
    for (int d = 0; d <= static_cast<int>(Dimension::dimensionless); ++d)
      if (const auto parsed = parse_quantity(inner, static_cast<Dimension>(d)); parsed.value) return parsed.value;
    return std::nullopt;
  }
  double x = 0.0;
  const auto [end, error] = std::from_chars(text.data(), text.data() + text.size(), x);
  if (error != std::errc{} || end != text.data() + text.size()) return std::nullopt;
  return x;
}

// Two settings are the same when their texts are, or when both stand for the same number (to
// 1e-9, the writer's round trip is exact but a unit's prefix need not be).
bool same_setting(const std::string& a, const std::string& b) {
  if (a == b) return true;
  const auto x = setting_value(a), y = setting_value(b);
  return x && y && std::fabs(*x - *y) <= 1e-9 * std::max(std::fabs(*x), std::fabs(*y));
}

void flatten(const toml::table& table, const std::string& prefix, Flat& out) {
  for (const auto& [key, node] : table) {
    const std::string name = prefix.empty() ? std::string(key.str()) : prefix + "." + std::string(key.str());
    if (const auto* inner = node.as_table()) {
      flatten(*inner, name, out);
    } else {
      out.emplace_back(name, toml_text(node));
    }
  }
}

std::string stage_name(const toml::table& stage, size_t index) {
  if (const auto id = stage["id"].value<std::string>()) return "stage " + *id;
  return "stage #" + std::to_string(index + 1);
}

Flat flat_settings(std::string_view text) {
  Flat out;
  toml::table root;
  try {
    root = toml::parse(text);
  } catch (const toml::parse_error&) {
    return out;
  }
  for (const auto& [key, node] : root) {
    const std::string name(key.str());
    if (const auto* table = node.as_table()) {
      flatten(*table, name, out);
    } else if (const auto* stages = node.as_array(); stages && name == "stage") {
      for (size_t i = 0; i < stages->size(); ++i)
        if (const auto* stage = stages->get(i)->as_table()) {
          Flat one;
          flatten(*stage, "", one);
          for (auto& [k, v] : one)
            if (k != "id") out.emplace_back(stage_name(*stage, i) + "." + k, std::move(v));
        }
    } else {
      out.emplace_back(name, toml_text(node));
    }
  }
  return out;
}

bool is_stage_key(const std::string& key) { return key.starts_with("stage "); }
std::string stage_of(const std::string& key) { return key.substr(0, key.find('.')); }

// compare's stage table already says which stages only one file has; their keys are not repeated.
bool stage_in(const Flat& flat, const std::string& key) {
  const std::string stage = stage_of(key) + ".";
  for (const auto& kv : flat)
    if (kv.first.starts_with(stage)) return true;
  return false;
}

// The chain's name: compare's header shows it.
bool shown_elsewhere(const std::string& key) { return key == "chain.name"; }

// The value a file that leaves `key` out has: a written plan writes these defaults out, and a
// default written out is no difference from a key left to it.
std::optional<double> default_of(const std::string& key) {
  if (key == "input.r_source") return ChainSpec{}.r_source;
  if (key == "technology.gamma") return TechnologySpec{}.gamma;
  if (key == "technology.temperature") return TechnologySpec{}.temperature;
  if (key == "signal.target_ber") return SignalSpec{}.target_ber;
  // A coil's series loss: none unless given (or from [technology] inductor_q, written nonzero).
  if (is_stage_key(key) && (key.ends_with(".r_l") || key.ends_with(".r_l1") || key.ends_with(".r_l2"))) return 0.0;
  return std::nullopt;
}

// The same for the words a written plan writes out.
std::optional<std::string> default_word(const std::string& key) {
  if (key == "signal.modulation") return std::string(to_string(SignalSpec{}.modulation));
  if (key == "signal.pattern") return SignalSpec{}.pattern;
  if (key == "target.objective") return std::string(to_string(TargetSpec{}.objective));
  return std::nullopt;
}

bool is_default(const std::string& key, const std::string& text) {
  if (const auto word = default_word(key)) {
    std::string lower = text;
    std::transform(lower.begin(), lower.end(), lower.begin(), [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
    return lower == "\"" + *word + "\"";
  }
  const auto d = default_of(key);
  const auto v = setting_value(text);
  return d && v && std::fabs(*v - *d) <= 1e-9 * std::fabs(*d);
}

const std::string* find(const Flat& flat, const std::string& key) {
  for (const auto& [k, v] : flat)
    if (k == key) return &v;
  return nullptr;
}

}  // namespace

std::vector<SettingDifference> setting_differences(std::string_view text_a, std::string_view text_b) {
  const Flat a = flat_settings(text_a), b = flat_settings(text_b);
  std::vector<SettingDifference> out;
  for (const auto& [key, value] : a) {
    if (shown_elsewhere(key) || (is_stage_key(key) && !stage_in(b, key))) continue;
    const std::string* other = find(b, key);
    if (!other) {
      if (!is_default(key, value)) out.push_back({key, value, std::nullopt});
    } else if (!same_setting(value, *other)) {
      out.push_back({key, value, *other});
    }
  }
  for (const auto& [key, value] : b)
    if (!shown_elsewhere(key) && !find(a, key) && !(is_stage_key(key) && !stage_in(a, key)) && !is_default(key, value))
      out.push_back({key, std::nullopt, value});
  return out;
}

bool is_signal_setting(const SettingDifference& difference) { return difference.key.starts_with("signal."); }

}  // namespace peakplan
