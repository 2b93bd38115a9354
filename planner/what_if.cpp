#include "planner/what_if.hpp"

#include <algorithm>

#include "planner/input/overrides.hpp"
#include "planner/input/chain_input.hpp"

namespace peakplan {

bool has_open_values(const StageSpec& stage) {
  if (!stage.kind_is_fixed() || !stage.count.is_fixed()) return true;
  return std::any_of(stage.values.begin(), stage.values.end(), [](const auto& kv) { return !kv.second.is_fixed(); });
}

std::optional<WhatIfSpec> load_what_if(const std::string& path, const WhatIf& what_if, Diagnostics& diagnostics,
                                       const PlanOptions& options) {
  const auto sets = parse_overrides(what_if.sets, diagnostics);
  const auto text = read_chain_text(path, diagnostics);
  if (!sets || !text) return std::nullopt;
  WhatIfSpec out;
  std::vector<Override> overrides;

  if (!what_if.locks.empty()) {
    const auto as_written = parse_chain_spec(*text, diagnostics);
    if (!as_written) return std::nullopt;
    const auto ids = stage_ids(*as_written);
    const std::vector<std::string_view> candidates(ids.begin(), ids.end());
    std::vector<const StageSpec*> open;
    for (const auto& id : what_if.locks) {
      const auto it = std::find_if(as_written->stages.begin(), as_written->stages.end(),
                                   [&](const StageSpec& s) { return s.id == id; });
      if (it == as_written->stages.end()) {
        const auto suggestion = closest_match(id, candidates);
        std::string message = "no [[stage]] with id '" + id + "'";
        if (!suggestion.empty()) {
          message += "; did you mean '" + suggestion + "'?";
        } else {
          message += "; the stages are";
          for (size_t i = 0; i < ids.size(); ++i) message += (i ? ", " : " ") + ids[i];
        }
        diagnostics.error({0, 0, "--lock " + id}, message);
      } else if (has_open_values(*it) &&
                 std::none_of(open.begin(), open.end(), [&](const StageSpec* s) { return s->id == id; })) {
        open.push_back(&*it);
      }
    }
    if (!diagnostics.empty()) return std::nullopt;
    if (!open.empty()) {
      const auto baseline = plan_chain(*as_written, diagnostics, options);
      if (!baseline) return std::nullopt;
      out.baseline = baseline->termination;
      const std::string planned = planned_chain_toml(*as_written, *baseline);
      for (const auto* stage : open) {
        overrides.push_back({"--lock " + stage->id, stage->id, "", planned});
        out.locked_from_plan.push_back(stage->id);
      }
    }
  }
  overrides.insert(overrides.end(), sets->begin(), sets->end());
  auto spec = parse_chain_spec(*text, overrides, diagnostics);
  if (!spec) return std::nullopt;
  out.spec = std::move(*spec);
  return out;
}

}  // namespace peakplan
