// The long runs behind the planning reference suite (tests/planning/*.ref), not a test: plans a
// problem file with the global phase's starts multiplied by --effort, once per seed, and prints
// each run's objective (bandwidth in Hz for widest, total gm in S for leanest), the best, the
// spread over the seeds and what it cost. make_references.sh drives it and writes the .ref files.
// --method picks the global phase (PlanOptions::global_method): halving, the planner's own (the
// default), one of NLopt's global algorithms, isres, mlsl or crs2, for an independent reference, or
// halving_crs2 (the multi-start, then CRS2 from its best).
//
//   peakplan_plan_reference PROBLEM.toml [--effort N] [--seeds N] [--method halving|isres|mlsl|crs2|halving_crs2]
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <map>
#include <string>
#include <vector>

#include "models/analysis.hpp"
#include "planner/input/overrides.hpp"
#include "planner/planner.hpp"

int main(int argc, char** argv) {
  if (argc < 2) {
    std::fprintf(stderr, "usage: %s PROBLEM.toml [--effort N] [--seeds N] [--method NAME]\n"
                         "  NAME: halving, isres, mlsl, crs2 or halving_crs2\n", argv[0]);
    return 2;
  }
  const std::string path = argv[1];
  int effort = 100, seeds = 4;
  using peakplan::GlobalMethod;
  auto method = GlobalMethod::halving;
  const std::map<std::string, GlobalMethod> methods = {{"halving", GlobalMethod::halving},
                                                       {"isres", GlobalMethod::isres},
                                                       {"mlsl", GlobalMethod::mlsl},
                                                       {"crs2", GlobalMethod::crs2},
                                                       {"halving_crs2", GlobalMethod::halving_crs2}};
  for (int i = 2; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--effort")) effort = std::atoi(argv[i + 1]);
    if (!std::strcmp(argv[i], "--seeds")) seeds = std::atoi(argv[i + 1]);
    if (!std::strcmp(argv[i], "--method")) {
      const auto m = methods.find(argv[i + 1]);
      if (m == methods.end()) {
        std::fprintf(stderr, "--method: expected halving, isres, mlsl, crs2 or halving_crs2, got '%s'\n", argv[i + 1]);
        return 2;
      }
      method = m->second;
    }
  }
  peakplan::Diagnostics d(path);
  const auto spec = peakplan::read_chain_spec(path, d);
  if (!spec) {
    std::fprintf(stderr, "%s: cannot read\n", path.c_str());
    return 2;
  }
  // Smaller is better for leanest (total gm, S) and quietest (input noise, A).
  const bool quiet = spec->target.objective == peakplan::Objective::quietest;
  const bool lean = spec->target.objective == peakplan::Objective::leanest || quiet;
  std::vector<double> values;
  std::string best_toml;
  int evaluations = 0;
  double seconds = 0.0;
  for (int s = 0; s < seeds; ++s) {
    peakplan::PlanOptions options;
    options.effort = effort;
    options.global_method = method;
    options.seed = 1000u + 7u * static_cast<unsigned>(s);
    peakplan::Diagnostics pd(path);
    const auto plan = peakplan::plan_chain(*spec, pd, options);
    if (!plan || plan->termination != peakplan::Plan::Termination::met) {
      std::printf("seed %u: not met\n", options.seed);
      continue;
    }
    const auto m = peakplan::frequency_metrics(peakplan::output_cascade(plan->chain, plan->chain.outputs().back()));
    const double v = quiet ? plan->objective : lean ? peakplan::total_gm(plan->chain) : m.bandwidth_hz;
    if (values.empty() || (lean ? v < *std::min_element(values.begin(), values.end())
                                : v > *std::max_element(values.begin(), values.end())))
      best_toml = peakplan::planned_chain_toml(*spec, *plan);
    values.push_back(v);
    evaluations += plan->evaluations;
    seconds += plan->seconds;
    // The global phase's own best (as searched, before refinement): what the method found.
    std::printf("seed %u: %.6g (%d evaluations, global phase best %.6g)\n", options.seed, v, plan->evaluations,
                plan->spread.best);
  }
  if (values.empty()) return 1;
  double best = values.front(), worst = values.front();
  for (double v : values) {
    best = lean ? std::min(best, v) : std::max(best, v);
    worst = lean ? std::max(worst, v) : std::min(worst, v);
  }
  std::printf("reference %.6g\nspread %.4f %%\nevaluations %d\nseconds %.1f\n", best,
              100.0 * std::fabs(best - worst) / best, evaluations, seconds);
  // The best plan itself, for whoever wants to see where the optimum lies.
  std::fputs(best_toml.c_str(), stderr);
  return 0;
}
