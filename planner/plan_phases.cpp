#include "planner/plan_phases.hpp"

#include <algorithm>
#include <cmath>
#include <optional>
#include <random>

#include "models/parallel.hpp"
#include "planner/requirements.hpp"

namespace peakplan {
namespace {

// One independent piece of a phase: its best candidate and what it spent.
struct Piece {
  Candidate best;
  int evaluations = 0;
  Score last;  // the piece's own final score (a start's, for the spread)
};

// Runs `count` pieces on the context's threads and adds their evaluations in index order.
template <class Body>
std::vector<Piece> run_pieces(SearchContext& context, size_t count, int& evaluations, Body body) {
  std::vector<Piece> pieces(count);
  parallel_for(count, context.threads(), [&](size_t i) {
    Search search(context);
    pieces[i] = body(i, search);
    pieces[i].evaluations = search.evaluations();
  });
  for (const auto& piece : pieces) evaluations += piece.evaluations;
  return pieces;
}

// A fixed seed per piece: the same draws whichever thread runs it.
std::mt19937 piece_random(unsigned seed, size_t a, size_t b) {
  std::seed_seq sequence{seed, static_cast<unsigned>(a), static_cast<unsigned>(b)};
  return std::mt19937(sequence);
}

bool by_score(const Candidate& a, const Candidate& b) { return a.score.better_than(b.score); }

int copies(const Problem& p) {
  int n = 0;
  for (int c : p.combination().counts) n += c;
  return n;
}

// One design-space start of a combination: the closed-form seed (start 0) or a random point
// (odd starts uniform, even starts halfway between the seed and a uniform point).
Candidate design_start(Search& search, const Problem& p, size_t index, int start, int per_dimension, unsigned seed) {
  const auto& lo = p.design_lower();
  const auto& hi = p.design_upper();
  auto z = p.design_seed();
  if (start > 0) {
    auto random = piece_random(seed, index, static_cast<size_t>(start));
    for (size_t d = 0; d < z.size(); ++d) {
      std::uniform_real_distribution<double> pick(lo[d], hi[d]);
      z[d] = start % 2 ? pick(random) : 0.5 * (z[d] + pick(random));
    }
  }
  const ToFull expand = [&p](const std::vector<double>& x) { return p.expand(x); };
  const int budget = per_dimension * static_cast<int>(p.design_dimensions() + 2);
  const Score s = search.minimise(p, z, lo, hi, 0.2, budget, Fidelity::search, expand);
  return {index, p.expand(z), s};
}

}  // namespace

std::vector<Candidate> search_combinations(SearchContext& context, const std::vector<Problem>& problems,
                                           int& evaluations) {
  const auto& options = context.options();
  const int first_round = problems.size() > 3 ? 15 : 25;
  auto seeded = run_pieces(context, problems.size(), evaluations, [&](size_t i, Search& search) {
    return Piece{design_start(search, problems[i], i, 0, first_round, options.seed), 0, {}};
  });
  std::vector<Candidate> explored;
  for (auto& piece : seeded) explored.push_back(std::move(piece.best));
  std::stable_sort(explored.begin(), explored.end(), by_score);

  // Random design-space starts for the most promising three: (combination rank, start) pieces.
  const size_t kept = std::min(explored.size(), size_t{3});
  std::vector<std::pair<size_t, int>> starts;
  for (size_t r = 0; r < kept; ++r) {
    const bool fixed_design = problems[explored[r].problem].design_dimensions() == 0;
    for (int start = 1; start < options.starts && !fixed_design; ++start) starts.emplace_back(r, start);
  }
  const auto more = run_pieces(context, starts.size(), evaluations, [&](size_t i, Search& search) {
    const auto [r, start] = starts[i];
    const size_t index = explored[r].problem;
    return Piece{design_start(search, problems[index], index, start, 25, options.seed), 0, {}};
  });
  for (size_t i = 0; i < more.size(); ++i) {
    auto& into = explored[starts[i].first];
    if (more[i].best.score.better_than(into.score)) into = more[i].best;
  }
  std::stable_sort(explored.begin(), explored.begin() + static_cast<std::ptrdiff_t>(kept), by_score);
  return explored;
}

int near_best(const ChainSpec& spec, const std::vector<Score>& finals) {
  double best = std::numeric_limits<double>::infinity();
  for (const auto& s : finals)
    if (s.feasible()) best = std::min(best, s.objective);
  const double near = std::max(0.01 * std::fabs(best), objective_tolerance(spec, best));
  int n = 0;
  for (const auto& s : finals) n += s.feasible() && s.objective - best <= near;
  return n;
}

namespace {

// One batch of the global phase: `count` starts from `seed`, run by successive halving.
std::vector<Candidate> global_batch(SearchContext& context, const Problem& p, size_t index,
                                    const std::vector<double>* around, int count, unsigned seed, int& evaluations,
                                    std::vector<Score>& finals) {
  const int n = static_cast<int>(p.variables().size());
  const auto lo = lower_units(p);
  const auto hi = upper_units(p);
  const int round_budget = 6 * (n + 2);
  // Starts in the per-stage design coordinates (Problem::start_point); without them (no open Rd,
  // gm or designed element) anywhere in the full space.
  const size_t sd = p.start_dimensions();
  auto points = latin_hypercube(lo, hi, count, seed);
  if (sd > 0) {
    const auto cube = latin_hypercube(std::vector<double>(sd, 0.0), std::vector<double>(sd, 1.0), count, seed + 1u);
    for (size_t i = 0; i < points.size(); ++i)
      if (i % 2 == 0 || !around) points[i] = p.start_point(cube[i]);
  }
  // Every other start halfway between the design-space optimum and its full-space point: the
  // seeds' neighbourhood, where an asymmetric refinement of a closed form lies.
  if (around)
    for (size_t i = 1; i < points.size(); i += 2)
      for (size_t d = 0; d < points[i].size(); ++d) points[i][d] = 0.5 * (points[i][d] + (*around)[d]);

  struct Track {
    std::vector<double> u;
    Score score;
  };
  std::vector<Track> tracks(points.size());
  for (size_t i = 0; i < points.size(); ++i) tracks[i].u = std::move(points[i]);
  // Each round continues the given starts from their best points; the survivors of a round are
  // the best fraction by score (ties to the lower index).
  auto round = [&](std::vector<size_t> alive, double step, int budget) {
    const auto pieces = run_pieces(context, alive.size(), evaluations, [&](size_t k, Search& search) {
      auto u = tracks[alive[k]].u;
      const Score s = search.minimise_full(p, u, step, budget, Fidelity::search);
      return Piece{{index, u, s}, 0, s};
    });
    for (size_t k = 0; k < alive.size(); ++k)
      if (pieces[k].best.score.better_than(tracks[alive[k]].score) || !std::isfinite(tracks[alive[k]].score.violation))
        tracks[alive[k]] = {pieces[k].best.u, pieces[k].best.score};
    std::stable_sort(alive.begin(), alive.end(),
                     [&](size_t a, size_t b) { return tracks[a].score.better_than(tracks[b].score); });
    return alive;
  };
  std::vector<size_t> alive(tracks.size());
  for (size_t i = 0; i < alive.size(); ++i) alive[i] = i;
  alive = round(alive, 0.1, round_budget);
  alive.resize((alive.size() + 3) / 4);
  alive = round(alive, 0.03, 4 * round_budget);
  alive.resize((alive.size() + 1) / 2);
  alive = round(alive, 0.01, 6 * round_budget);

  for (const auto& t : tracks) finals.push_back(t.score);
  // The starts that ran all three rounds, best first.
  std::vector<Candidate> out;
  for (size_t i : alive) out.push_back({index, tracks[i].u, tracks[i].score});
  return out;
}

}  // namespace

std::vector<Candidate> global_phase(SearchContext& context, const Problem& p, size_t index,
                                    const std::vector<double>* around, int& evaluations, std::vector<Score>& finals) {
  // Budgets from the problem size and from the landscape (measured on the planning suite,
  // tests/planning): a batch is 12 + n starts, each first run for 6 (n + 2) evaluations; the best quarter
  // continue for 24 (n + 2), then the best half of those for 36 (n + 2). When fewer than three
  // starts agree on the best (near_best), the landscape is rugged and another batch is drawn,
  // twice the first's size, then three times it (more starts survive to the long rounds), up
  // to three batches. A third batch four times the first, as it was, did no better over eight
  // seeds (the five hard suite problems: 0.970 of their references against 0.969) and spent 14 %
  // more of the receiver's evaluations.
  const int n = static_cast<int>(p.variables().size());
  // A plan for corners measures every corner per evaluation (ten chains, say): one batch of
  // half the starts keeps it near its cost without the global phase (measured on
  // chains/variation_post_amp.toml).
  const bool corners = !p.corners().empty();
  const int count = std::max(1, context.options().effort) * (corners ? (12 + n) / 2 : 12 + n);
  const int batches = corners ? 1 : 3;
  constexpr int kAgreeing = 3;
  std::vector<Candidate> kept;
  for (int b = 0; b < batches; ++b) {
    const unsigned seed = context.options().seed + 7919u * static_cast<unsigned>(index) + 104729u * static_cast<unsigned>(b);
    const auto batch = global_batch(context, p, index, around, count * (b + 1), seed, evaluations, finals);
    kept.insert(kept.end(), batch.begin(), batch.end());
    if (near_best(context.spec(), finals) >= kAgreeing) break;
  }
  // Every batch's long-run starts, best first (ties to the earlier batch and start), the best few.
  std::stable_sort(kept.begin(), kept.end(), by_score);
  if (kept.size() > kGlobalKept) kept.resize(kGlobalKept);
  return kept;
}

std::vector<Candidate> refine(SearchContext& context, const std::vector<Problem>& problems,
                              const std::vector<Candidate>& explored, const std::vector<Candidate>& global,
                              int& evaluations) {
  const size_t refined = std::min(explored.size(), static_cast<size_t>(std::max(1, context.options().refined)));
  const auto pieces = run_pieces(context, refined, evaluations, [&](size_t r, Search& search) {
    const auto& p = problems[explored[r].problem];
    Candidate c = explored[r];
    auto u = c.u;
    const int n = static_cast<int>(p.variables().size());
    if (n == 0) return Piece{c, 0, c.score};
    const Score s = search.minimise_full(p, u, 0.05, 40 * (n + 2), Fidelity::search);
    if (s.better_than(c.score)) c = {c.problem, u, s};
    return Piece{c, 0, s};
  });
  // Every combination's best so far (the refined ones improved), and the global phase's.
  std::vector<Candidate> ranked = explored;
  for (size_t r = 0; r < pieces.size(); ++r) ranked[r] = pieces[r].best;
  ranked.insert(ranked.end(), global.begin(), global.end());
  std::stable_sort(ranked.begin(), ranked.end(), by_score);
  std::vector<int> counts;
  for (const auto& c : ranked) counts.push_back(copies(problems[c.problem]));
  const size_t first = tie_break(context.spec(), ranked, counts);
  std::rotate(ranked.begin(), ranked.begin() + static_cast<std::ptrdiff_t>(first),
              ranked.begin() + static_cast<std::ptrdiff_t>(first) + 1);

  // Polish: the optimum usually sits on a constraint edge.
  auto& best = ranked.front();
  const auto& p = problems[best.problem];
  const int n = static_cast<int>(p.variables().size());
  if (n == 0) return ranked;
  Search search(context);
  auto u = best.u;
  const Score s = search.minimise_full(p, u, 0.005, 20 * (n + 2), Fidelity::search);
  evaluations += search.evaluations();
  if (s.better_than(best.score)) best = {best.problem, u, s};
  return ranked;
}

bool FinalChecks::all_met() const {
  return std::all_of(worst.begin(), worst.end(), [](const PlanCheck& x) { return x.met; });
}

FinalChecks final_checks(const ChainSpec& spec, const Problem& p, const std::vector<double>& u) {
  // Per corner (nominal first; only nominal when planning for nominal), and each check's worst.
  auto checks = [&spec](const Evaluation& e) {
    return requirement_checks(spec, as_measured(e));
  };
  const auto each = p.evaluate_corners(u, Fidelity::final);
  FinalChecks r;
  r.nominal = checks(each.front());
  r.worst = r.nominal;
  r.corners.assign(r.worst.size(), "nominal");
  for (size_t c = 1; c < each.size(); ++c) {
    const auto at = checks(each[c]);
    for (size_t i = 0; i < at.size(); ++i)
      if (at[i].margin < r.worst[i].margin || (!at[i].met && r.worst[i].met)) {
        r.worst[i] = at[i];
        r.corners[i] = p.corners()[c].name;
      }
  }
  r.nominal_evaluation = p.evaluate(u, Fidelity::final);
  return r;
}

void repair(SearchContext& context, const Problem& p, Candidate& best, FinalChecks& checks, int& evaluations) {
  if (checks.all_met() || best.score.violation >= 1e-3 || p.variables().empty()) return;
  context.set_phase("repair");
  Search search(context);
  auto u = best.u;
  const int n = static_cast<int>(p.variables().size());
  search.minimise_full(p, u, 0.002, 10 * (n + 2), Fidelity::final);
  evaluations += search.evaluations();
  auto repaired = final_checks(context.spec(), p, u);
  if (!repaired.all_met()) return;
  best.u = u;
  checks = std::move(repaired);
}

namespace {

// The search's best polished at full fidelity. The search measures the response on a coarser
// scan and a shorter step record than the final check and can settle where a shallow in-band
// ripple it sampled past turns a droop into a sag the final check counts; repairing that point
// with a tiny step then stops short (measured on tests/planning/p07, 1.1 % of bandwidth). This
// run measures what the final check measures, from the same start, with a step wide enough to
// leave such a place: 20 (n + 2) evaluations at 3 % of each range (chosen on the planning
// suite against 10 and 40, and 1 % and 10 %).
Candidate full_fidelity_polish(SearchContext& context, const Problem& p, const Candidate& start, int& evaluations) {
  Search search(context);
  auto u = start.u;
  const int n = static_cast<int>(p.variables().size());
  const Score s = search.minimise_full(p, u, 0.03, 20 * (n + 2), Fidelity::final);
  evaluations += search.evaluations();
  return {start.problem, std::move(u), s};
}

// A candidate that meets every final check, with its objective at full fidelity.
struct Checked {
  Candidate candidate;
  FinalChecks checks;
  double objective;
};

}  // namespace

Candidate final_phase(SearchContext& context, const std::vector<Problem>& problems,
                      const std::vector<Candidate>& ranked, FinalChecks& checks, int& evaluations) {
  std::optional<Checked> chosen;
  // Keeps c when it meets every check and measures better than the one kept so far; its
  // full-fidelity objective is measured unless `known` (the polish scored it at full fidelity).
  auto consider = [&](const Candidate& c, FinalChecks c_checks, std::optional<double> known = std::nullopt) {
    if (!c_checks.all_met()) return;
    double objective = 0.0;
    if (known) {
      objective = *known;
    } else {
      Search search(context);
      objective = search.score(problems[c.problem], c.u, Fidelity::final).objective;
      evaluations += search.evaluations();
    }
    if (!chosen || objective < chosen->objective) chosen = Checked{c, std::move(c_checks), objective};
  };

  Candidate first = ranked.front();
  const Problem& p = problems[first.problem];
  checks = final_checks(context.spec(), p, first.u);
  repair(context, p, first, checks, evaluations);
  const bool first_met = checks.all_met();
  consider(first, checks);
  if (global_sized(p)) {
    const Candidate polished = full_fidelity_polish(context, p, ranked.front(), evaluations);
    if (polished.score.feasible())
      consider(polished, final_checks(context.spec(), p, polished.u), polished.score.objective);
  }
  // A shape the search's coarser measurement passed and the final one does not, and no repair:
  // the first runner-up that meets every check, checked the same way, is a contender too.
  for (size_t r = 1; !first_met && r < std::min(ranked.size(), 1 + kGlobalKept); ++r) {
    Candidate next = ranked[r];
    if (!next.score.feasible()) break;
    auto next_checks = final_checks(context.spec(), problems[next.problem], next.u);
    repair(context, problems[next.problem], next, next_checks, evaluations);
    if (!next_checks.all_met()) continue;
    consider(next, std::move(next_checks));
    break;
  }
  if (!chosen) return first;  // nothing meets every check: the search's best, as checked
  checks = std::move(chosen->checks);
  return chosen->candidate;
}

PlanSpread start_spread(const ChainSpec& spec, const std::vector<Score>& finals) {
  PlanSpread spread;
  spread.starts = static_cast<int>(finals.size());
  std::vector<double> values;
  for (const auto& s : finals)
    if (s.feasible()) values.push_back(s.objective);
  spread.feasible = static_cast<int>(values.size());
  if (values.empty()) return spread;
  std::sort(values.begin(), values.end());
  const double best = values.front();
  const size_t m = values.size();
  const double median = m % 2 ? values[m / 2] : 0.5 * (values[m / 2 - 1] + values[m / 2]);
  spread.near_best = near_best(spec, finals);
  spread.best = objective_in_si(spec, best);
  spread.median = objective_in_si(spec, median);
  return spread;
}

}  // namespace peakplan
