#include "models/chain.hpp"

#include <stdexcept>

#include "models/nodal_system.hpp"

namespace peakplan {

int Chain::input_stage() const {
  for (size_t i = 0; i < stages.size(); ++i)
    if (stages[i].driver < 0) return static_cast<int>(i);
  throw std::logic_error("Chain: no input stage");
}

std::vector<int> Chain::fed_by(int stage) const {
  std::vector<int> fed;
  for (size_t i = 0; i < stages.size(); ++i)
    if (stages[i].driver == stage) fed.push_back(static_cast<int>(i));
  return fed;
}

std::vector<int> Chain::outputs() const {
  std::vector<int> result;
  int main_output = -1;
  for (size_t i = 0; i < stages.size(); ++i) {
    const int s = static_cast<int>(i);
    const bool leaf = fed_by(s).empty();
    if (leaf) main_output = s;
    if (leaf || stages[i].tap) result.push_back(s);
  }
  // The last leaf in file order is the main output and is listed last.
  std::erase(result, main_output);
  result.push_back(main_output);
  return result;
}

std::vector<int> Chain::path_to(int stage) const {
  std::vector<int> path;
  for (int s = stage; s >= 0; s = stages[static_cast<size_t>(s)].driver) {
    path.insert(path.begin(), s);
    if (path.size() > stages.size()) throw std::logic_error("Chain: cycle in drivers");
  }
  return path;
}

bool Chain::has_limited_stage() const {
  for (const auto& s : stages)
    if (s.limit) return true;
  return false;
}

bool Chain::current_input() const {
  return load_kind_info(stages[static_cast<size_t>(input_stage())].circuit.kind).current_input;
}

void fill_node_capacitances(Chain& chain) {
  for (auto& s : chain.stages) {
    s.circuit.c_node = s.c_load;
    s.circuit.c_cell_in = s.c_in;
    s.circuit.c_pd = s.circuit.i_dark = 0.0;
  }
  if (chain.photodiode && !chain.stages.empty()) {
    auto& first = chain.stages[static_cast<size_t>(chain.input_stage())].circuit;
    first.c_pd = chain.photodiode->capacitance;
    first.i_dark = chain.photodiode->dark_current;
  }
  for (const auto& s : chain.stages)
    if (s.driver >= 0) chain.stages[static_cast<size_t>(s.driver)].circuit.c_node += s.c_in;
}

Rational source_rational(const Chain& chain) {
  const double c_in = chain.stages[static_cast<size_t>(chain.input_stage())].c_in;
  if (chain.r_source <= 0.0 || c_in <= 0.0 || chain.current_input()) return Rational();
  NodalSystem source;
  const int in = source.add_node("in");
  source.add_source(in, chain.r_source);
  source.add_capacitor(in, NodalSystem::ground, c_in);
  source.set_output(in);
  return source.rational();
}

bool has_source_network(const Chain& chain) {
  const auto& input = chain.stages[static_cast<size_t>(chain.input_stage())];
  return chain.r_source > 0.0 && input.c_in > 0.0 && !chain.current_input();
}

Rational stage_rational(const ChainStage& stage) {
  return build_stage_system(stage.circuit).rational();
}

Cascade output_cascade(const Chain& chain, int output) {
  Cascade cascade;
  // The source pole only when there is one (r_source and c_in both given), as analyze_chain and
  // the noise model see the source; otherwise no block at all rather than H = 1.
  if (has_source_network(chain)) cascade.append(source_rational(chain));
  // Copies of a counted stage are the same circuit: derive each distinct circuit once.
  const ChainStage* previous = nullptr;
  for (int s : chain.path_to(output)) {
    const auto& stage = chain.stages[static_cast<size_t>(s)];
    if (previous && previous->circuit == stage.circuit)
      cascade.append(cascade.blocks().back());
    else
      cascade.append(stage_rational(stage));
    previous = &stage;
  }
  return cascade;
}

}  // namespace peakplan
