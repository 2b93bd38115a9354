#include "planner/input/overrides.hpp"

#include <algorithm>
#include <fmt/format.h>
#include <memory>

#include "planner/input/toml_text.hpp"
#include "planner/input/chain_input.hpp"
#include "models/load_kinds.hpp"

namespace peakplan {
namespace {

const std::vector<std::string_view> kTables{"chain", "input", "signal", "target", "limits", "technology"};

// A source region that names the option, so the reader's positions of what it inserts carry it.
toml::source_region command_line_region(const std::string& origin) {
  toml::source_region region;
  region.begin = {1, 1};
  region.end = {1, 1};
  region.path = std::make_shared<const std::string>(command_line_path(origin));
  return region;
}

// The value as a one-key document parsed under the option's source path; nullopt when it is
// not exactly one TOML value.
std::optional<toml::table> parse_value_document(const std::string& value_text, const std::string& origin) {
  if (too_deep_at(value_text)) return std::nullopt;  // then a string, like any text that is not TOML
  try {
    toml::table doc = toml::parse("v = " + value_text + "\n", command_line_path(origin));
    if (doc.size() != 1 || !doc.get("v")) return std::nullopt;
    return doc;
  } catch (const toml::parse_error&) {
    return std::nullopt;
  }
}

// Moves the override's value into `table` under its key; nodes are moved, never copied,
// because TOML++ drops the source region of a copied node.
void set_value(toml::table& table, const Override& o) {
  auto doc = parse_value_document(o.value, o.origin);
  if (!doc) doc = parse_value_document(toml_basic_string(o.value), o.origin);
  if (!doc) throw std::logic_error("a quoted TOML string did not parse: " + o.value);
  toml::key key(o.key, command_line_region(o.origin));
  doc->get("v")->visit([&](auto& concrete) { table.insert_or_assign(key, std::move(concrete)); });
}

// A design and the elements it sets exclude each other in a file; an override of one replaces
// the other (--set a1.zeta=0.8 on a stage written with response = "bessel", or --set a2.l=...
// on one written with m), so that sweeping a design or an element just works. Only for a stage
// of one fixed kind: with candidates the loader's own message is the clearer one.
void clear_replaced_design(toml::table& stage, std::string_view key) {
  const auto* kind_node = stage.get("kind");
  const auto kind = kind_node && kind_node->is_string() ? load_kind_from_name(kind_node->as_string()->get()) : std::nullopt;
  if (!kind) return;
  const auto& info = load_kind_info(*kind);
  const auto* p = find_parameter(info, key);
  if (!p || info.design == DesignFactor::none) return;
  for (const auto& q : info.parameters) {
    if (q.key == key) continue;
    const bool replaced = p->role == ParameterRole::design ? (q.role == ParameterRole::design || q.role == ParameterRole::element)
                          : p->role == ParameterRole::element ? q.role == ParameterRole::design
                                                              : false;
    if (replaced) stage.erase(q.key);
  }
}

std::vector<toml::table*> stage_tables_with_id(toml::table& root, std::string_view id) {
  std::vector<toml::table*> found;
  auto* stages = root.get_as<toml::array>("stage");
  if (!stages) return found;
  for (auto& element : *stages) {
    auto* table = element.as_table();
    if (!table) continue;
    const auto* node = table->get_as<std::string>("id");
    if (node && node->get() == id) found.push_back(table);
  }
  return found;
}

std::vector<std::string> stage_ids_of(toml::table& root) {
  std::vector<std::string> ids;
  if (auto* stages = root.get_as<toml::array>("stage"))
    for (auto& element : *stages)
      if (const auto* table = element.as_table())
        if (const auto* id = table->get_as<std::string>("id")) ids.push_back(id->get());
  return ids;
}

void report_unknown_target(toml::table& root, const Override& o, Diagnostics& diagnostics) {
  const auto ids = stage_ids_of(root);
  std::vector<std::string_view> candidates(ids.begin(), ids.end());
  candidates.insert(candidates.end(), kTables.begin(), kTables.end());
  const auto suggestion = closest_match(o.target, candidates);
  std::string message = fmt::format("no [[stage]] with id '{}' and no table of that name", o.target);
  if (!suggestion.empty()) {
    message += "; did you mean '" + suggestion + "'?";
  } else {
    message += "; expected a stage id (";
    for (size_t i = 0; i < ids.size(); ++i) message += (i ? ", " : "") + ids[i];
    message += ") or one of chain, input, signal, target, limits, technology";
  }
  diagnostics.error({0, 0, o.origin}, message);
}

// Replaces every [[stage]] table with the override's id by the one of that id in its text.
void replace_stage(toml::table& root, const Override& o, Diagnostics& diagnostics) {
  try {
    for (auto* table : stage_tables_with_id(root, o.target)) {
      // A parse per target: the replacement is moved in, keeping its source regions.
      toml::table doc = toml::parse(o.value, command_line_path(o.origin));
      const auto replacements = stage_tables_with_id(doc, o.target);
      if (replacements.size() != 1)
        throw std::logic_error("a stage replacement must hold exactly one stage '" + o.target + "'");
      *table = std::move(*replacements.front());
    }
  } catch (const toml::parse_error& e) {
    diagnostics.error({0, 0, o.origin}, "TOML syntax in the replacement stage: " + std::string(e.description()));
  }
}

}  // namespace

const std::vector<std::string_view>& overridable_tables() { return kTables; }

std::optional<Override> parse_override(std::string_view text, std::string_view option, Diagnostics& diagnostics) {
  Override o;
  o.origin = std::string(option) + " " + std::string(text);
  if (const auto at = not_text_at(text)) {
    diagnostics.error({0, 0, o.origin},
                      fmt::format("byte {} (0x{:02X}) is not UTF-8 text; an override is ID.KEY=VALUE in UTF-8", *at + 1,
                                  static_cast<unsigned char>(text[*at])));
    return std::nullopt;
  }
  const auto equals = text.find('=');
  const auto lhs = text.substr(0, equals);
  const auto dot = lhs.rfind('.');
  if (equals == std::string_view::npos || dot == std::string_view::npos || dot == 0 || dot + 1 == lhs.size()) {
    diagnostics.error({0, 0, o.origin}, fmt::format("expected ID.KEY=VALUE (a stage id or table name, a key, a "
                                                    "value), e.g. {} a1.rd=80ohm or {} target.gain=30dB",
                                                    option, option));
    return std::nullopt;
  }
  o.target = std::string(lhs.substr(0, dot));
  o.key = std::string(lhs.substr(dot + 1));
  o.value = std::string(text.substr(equals + 1));
  if (o.value.empty()) {
    diagnostics.error({0, 0, o.origin}, "missing VALUE after '='");
    return std::nullopt;
  }
  return o;
}

std::optional<std::vector<Override>> parse_overrides(const std::vector<std::string>& texts, Diagnostics& diagnostics) {
  std::vector<Override> out;
  bool ok = true;
  for (const auto& text : texts) {
    if (auto o = parse_override(text, "--set", diagnostics))
      out.push_back(std::move(*o));
    else
      ok = false;
  }
  if (!ok) return std::nullopt;
  return out;
}

void apply_overrides(toml::table& root, const std::vector<Override>& overrides, Diagnostics& diagnostics) {
  for (const auto& o : overrides) {
    const auto stages = stage_tables_with_id(root, o.target);
    if (o.key.empty()) {
      if (stages.empty())
        report_unknown_target(root, o, diagnostics);
      else
        replace_stage(root, o, diagnostics);
      continue;
    }
    if (!stages.empty()) {
      for (auto* table : stages) {
        clear_replaced_design(*table, o.key);
        set_value(*table, o);
      }
      continue;
    }
    if (std::find(kTables.begin(), kTables.end(), o.target) == kTables.end()) {
      report_unknown_target(root, o, diagnostics);
      continue;
    }
    if (!root.get(o.target)) root.insert_or_assign(o.target, toml::table{});
    // Not a table in the file: the reader reports that, at the file's line.
    if (auto* table = root.get_as<toml::table>(o.target)) set_value(*table, o);
  }
}

}  // namespace peakplan
