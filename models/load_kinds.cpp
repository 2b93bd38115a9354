#include "models/load_kinds.hpp"

#include <array>
#include <stdexcept>

namespace peakplan {
namespace {

// The table: one entry per kind, in the order kinds are listed to users.
const std::array<const LoadKindInfo*, 5> kKinds{&plain_load, &shunt_load, &series_load,
                                                &tcoil_load, &tia_load};

}  // namespace

const LoadKindInfo& load_kind_info(LoadKind kind) {
  for (const auto* info : kKinds)
    if (info->kind == kind) return *info;
  throw std::logic_error("load kind missing from the table");
}

std::span<const LoadKindInfo> all_load_kinds() {
  static const auto copy = [] {
    std::array<LoadKindInfo, kKinds.size()> a{};
    for (size_t i = 0; i < kKinds.size(); ++i) a[i] = *kKinds[i];
    return a;
  }();
  return copy;
}

std::optional<LoadKind> load_kind_from_name(std::string_view name) {
  for (const auto* info : kKinds)
    if (info->name == name) return info->kind;
  return std::nullopt;
}

std::string_view to_string(LoadKind kind) { return load_kind_info(kind).name; }

const LoadParameter* find_parameter(const LoadKindInfo& info, std::string_view key) {
  for (const auto& p : info.parameters)
    if (p.key == key) return &p;
  return nullptr;
}

const LoadParameter* loss_of(const LoadKindInfo& info, std::string_view coil_key) {
  for (const auto& p : info.parameters)
    if (p.role == ParameterRole::loss && p.loss_of == coil_key) return &p;
  return nullptr;
}

double output_node_capacitance(const StageCircuit& stage) {
  return stage.c_node + (load_kind_info(stage.kind).drain_is_output ? stage.c_out : 0.0);
}

NodalSystem build_stage_system(const StageCircuit& stage) {
  NodalSystem system;
  const int out = load_kind_info(stage.kind).stamp(stage, system);
  system.set_output(out);
  return system;
}

}  // namespace peakplan
