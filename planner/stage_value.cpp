#include "planner/stage_value.hpp"

#include <limits>

namespace peakplan {

double stage_value(const ChainStage& stage, std::string_view key) {
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  const auto& c = stage.circuit;
  // A limiting stage's tail current (docs/physics.md (large signals)), on every kind.
  if (key == "tail_current") return stage.limit ? stage.limit->tail_current : nan;
  const auto& info = load_kind_info(c.kind);
  const bool common = key == "gm" || key == "rd" || key == "c_in" || key == "c_out" || key == "c_load" || key == "r_load";
  bool in_kind = false;
  for (const auto& p : info.parameters) in_kind = in_kind || p.key == key;
  if (!common && !in_kind) return nan;
  if (key == "gm") return c.gm;
  if (key == "rd") return c.rd;
  if (key == "c_in") return stage.c_in;
  if (key == "c_out") return c.c_out;
  if (key == "c_load") return stage.c_load;
  if (key == "r_load") return c.r_load;
  if (const auto* p = find_parameter(info, key); p && p->field) return c.*(p->field);
  return nan;
}

}  // namespace peakplan
