#include "models/load_kinds.hpp"

#include <array>
#include <stdexcept>
#include <string>

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

int stamp_coil(NodalSystem& sys, int a, int b, double l, double r, double c_per_l) {
  const double half = 0.5 * c_per_l * l;
  if (a != NodalSystem::ground) sys.add_capacitor(a, NodalSystem::ground, half);
  if (b != NodalSystem::ground) sys.add_capacitor(b, NodalSystem::ground, half);
  return sys.add_inductor(a, b, l, r);
}

bool netlist_coil(ElementSink& w, std::string_view name, std::string_view a, std::string_view b, double l, double r,
                  double c_per_l) {
  const double half = 0.5 * c_per_l * l;
  const std::string c = "C" + std::string(name);
  if (a != "0") w.capacitor(c + "a", a, "0", half);
  if (b != "0") w.capacitor(c + "b", b, "0", half);
  return w.inductor(name, a, b, l, r);
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
