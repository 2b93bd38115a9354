#include "planner/plan_problem.hpp"

#include <algorithm>
#include <fmt/format.h>
#include <cmath>
#include <functional>
#include <limits>
#include <numbers>

#include "models/eye.hpp"
#include "models/noise.hpp"
#include "models/pair_curve.hpp"
#include "models/parallel.hpp"
#include "models/peaking_design.hpp"
#include "models/units.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// The default search bounds of gm and rd when the file says "auto".
std::pair<double, double> device_bounds(std::string_view key, const TechnologySpec& tech) {
  if (key == "gm") {
    double gm_max = tech.max_gm.value_or(kDefaultMaxGm);
    // A current budget caps every single device too.
    if (tech.current_budget && tech.gm_over_id) gm_max = std::min(gm_max, *tech.current_budget * *tech.gm_over_id);
    // The smallest useful device, when the file names one (the reader keeps it <= max_gm).
    return {std::min(tech.min_gm.value_or(std::min(kDefaultMinGm, 0.5 * gm_max)), gm_max), gm_max};
  }
  if (key == "tail_current") {
    auto [lo, hi] = kTailCurrentAuto;
    if (tech.current_budget) hi = std::min(hi, *tech.current_budget);
    return {std::min(lo, 0.5 * hi), hi};
  }
  return {10.0, 2000.0};  // rd
}

// An open tail current's bounds: "auto" within kTailCurrentAuto (the top lowered to a current
// budget), a range its own; either way from no less than the least that gives the stage's gm
// (its fixed value, or the lower end of its own search), 2 V_T gm (models/pair_curve.hpp).
std::pair<double, double> tail_bounds(const StageSpec& stage, const TechnologySpec& tech) {
  auto [lo, hi] = device_bounds("tail_current", tech);
  if (const auto* a = stage.find("tail_current"); a && a->mode == Adjustable::Mode::range) {
    lo = a->min;
    hi = a->max;
  }
  const auto* gm = stage.find("gm");
  const double least_gm = !gm ? 0.0
                          : gm->is_fixed() ? gm->value
                          : gm->mode == Adjustable::Mode::range ? gm->min
                                                                : device_bounds("gm", tech).first;
  lo = std::max(lo, least_gm / max_pair_gm(1.0, tech.temperature) * (1.0 + 1e-9));
  return {lo, std::max(lo, hi)};
}

// A kind parameter's default bounds: its table's, narrowed or widened by [technology].
std::pair<double, double> parameter_bounds(const LoadParameter& p, const ChainSpec& spec) {
  const auto& tech = spec.technology;
  switch (p.technology) {
    case TechnologyBound::none: break;
    case TechnologyBound::inductance:
      return {p.plan_lo, std::max(p.plan_lo, std::min(tech.max_inductance.value_or(p.plan_hi), coil_inductance_limit(spec)))};
    case TechnologyBound::coupling: return {tech.k_min.value_or(p.plan_lo), tech.k_max.value_or(p.plan_hi)};
    case TechnologyBound::bridge_capacitance:
      return {std::max(tech.min_cb.value_or(p.plan_lo), p.plan_lo), p.plan_hi};
  }
  return {p.plan_lo, p.plan_hi};
}

// The keys the planner may choose for a kind: gm, rd and the kind's main elements.
std::vector<const LoadParameter*> plannable_elements(LoadKind kind) {
  std::vector<const LoadParameter*> out;
  for (const auto& p : load_kind_info(kind).parameters)
    if (p.role == ParameterRole::element) out.push_back(&p);
  return out;
}

// Two decades beyond the outermost roots at 30 points per decade: the scan includes every root's
// frequency, so a notch or a sharp peak is caught at any density; the low side must still reach
// far, because a barely peaking response has its faint maximum far below its roots.
ScanResolution search_scan() { return {2.0, 30}; }

}  // namespace

double target_band(const ChainSpec& spec) {
  if (spec.target.bandwidth) return *spec.target.bandwidth;
  if (spec.target.gain_bandwidth && spec.target.gain_db) return *spec.target.gain_bandwidth / from_db(*spec.target.gain_db);
  return std::numeric_limits<double>::infinity();
}

