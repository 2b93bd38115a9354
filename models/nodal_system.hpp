// Modified nodal analysis of one small linear circuit: (G + sC) x = b.
//
// Unknowns are node voltages followed by inductor branch currents. Reactive stamps are held in
// scaled units (time in picoseconds, impedance in ohms: C in pF, L in pH) so that the entries of
// G and C, and the polynomial coefficients derived from them, stay within a few decades of 1.
// The stimulus is a gm cell: a current gm*v_in drawn out of one node (an inverting stage), with
// v_in = 1 V; the response is the voltage at the output node.
#pragma once

#include <Eigen/Dense>
#include <complex>
#include <optional>
#include <string>
#include <vector>

#include "models/rational.hpp"

namespace peakplan {

class NodalSystem {
 public:
  static constexpr int ground = -1;
  // Seconds per scaled time unit.
  static constexpr double time_scale = 1e-12;

  int add_node(std::string name);
  // Stamps are skipped when they would be absent (zero capacitance, infinite resistance).
  void add_resistor(int a, int b, double ohms);
  void add_conductance(int a, int b, double siemens);
  void add_capacitor(int a, int b, double farads);
  // An inductor from a to b with a series resistance; returns its branch index. The branch
  // current flows from a to b through the coil.
  int add_inductor(int a, int b, double henries, double series_ohms = 0.0);
  // Mutual inductance between two branches; positive when the two coils aid for currents
  // flowing in their a->b directions.
  void add_mutual(int branch1, int branch2, double henries);
  // Draws gm * v_in (v_in = 1 V) out of `node` to ground.
  void add_gm_drive(int node, double siemens);
  // A gm cell inside the circuit: gm * v(control) drawn out of `node` (negative gm: pushed in).
  void add_transconductance(int control, int node, double siemens);
  // Drives `node` with a current of 1 A into it (a photocurrent); the transfer is then in ohms.
  void add_current_drive(int node);
  // A shot-noise current 2 q I at `node` (a photodiode's dark current), for noise_generators.
  void add_shot_noise(int node, double amperes);
  // Drives `node` through a Thevenin source of 1 V behind `ohms` (a Norton equivalent).
  void add_source(int node, double ohms);
  void set_output(int node);

  int node_count() const { return static_cast<int>(node_names_.size()); }
  int size() const;
  const std::vector<std::string>& node_names() const { return node_names_; }

  // v_out(s) for the stimulus; s in rad/s.
  std::complex<double> transfer(std::complex<double> s) const;
  // v_out(s) and d v_out / ds (exact: dx/ds = -(G+sC)^-1 C x), s in rad/s, derivative per rad/s.
  std::pair<std::complex<double>, std::complex<double>> transfer_and_derivative(
      std::complex<double> s) const;
  // Voltage at `node` per ampere injected into it, with the stimulus removed.
  std::complex<double> impedance(int node, std::complex<double> s) const;
  // The exact transfer function as a ratio of polynomials, found by interpolating det(G + sC)
  // and det(G + sC)*v_out on a circle in the scaled s plane, with common pole-zero pairs removed.
  Rational rational() const;

  Eigen::MatrixXd G() const;
  Eigen::MatrixXd C() const;
  Eigen::VectorXd b() const;

  // A thermal noise generator of the circuit, as a right-hand side of (G + sC) x = e: +1 in row
  // `plus`, -1 in row `minus` (ground = none). Resistors (every add_resistor, add_conductance and
  // source resistance) are currents between their nodes; a coil's series loss is a voltage in
  // its branch row; a gm cell is a current at the node it drives. models/noise.hpp gives each
  // its density (4kT/R, 4kT*r, 4kT*gamma*gm).
  struct NoiseGenerator {
    enum class Kind { resistor, coil_loss, gm_cell, shot } kind;
    int plus, minus;
    // resistor: conductance (S); coil_loss: series resistance (ohm); gm_cell: gm (S); shot: current (A)
    double value;
  };
  std::vector<NoiseGenerator> noise_generators() const;
  int output_node() const { return output_; }

 private:
  struct Entry {
    int row, col;
    double value;
  };
  void stamp(std::vector<Entry>& into, int a, int b, double value);
  Eigen::MatrixXcd matrix_at(std::complex<double> s_scaled) const;
  double characteristic_rate() const;

  std::vector<std::string> node_names_;
  std::vector<Entry> g_entries_, c_entries_;
  std::vector<std::pair<int, double>> drive_;  // (unknown index, value)
  int branches_ = 0;
  int output_ = ground;
  // Branch entries must be placed after all nodes are known, so they refer to branch numbers.
  struct BranchEntry {
    int a, b, branch;
    double l_scaled, r;
  };
  std::vector<BranchEntry> inductors_;
  std::vector<std::tuple<int, int, double>> mutuals_;  // scaled

  // Assembled on first use; every add_* call clears them.
  struct Assembled {
    Eigen::MatrixXcd g, c;
    Eigen::VectorXcd b;
    Eigen::MatrixXd g_real, c_real;  // the same, for the fixed-size solves (only s is complex)
    Eigen::VectorXd b_real;
  };
  mutable std::optional<Assembled> assembled_;
  const Assembled& assembled() const;
  // Kept for noise_generators(): the stamps above merge them into matrix entries.
  std::vector<std::tuple<int, int, double>> conductances_;  // (a, b, siemens)
  std::vector<std::pair<int, double>> gm_cells_;            // (node, gm)
  std::vector<std::pair<int, double>> shot_currents_;       // (node, A)
};

}  // namespace peakplan
