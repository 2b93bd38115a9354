// Small builders shared by the model tests.
#pragma once

#include <cmath>
#include <complex>
#include <numbers>

#include "models/analysis.hpp"
#include "models/chain.hpp"
#include <string>
#include "models/load_kinds.hpp"
#include "models/peaking_design.hpp"

namespace peakplan::test {

inline constexpr double pi = std::numbers::pi;
inline std::complex<double> jw(double f_hz) { return {0.0, 2.0 * pi * f_hz}; }

// A stage with round numbers: gm 20 mS, Rd 100 ohm, 100 fF on the output node (tau = 10 ps).
inline StageCircuit plain_stage(double rd = 100.0, double c = 100e-15) {
  StageCircuit s;
  s.kind = LoadKind::plain;
  s.gm = 0.02;
  s.rd = rd;
  s.c_node = c;
  return s;
}

inline StageCircuit shunt_stage(double m, double rd = 100.0, double c = 100e-15) {
  StageCircuit s = plain_stage(rd, c);
  s.kind = LoadKind::shunt;
  s.l = inductance_for_m(m, rd, c);
  return s;
}

inline StageCircuit tcoil_stage(double zeta, double rd = 100.0, double c = 100e-15) {
  StageCircuit s = plain_stage(rd, c);
  s.kind = LoadKind::tcoil;
  const auto d = tcoil_for_zeta(zeta, rd, c);
  s.l1 = s.l2 = d.l_half;
  s.k = d.k;
  s.cb = d.cb;
  return s;
}

// A plain gm stage's circuit with its own drain capacitance; the node load is filled later.
inline StageCircuit plain_circuit(double gm, double rd, double c_out) {
  StageCircuit c;
  c.kind = LoadKind::plain;
  c.gm = gm;
  c.rd = rd;
  c.c_out = c_out;
  return c;
}

inline ChainStage make_stage(std::string id, int driver, StageCircuit circuit, double c_in, double c_load = 0.0) {
  ChainStage s;
  s.id = std::move(id);
  s.driver = driver;
  s.circuit = circuit;
  s.c_in = c_in;
  s.c_load = c_load;
  return s;
}

inline Cascade alone(const StageCircuit& s) { return Cascade({build_stage_system(s).rational()}); }

inline double bandwidth(const StageCircuit& s) { return frequency_metrics(alone(s)).bandwidth_hz; }

inline double overshoot_pct(const Cascade& c) {
  const auto f = frequency_metrics(c);
  return step_metrics(step_response(c, choose_time_axis(c, f.bandwidth_hz))).overshoot_pct;
}

// f3dB of R with C alone: the reference of every bandwidth-extension ratio.
inline double plain_bandwidth(double rd = 100.0, double c = 100e-15) { return 1.0 / (2.0 * pi * rd * c); }

}  // namespace peakplan::test
