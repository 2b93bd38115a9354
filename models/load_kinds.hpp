// The four bandwidth-extension loads a gm stage can carry, and the table that describes them.
//
// A stage is a gm cell (current gm*v_in drawn from the drain node) and a passive load network
// whose AC ground is the supply. Each kind lives in its own file (load_<kind>.cpp) with its
// schematic, its closed-form response and its parameter table; adding a kind means adding
// that file and one entry in load_kinds.cpp.
#pragma once

#include <limits>
#include <optional>
#include <span>
#include <string_view>

#include "models/nodal_system.hpp"
#include "models/units.hpp"

namespace peakplan {

enum class LoadKind { plain, shunt, series, tcoil };

// Every element value of one stage, SI. Values a kind does not use are ignored.
struct StageCircuit {
  LoadKind kind = LoadKind::plain;
  double gm = 0.0;
  double rd = 0.0;
  double l = 0.0;    // shunt, series
  double r_l = 0.0;  // series resistance of l
  double l1 = 0.0, l2 = 0.0, k = 0.0, cb = 0.0;  // tcoil
  double r_l1 = 0.0, r_l2 = 0.0;                 // tcoil coil losses
  double c_w = 0.0;                              // tcoil inter-winding capacitance, each half
  double c_out = 0.0;   // the stage's own drain-node parasitic
  double c_node = 0.0;  // on the output node: c_in of every stage fed, plus c_load
  double r_load = std::numeric_limits<double>::infinity();  // on the output node; inf = open
  bool operator==(const StageCircuit&) const = default;
};

// One key a kind accepts in a [[stage]] table, beyond the keys every stage has.
struct LoadParameter {
  std::string_view key;
  Dimension dimension;
  std::string_view description;
};

struct LoadKindInfo {
  LoadKind kind;
  std::string_view name;
  std::string_view summary;
  std::span<const LoadParameter> parameters;
  // Stamps the load and the gm drive into an empty system; returns the output node.
  int (*stamp)(const StageCircuit&, NodalSystem&);
  // True when the stage's output node is its drain (plain, shunt), so c_out loads the output.
  bool drain_is_output = false;
};

const LoadKindInfo& load_kind_info(LoadKind kind);
std::span<const LoadKindInfo> all_load_kinds();
std::optional<LoadKind> load_kind_from_name(std::string_view name);
std::string_view to_string(LoadKind kind);

// Every capacitance on the stage's output node: c_node, plus c_out when the drain is the output.
double output_node_capacitance(const StageCircuit& stage);

// The stage's nodal system with its output node set, driven by v_in = 1 V.
NodalSystem build_stage_system(const StageCircuit& stage);
// Index of the drain node in a system built by build_stage_system.
constexpr int drain_node = 0;

// Kind tables, defined in load_<kind>.cpp.
extern const LoadKindInfo plain_load;
extern const LoadKindInfo shunt_load;
extern const LoadKindInfo series_load;
extern const LoadKindInfo tcoil_load;

}  // namespace peakplan
