// A chain of gm stages as the models see it: resolved element values, each stage's driver,
// and the capacitance each output node carries. Built by the planner from a chain file.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "models/load_kinds.hpp"
#include "models/pair_curve.hpp"
#include "models/rational.hpp"

namespace peakplan {

// A normalised design the stage was resolved from, kept so results can say how far the
// actual circuit departs from what the closed form promises.
struct DesignIntent {
  enum class Kind { none, m, zeta } kind = Kind::none;
  double value = 0.0;
  std::string label;  // "m = 0.414", "butterworth (zeta = 0.707)"
};

struct ChainStage {
  std::string id;
  StageCircuit circuit;  // circuit.c_node is filled by fill_node_capacitances
  double c_in = 0.0;     // what this stage's input presents to its driver
  double c_load = 0.0;   // extra capacitance on this stage's output node
  int driver = -1;       // index of the driving stage; -1 = the chain input
  bool tap = false;      // report this node even though it feeds other stages
  DesignIntent intent;
  // The pair's output-current limit (docs/physics.md (large signals)); none = the stage stays linear.
  std::optional<PairLimit> limit;
};

// A photodiode driving the chain's first stage (a tia) with its photocurrent.
struct Photodiode {
  double capacitance = 0.0;   // F, on the tia's input node
  double responsivity = 0.0;  // A/W
  double dark_current = 0.0;  // A, its shot noise 2 q I
  bool operator==(const Photodiode&) const = default;
};

struct Chain {
  std::string name;
  double r_source = 0.0;  // 0 = ideal voltage drive
  std::vector<ChainStage> stages;  // file order
  // Set: the input is a photocurrent into the first stage (a tia), and every transfer from the
  // input is a transimpedance in ohms. A tia without one is driven by an ideal current.
  std::optional<Photodiode> photodiode;

  int input_stage() const;                 // the stage the input drives
  std::vector<int> fed_by(int stage) const;
  // Output nodes: stages with no successor and tapped stages; the main output last.
  std::vector<int> outputs() const;
  // Stage indices from the input stage to `stage`, inclusive.
  std::vector<int> path_to(int stage) const;
  bool has_limited_stage() const;
  // The input stage takes a current (a tia): gains from the input are in ohms.
  bool current_input() const;
};

// circuit.c_node = sum of c_in of every stage fed + c_load, for every stage; circuit.c_cell_in =
// c_in, and the input stage's c_pd and i_dark from the photodiode.
void fill_node_capacitances(Chain& chain);

// Whether the input reaches the first stage through a source network with a pole of its own
// (r_source and c_in both given, and a voltage input: a tia's c_in is inside its own circuit).
bool has_source_network(const Chain& chain);
// The source network: r_source with the input stage's c_in (1 when r_source is 0).
Rational source_rational(const Chain& chain);
Rational stage_rational(const ChainStage& stage);
// The source pole (when r_source and c_in are both given) and every stage on the path to
// `output`, as rational blocks: the cascade analyze_chain, the noise model and Monte Carlo share.
Cascade output_cascade(const Chain& chain, int output);

}  // namespace peakplan