double coil_inductance_limit(const ChainSpec& spec) {
  const double band = target_band(spec);
  const double c_per_l = spec.technology.coil_c_per_l();
  if (!(c_per_l > 0.0) || !std::isfinite(band))
    return std::numeric_limits<double>::infinity();
  return 1.0 / (kTwoPi * kCoilResonanceMultiple * band * std::sqrt(c_per_l));
}

double yield_corner_scale(const ChainSpec& spec) {
  if (!spec.variation || !spec.target.yield) return 0.0;
  int classes = 0;
  for (auto c : all_variation_classes) classes += spec.variation->variation.spread(c).global > 0.0;
  if (classes == 0) return 0.0;
  const double per_class = std::pow(*spec.target.yield, 1.0 / classes);
  if (spec.variation->variation.distribution == Distribution::uniform) return per_class;
  // Phi^-1(p) = sqrt(2) erfinv(2p - 1), found by bisection on erf (monotone; 60 halvings).
  const double p = 0.5 * (1.0 + per_class);
  double lo = 0.0, hi = 12.0;
  for (int i = 0; i < 60; ++i) {
    const double mid = 0.5 * (lo + hi);
    (0.5 * std::erfc(-mid / std::sqrt(2.0)) < p ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi) / 3.0;
}

bool is_planned(const StageSpec& stage) {
  return !stage.kind_is_fixed() || !stage.count.is_fixed() ||
         std::any_of(stage.values.begin(), stage.values.end(), [](const auto& v) { return !v.second.is_fixed(); });
}

Measured as_measured(const Evaluation& e) {
  const auto finite = [](double x) { return std::isfinite(x) ? std::optional(x) : std::nullopt; };
  Measured m{e.f, e.t, e.total_gm, finite(e.input_noise_rms_a), finite(e.min_stage_gain_db)};
  m.eye_height_v = e.eye_height_v;
  m.ddj_pp_s = e.ddj_pp_s;
  m.output_noise_rms_v = finite(e.output_noise_rms_v);
  if (!std::isnan(e.ber)) m.ber = e.ber;
  return m;
}

bool needs_input_noise(const ChainSpec& spec) {
  return spec.target.sensitivity_w.has_value() || spec.target.objective == Objective::quietest;
}

bool needs_large_signal(const ChainSpec& spec) {
  return spec.target.output_swing.has_value() || spec.limits.ddj.has_value();
}

LargeSignalEye plan_large_signal_eye(const Chain& chain, const Signal& signal, Fidelity fidelity) {
  const int out = chain.outputs().back();
  if (fidelity == Fidelity::final) return large_signal_eye(chain, out, signal);
  Signal shorter = signal;
  if (static_cast<int>(signal.pattern) > static_cast<int>(PrbsKind::prbs7)) shorter.pattern = PrbsKind::prbs7;
  return large_signal_eye_fixed(chain, out, shorter, kSearchStepsPerUi, kSearchGridPerUi);
}

namespace {

bool needs_step(const ChainSpec& spec) {
  return spec.limits.overshoot.has_value() || spec.target.objective == Objective::flattest;
}

// One output's rms noise: the final measurement integrates as the analysis does (160 points a
// decade); the search by Gauss panels over a tighter span (models/noise.hpp), about a quarter of
// the PSD evaluations of the 40 a decade it used on the receiver and within 6.5e-7 of the analysis's
// mean square on the shipped chains, far inside the constraints' margins.
double search_or_final_rms(const ChainNoise& model, Fidelity fidelity) {
  return fidelity == Fidelity::final ? output_rms_noise(model, 160) : output_rms_noise_panels(model);
}

}  // namespace

double Variable::to_value(double u) const { return log_scale ? std::exp(u) : u; }
double Variable::to_unit(double v) const { return log_scale ? std::log(v) : v; }

std::vector<Combination> combinations(const ChainSpec& spec) {
  std::vector<Combination> all{{}};
  for (const auto& s : spec.stages) {
    std::vector<int> counts;
    if (s.count.mode == Adjustable::Mode::fixed) {
      counts = {static_cast<int>(s.count.value)};
    } else {
      const int lo = s.count.mode == Adjustable::Mode::range ? static_cast<int>(s.count.min) : 1;
      const int hi = s.count.mode == Adjustable::Mode::range ? static_cast<int>(s.count.max) : 8;
      for (int c = lo; c <= hi; ++c) counts.push_back(c);
    }
    std::vector<Combination> next;
    for (const auto& partial : all)
      for (auto kind : s.kinds)
        for (int count : counts) {
          auto c = partial;
          c.kinds.push_back(kind);
          c.counts.push_back(count);
          next.push_back(std::move(c));
        }
    all = std::move(next);
  }
  return all;
}

Problem::Problem(const ChainSpec& spec, Combination combo, std::vector<GraphStage> graph)
    : spec_(spec), combo_(std::move(combo)), graph_(std::move(graph)) {
  for (size_t i = 0; i < spec.stages.size(); ++i) {
    const auto& stage = spec.stages[i];
    const auto& info = load_kind_info(combo_.kinds[i]);
    const bool designed = design_factor(stage, info).has_value();
    auto consider = [&](std::string_view key, std::pair<double, double> bounds, bool linear, bool device) {
      const auto* a = stage.find(key);
      // A value the file leaves out entirely is free when the kind was left to the planner.
      const bool free = (a && !a->is_fixed()) || (!a && !stage.kind_is_fixed() && !device);
      if (!free) return;
      auto [lo, hi] = bounds;
      if (a && a->mode == Adjustable::Mode::range && key != "tail_current") {
        lo = a->min;
        hi = a->max;
      }
      // An open value with no room (a range with min = max, or a default bound the technology
      // closes) is that value: a search axis of zero width is no axis.
      if (!(hi > lo)) {
        pinned_.push_back({i, std::string(key), lo, lo, false});
        return;
      }
      variables_.push_back({i, std::string(key), lo, hi, !linear && lo > 0.0});
    };
    consider("gm", device_bounds("gm", spec.technology), false, true);
    consider("rd", device_bounds("rd", spec.technology), false, true);
    consider("tail_current", tail_bounds(stage, spec.technology), false, true);
    // Elements a normalised design sets are not searched on their own.
    if (!designed)
      for (const auto* p : plannable_elements(info.kind))
        consider(p->key, parameter_bounds(*p, spec), p->linear_scale, false);
  }

  // The design space: only the axes some open value hangs on.
  auto any = [&](auto predicate) { return std::any_of(variables_.begin(), variables_.end(), predicate); };
  auto add = [&](Axis axis, double lo, double hi) {
    design_.push_back(axis);
    design_kind_.push_back(std::nullopt);
    design_lo_.push_back(lo);
    design_hi_.push_back(hi);
  };
  if (any([](const Variable& v) { return v.key == "rd"; })) add(Axis::stage_gain, std::log(1.02), std::log(40.0));
  size_t sized = 0;
  double gm_lo = std::numeric_limits<double>::infinity(), gm_hi = 0.0;
  for (const auto& v : variables_)
    if (v.key == "gm") {
      ++sized;
      gm_lo = std::min(gm_lo, v.lo);
      gm_hi = std::max(gm_hi, v.hi);
    }
  if (sized > 0) add(Axis::size, std::log(gm_lo), std::log(gm_hi));
  if (sized > 1) add(Axis::taper, -2.5, 2.5);
  double tail_lo = std::numeric_limits<double>::infinity(), tail_hi = 0.0;
  for (const auto& v : variables_)
    if (v.key == "tail_current") {
      tail_lo = std::min(tail_lo, v.lo);
      tail_hi = std::max(tail_hi, v.hi);
    }
  if (tail_hi > 0.0) add(Axis::tail, std::log(tail_lo), std::log(tail_hi));
  // One design axis per kind that has a normalised design and open elements, in table order.
  for (const auto& info : all_load_kinds()) {
    if (info.design == DesignFactor::none) continue;
    const bool open = any([&](const Variable& v) {
      return combo_.kinds[v.table] == info.kind && v.key != "gm" && v.key != "rd";
    });
    if (!open) continue;
    add(Axis::design, info.design_lo, info.design_hi);
    design_kind_.back() = info.kind;
  }

  if (needs_large_signal(spec)) large_signal_ = analysis_options(spec).signal;

  if (spec.target.plan_for == "corners" && spec.variation) {
    corner_threads_ = default_thread_count();
    corners_.push_back(nominal_corner());
    if (spec.variation->extremes)
      for (auto& c : extreme_corners(spec.variation->variation)) corners_.push_back(std::move(c));
    for (const auto& named : spec.variation->corners) corners_.push_back(named.corner);
  }
  if (const double a = yield_corner_scale(spec); spec.target.plan_for == "yield" && a > 0.0) {
    corner_threads_ = default_thread_count();
    corners_.push_back(nominal_corner());
    const bool gaussian = spec.variation->variation.distribution == Distribution::gaussian;
    const std::string at = gaussian ? fmt::format(" at {:.2f} sigma", 3.0 * a) : fmt::format(" at {:.1f} %", 100.0 * a);
    for (auto c : extreme_corners(spec.variation->variation)) {
      for (double& x : c.offset) x *= a;
      c.name += at;
      corners_.push_back(std::move(c));
    }
  }
}

int Problem::variable_index(size_t stage, std::string_view key) const {
  for (size_t v = 0; v < variables_.size(); ++v)
    if (variables_[v].table == stage && variables_[v].key == key) return static_cast<int>(v);
  return -1;
}

double Problem::value(const std::vector<double>& u, size_t stage, std::string_view key, double fallback) const {
  if (const int v = variable_index(stage, key); v >= 0) return variables_[static_cast<size_t>(v)].to_value(u[static_cast<size_t>(v)]);
  for (const auto& p : pinned_)
    if (p.table == stage && p.key == key) return p.lo;
  const auto* a = spec_.stages[stage].find(key);
  return a && a->is_fixed() ? a->value : fallback;
}

Chain Problem::assemble(const std::vector<double>& u) const {
  std::vector<StageCircuit> circuits(spec_.stages.size());
  std::vector<double> c_in(spec_.stages.size()), c_load(spec_.stages.size());
  for (size_t i = 0; i < spec_.stages.size(); ++i) {
    auto& c = circuits[i];
    c.kind = combo_.kinds[i];
    c.gm = value(u, i, "gm", 0.0);
    c.rd = value(u, i, "rd", 0.0);
    const auto* gm = spec_.stages[i].find("gm");
    if (gm && !gm->is_fixed()) {
      // The device is being sized: its capacitances follow gm at the technology's fT.
      c_in[i] = c.gm / (kTwoPi * spec_.technology.ft.value_or(1e12));
      c.c_out = spec_.technology.c_out_ratio.value_or(0.0) * c_in[i];
    } else {
      c_in[i] = value(u, i, "c_in", 0.0);
      c.c_out = value(u, i, "c_out", 0.0);
    }
    c_load[i] = value(u, i, "c_load", 0.0);
    c.r_load = value(u, i, "r_load", std::numeric_limits<double>::infinity());
    read_kind_values(c, [&](std::string_view key, double fallback) { return value(u, i, key, fallback); });
  }
  Chain chain = assemble_chain(spec_, graph_, circuits, c_in, c_load);
  // An open tail current, raised where needed to the least that gives the stage's gm.
  for (size_t k = 0; k < graph_.size(); ++k) {
    auto& stage = chain.stages[k];
    if (!stage.limit || variable_index(graph_[k].table, "tail_current") < 0) continue;
    const double least = stage.circuit.gm / max_pair_gm(1.0, spec_.technology.temperature);
    stage.limit->tail_current = std::max(value(u, graph_[k].table, "tail_current", 0.0), least * (1.0 + 1e-9));
  }
  return chain;
}

Chain Problem::build(const std::vector<double>& u, Fidelity fidelity) const {
  Chain chain = assemble(u);
  apply_designs(chain, spec_, graph_, fidelity == Fidelity::final ? ScanResolution{} : search_scan());
  return chain;
}

Evaluation Problem::evaluate(const std::vector<double>& u, Fidelity fidelity) const {
  if (corners_.empty()) return measure(build(u, fidelity), fidelity);
  const auto each = evaluate_corners(u, fidelity);
  Evaluation w = each.front();
  for (size_t i = 1; i < each.size(); ++i) {
    const auto& e = each[i];
    if (std::fabs(e.f.dc_gain) < std::fabs(w.f.dc_gain)) w.f.dc_gain = e.f.dc_gain;
    // A bandwidth not found counts as the worst, as the checks count it.
    if (!std::isfinite(e.f.bandwidth_hz) || e.f.bandwidth_hz < w.f.bandwidth_hz) w.f.bandwidth_hz = e.f.bandwidth_hz;
    w.f.peaking_db = std::max(w.f.peaking_db, e.f.peaking_db);
    w.f.group_delay_ripple_s = std::max(w.f.group_delay_ripple_s, e.f.group_delay_ripple_s);
    w.f.sag_db = std::min(w.f.sag_db, e.f.sag_db);
    w.t.overshoot_pct = std::max(w.t.overshoot_pct, e.t.overshoot_pct);
    w.min_stage_gain_db = std::min(w.min_stage_gain_db, e.min_stage_gain_db);
    w.input_noise_rms_a = std::max(w.input_noise_rms_a, e.input_noise_rms_a);
    if (e.eye_height_v && w.eye_height_v) w.eye_height_v = std::min(*w.eye_height_v, *e.eye_height_v);
    // A closed eye's DDJ (NaN) is the worst.
    if (e.ddj_pp_s && w.ddj_pp_s && !std::isnan(*w.ddj_pp_s) && !(*e.ddj_pp_s <= *w.ddj_pp_s)) w.ddj_pp_s = e.ddj_pp_s;
    w.output_noise_rms_v = std::max(w.output_noise_rms_v, e.output_noise_rms_v);
    w.ber = std::max(w.ber, e.ber);
  }
  return w;
}

std::vector<Evaluation> Problem::evaluate_corners(const std::vector<double>& u, Fidelity fidelity) const {
  const Chain chain = build(u, fidelity);
  if (corners_.empty()) return {measure(chain, fidelity)};
  // Corners are independent: measured in parallel, each into its own slot.
  std::vector<Evaluation> each(corners_.size());
  parallel_for(corners_.size(), corners_.size() >= 4 ? corner_threads_ : 1, [&](size_t i) {
    each[i] = measure(apply_variation(chain, corners_[i].draw()), fidelity);
  });
  // The supply current is set by the bias, not by the devices' spread of gm.
  for (auto& e : each) e.total_gm = each.front().total_gm;
  return each;
}

Evaluation Problem::measure(const Chain& chain, Fidelity fidelity) const {
  Evaluation e;
  const auto cascade = output_cascade(chain, chain.outputs().back());
  for (const auto& s : chain.stages) e.total_gm += s.circuit.gm;
  // A tia of two or three cells can oscillate for some rf: its waveforms grow without bound.
  if (first_unstable_pole(cascade.poles())) {
    e.unstable = true;
    return e;
  }
  const double band = spec_.limits.ripple_band.value_or(not_found);
  e.f = frequency_metrics(cascade, band, fidelity == Fidelity::final ? ScanResolution{} : search_scan());
  if (fidelity == Fidelity::final || needs_step(spec_)) {
    const auto axis = fidelity == Fidelity::final ? choose_time_axis(cascade, e.f.bandwidth_hz)
                                                  : short_time_axis(cascade, e.f.bandwidth_hz);
    e.t = step_metrics(step_response(cascade, axis));
  }
  if (needs_input_noise(spec_) && chain.current_input()) {
    NoiseOptions noise;
    noise.temperature = spec_.technology.temperature;
    noise.gamma = spec_.technology.gamma;
    const ChainNoise model(chain, chain.outputs().back(), noise, cascade);
    e.input_noise_rms_a = search_or_final_rms(model, fidelity) / std::fabs(model.dc_gain());
  }
  if (large_signal_) {
    const auto eye = plan_large_signal_eye(chain, *large_signal_, fidelity);
    e.eye_height_v = eye.height_v;
    e.ddj_pp_s = eye.ddj_pp_s;
  }
  if ((spec_.limits.noise_rms || spec_.limits.ber) && spec_.signal) measure_output_noise(chain, cascade, fidelity, e);
  // The stages are the cascade's last blocks (a source pole, if any, comes first).
  // Only planned stages count: a fixed stage's gain is the file's (a 50-ohm buffer at -1 dB is
  // the usual output stage), and none planned on the path leaves the limit nothing to hold.
  const auto& blocks = cascade.blocks();
  const auto path = chain.path_to(chain.outputs().back());
  e.min_stage_gain_db = std::numeric_limits<double>::infinity();
  for (size_t j = 0; j < path.size(); ++j)
    if (is_planned(spec_.stages[graph_[static_cast<size_t>(path[j])].table]))
      e.min_stage_gain_db =
          std::min(e.min_stage_gain_db, to_db(std::fabs(blocks[blocks.size() - path.size() + j].dc_value())));
  return e;
}

// The differential output noise as analyze computes it (its noise options, the receiver's
// bandwidth) and, for a BER limit, the statistical eye's BER at the swing from the PRBS eye.
void Problem::measure_output_noise(const Chain& chain, const Cascade& cascade, Fidelity fidelity, Evaluation& e) const {
  const auto options = analysis_options(spec_);
  const ChainNoise model(chain, chain.outputs().back(), options.noise, cascade);
  e.output_noise_rms_v = std::sqrt(2.0) * search_or_final_rms(model, fidelity);
  if (!spec_.limits.ber || !options.swing_given || !options.signal) return;
  const auto eye = estimate_eye(cascade, *options.signal);
  e.ber = ber_from_q(eye_q(eye.pulse, eye.prbs, *options.signal, e.output_noise_rms_v));
}

std::vector<double> Problem::design_seed() const {
  int free_copies = 0;
  double fixed_db = 0.0;
  for (size_t i = 0; i < spec_.stages.size(); ++i) {
    if (variable_index(i, "rd") >= 0) {
      free_copies += combo_.counts[i];
    } else {
      const auto* gm = spec_.stages[i].find("gm");
      const auto* rd = spec_.stages[i].find("rd");
      if (gm && gm->is_fixed() && rd && rd->is_fixed()) fixed_db += combo_.counts[i] * to_db(gm->value * rd->value);
    }
  }
  const double wanted_db = spec_.target.gain_db ? *spec_.target.gain_db - fixed_db : 6.0 * free_copies;
  const double stage_db = std::max(1.0, wanted_db / std::max(1, free_copies));
  std::vector<double> z(design_.size());
  for (size_t d = 0; d < design_.size(); ++d) {
    switch (design_[d]) {
      case Axis::stage_gain: z[d] = std::log(from_db(stage_db)); break;
      case Axis::size: z[d] = 0.5 * (design_lo_[d] + design_hi_[d]); break;
      case Axis::taper: z[d] = 0.0; break;
      case Axis::design: z[d] = load_kind_info(*design_kind_[d]).design_seed; break;
      // The least tail current the gms allow: the search raises it only as far as the output
      // swing needs (no objective weighs the tail currents).
      case Axis::tail: z[d] = design_lo_[d]; break;
    }
    z[d] = std::clamp(z[d], design_lo_[d], design_hi_[d]);
  }
  return z;
}

std::vector<double> Problem::expand(const std::vector<double>& z) const {
  double stage_gain = 2.0, log_size = std::log(0.02), taper = 0.0, log_tail = kNaN;
  // Each kind's design factor: its axis when it has one, else the table's seed.
  auto factor = [&](LoadKind kind) {
    for (size_t d = 0; d < design_.size(); ++d)
      if (design_[d] == Axis::design && design_kind_[d] == kind) return z[d];
    return load_kind_info(kind).design_seed;
  };
  for (size_t d = 0; d < design_.size(); ++d) {
    switch (design_[d]) {
      case Axis::stage_gain: stage_gain = std::exp(z[d]); break;
      case Axis::size: log_size = z[d]; break;
      case Axis::taper: taper = z[d]; break;
      case Axis::design: break;
      case Axis::tail: log_tail = z[d]; break;
    }
  }
  std::vector<double> u(variables_.size());
  auto set = [&](size_t v, double x) {
    const auto& var = variables_[v];
    if (std::isfinite(x) && (x > 0.0 || !var.log_scale)) u[v] = var.to_unit(std::clamp(x, var.lo, var.hi));
  };
  for (size_t v = 0; v < variables_.size(); ++v) {
    const auto& var = variables_[v];
    u[v] = var.log_scale ? 0.5 * (std::log(var.lo) + std::log(var.hi)) : 0.5 * (var.lo + var.hi);
  }
  // Device sizes along the chain: a geometric taper about the size, by file position.
  std::vector<size_t> sized;
  for (size_t v = 0; v < variables_.size(); ++v)
    if (variables_[v].key == "gm") sized.push_back(v);
  for (size_t n = 0; n < sized.size(); ++n) {
    const double x = sized.size() > 1 ? static_cast<double>(n) / static_cast<double>(sized.size() - 1) - 0.5 : 0.0;
    set(sized[n], std::exp(log_size + taper * x));
  }
  for (size_t v = 0; v < variables_.size(); ++v) {
    if (variables_[v].key == "rd") set(v, stage_gain / std::max(value(u, variables_[v].table, "gm", 0.02), 1e-6));
    if (variables_[v].key == "tail_current") set(v, std::exp(log_tail));
  }
  return with_designs(std::move(u), [&](size_t, LoadKind kind) { return factor(kind); });
}

std::vector<double> Problem::with_designs(std::vector<double> u,
                                          const std::function<double(size_t, LoadKind)>& factor) const {
  auto set = [&](size_t v, double x) {
    const auto& var = variables_[v];
    if (std::isfinite(x) && (x > 0.0 || !var.log_scale)) u[v] = var.to_unit(std::clamp(x, var.lo, var.hi));
  };
  // Peaking elements from the published designs, against each stage's actual load (the node
  // capacitances are all they need, so no designs or losses are resolved here).
  const Chain chain = assemble(u);
  for (size_t v = 0; v < variables_.size(); ++v) {
    const auto& var = variables_[v];
    const auto stage = std::find_if(graph_.begin(), graph_.end(), [&](const GraphStage& g) { return g.table == var.table; });
    const auto& c = chain.stages[static_cast<size_t>(stage - graph_.begin())].circuit;
    const auto& info = load_kind_info(c.kind);
    const auto* p = find_parameter(info, var.key);
    if (!p || p->role != ParameterRole::element || info.design == DesignFactor::none) continue;
    if (!(info.design_capacitance(c) > 0.0)) continue;
    StageCircuit designed = c;
    info.apply_design(designed, factor(var.table, c.kind));
    set(v, designed.*(p->field));
  }
  return u;
}

size_t Problem::start_dimensions() const {
  size_t n = 0;
  for (size_t i = 0; i < spec_.stages.size(); ++i) n += start_axes(i);
  for (const auto& v : variables_) n += loose(v);
  return n;
}

int Problem::start_axes(size_t stage) const {
  const auto& info = load_kind_info(combo_.kinds[stage]);
  bool open_element = false;
  for (const auto& v : variables_)
    open_element = open_element || (v.table == stage && v.key != "gm" && v.key != "rd");
  return (variable_index(stage, "rd") >= 0) + (variable_index(stage, "gm") >= 0) +
         (open_element && info.design != DesignFactor::none);
}

bool Problem::loose(const Variable& v) const {
  if (v.key == "gm" || v.key == "rd") return false;
  const auto& info = load_kind_info(combo_.kinds[v.table]);
  const auto* p = find_parameter(info, v.key);
  return !(p && p->role == ParameterRole::element && info.design != DesignFactor::none);
}

std::vector<double> Problem::start_point(const std::vector<double>& cube) const {
  // The peaking drawn log-uniformly over the design range widened kWider times each way: an
  // equalising stage peaks far harder than any flat design (m = 2.5, say).
  constexpr double kWider = 2.0;
  // The seed's bounds and gain share (design_seed) for scaling the drawn gains together.
  std::vector<double> u(variables_.size());
  for (size_t v = 0; v < variables_.size(); ++v)
    u[v] = 0.5 * (variables_[v].to_unit(variables_[v].lo) + variables_[v].to_unit(variables_[v].hi));
  std::vector<double> log_gain(spec_.stages.size(), 0.0);
  std::vector<double> factor(spec_.stages.size(), std::numeric_limits<double>::quiet_NaN());
  size_t k = 0;
  double drawn_db = 0.0, fixed_db = 0.0;
  int free_copies = 0;
  for (size_t i = 0; i < spec_.stages.size(); ++i) {
    const auto& info = load_kind_info(combo_.kinds[i]);
    if (const int v = variable_index(i, "gm"); v >= 0) {
      const auto& var = variables_[static_cast<size_t>(v)];
      u[static_cast<size_t>(v)] = var.to_unit(var.lo) + cube[k++] * (var.to_unit(var.hi) - var.to_unit(var.lo));
    }
    if (variable_index(i, "rd") >= 0) {
      log_gain[i] = std::log(1.02) + cube[k++] * (std::log(40.0) - std::log(1.02));
      drawn_db += combo_.counts[i] * to_db(std::exp(log_gain[i]));
      free_copies += combo_.counts[i];
    } else {
      const auto* gm = spec_.stages[i].find("gm");
      const auto* rd = spec_.stages[i].find("rd");
      if (gm && gm->is_fixed() && rd && rd->is_fixed()) fixed_db += combo_.counts[i] * to_db(gm->value * rd->value);
    }
    if (start_axes(i) > (variable_index(i, "rd") >= 0) + (variable_index(i, "gm") >= 0))
      factor[i] = std::exp(std::log(kWider * info.design_hi) - cube[k++] * std::log(kWider * kWider * info.design_hi / info.design_lo));
  }
  // A value no stage axis sets (a tia's Rf, a tail current) anywhere in its range: the starts
  // differ in it too, rather than all beginning at its middle.
  for (size_t v = 0; v < variables_.size(); ++v) {
    const auto& var = variables_[v];
    if (loose(var)) u[v] = var.to_unit(var.lo) + cube[k++] * (var.to_unit(var.hi) - var.to_unit(var.lo));
  }
  // Unequal gains in the drawn proportions, together making the target gain (or as drawn).
  const double shift_db = spec_.target.gain_db && free_copies > 0 ? (*spec_.target.gain_db - fixed_db - drawn_db) / free_copies : 0.0;
  auto set_rd = [&](double extra_db) {
    for (size_t v = 0; v < variables_.size(); ++v) {
      const auto& var = variables_[v];
      if (var.key != "rd") continue;
      const double gain = std::exp(log_gain[var.table]) * from_db(shift_db + extra_db);
      const double rd = gain / std::max(value(u, var.table, "gm", 0.02), 1e-6);
      u[v] = var.to_unit(std::clamp(rd, var.lo, var.hi));
    }
  };
  const auto designed = [&](std::vector<double> x) {
    return with_designs(std::move(x), [&](size_t stage, LoadKind kind) {
      return std::isfinite(factor[stage]) ? factor[stage] : load_kind_info(kind).design_seed;
    });
  };
  set_rd(0.0);
  // A transimpedance target instead of a gain: the same common shift, found on the chain itself.
  if (spec_.target.transimpedance && !spec_.target.gain_db && free_copies > 0)
    meet_transimpedance(u, set_rd, designed, free_copies);
  return designed(std::move(u));
}

void Problem::meet_transimpedance(std::vector<double>& u, const std::function<void(double)>& set_rd,
                                  const std::function<std::vector<double>(std::vector<double>)>& designed,
                                  int free_copies) const {
  // The common shift (dB) that makes the built chain's DC transimpedance the target, as the
  // target is checked (the tia's loop, the peaking elements the designs give the shifted Rd and
  // their coils' series loss included): a few secant steps, from one dB per dB per free stage
  // copy (the transimpedance is close to a power of the shift; Rd meeting its bound bends it).
  // Within 0.05 dB is plenty for a start.
  const double target_db = to_db(*spec_.target.transimpedance);
  auto miss_db = [&] {
    const Chain chain = build(designed(u), Fidelity::search);
    return to_db(std::fabs(output_cascade(chain, chain.outputs().back()).dc_value())) - target_db;
  };
  double shift = 0.0, slope = free_copies;
  double miss = miss_db();
  for (int it = 0; it < 6 && std::isfinite(miss) && std::fabs(miss) > 0.05; ++it) {
    const double step = -miss / slope;
    shift += step;
    set_rd(shift);
    const double next = miss_db();
    if (std::fabs(step) > 1e-3 && std::isfinite(next)) slope = std::clamp((next - miss) / step, 0.1, 4.0 * free_copies);
    miss = next;
  }
}

}  // namespace peakplan
