// plan_for = "yield" (planner/plan_problem.hpp): the plan holds at the global corners scaled to
// the box whose probability is the yield target, and a Monte Carlo run of the plan is a check.
#include <doctest/doctest.h>

#include <cmath>
#include <string>

#include "planner/input/chain_file.hpp"
#include "planner/plan_problem.hpp"
#include "planner/planner.hpp"
#include "cli_support.hpp"

using namespace peakplan;

namespace {

ChainSpec yield_spec(const std::string& yield, const std::string& distribution = "gaussian") {
  std::string text = test::read_file(std::string(PEAKPLAN_SOURCE_DIR) + "/chains/variation_post_amp.toml");
  const auto at = text.find("plan_for = \"corners\"");
  REQUIRE(at != std::string::npos);
  text.replace(at, std::string("plan_for = \"corners\"").size(), "plan_for = \"yield\"\nyield = \"" + yield + "\"");
  const auto d_at = text.find("distribution = \"gaussian\"");
  REQUIRE(d_at != std::string::npos);
  text.replace(d_at, std::string("distribution = \"gaussian\"").size(), "distribution = \"" + distribution + "\"");
  Diagnostics d("yield.toml");
  auto spec = parse_chain_spec(text, d);
  REQUIRE_MESSAGE(spec, d.format());
  return *spec;
}

}  // namespace

TEST_CASE("yield corners: the box of +-a spreads in c classes holds the yield target (derived)") {
  // variation_post_amp.toml spreads gm, capacitance and resistance globally: c = 3. Gaussian, the
  // spread is 3 sigma: P(|z| < 3a)^3 = erf(3a/sqrt 2)^3 must equal the target; uniform: a^3.
  for (double y : {0.9, 0.95, 0.99}) {
    CAPTURE(y);
    const auto gaussian = yield_spec(std::to_string(100.0 * y) + " %");
    const double a = yield_corner_scale(gaussian);
    CHECK(std::pow(std::erf(3.0 * a / std::sqrt(2.0)), 3) == doctest::Approx(y).epsilon(1e-12));
    const auto uniform = yield_spec(std::to_string(100.0 * y) + " %", "uniform");
    CHECK(std::pow(yield_corner_scale(uniform), 3) == doctest::Approx(y).epsilon(1e-12));
  }
}

TEST_CASE("plan for yield: every check holds at the scaled corners and the Monte Carlo yield meets the target") {
  const auto spec = yield_spec("95 %");
  Diagnostics d("yield.toml");
  const auto plan = plan_chain(spec, d);
  REQUIRE_MESSAGE(plan, d.format());
  CHECK(plan->termination == Plan::Termination::met);
  CHECK(plan->corner_count == 9);  // nominal and 2^3 scaled extremes
  bool yield_checked = false;
  for (size_t i = 0; i < plan->checks.size(); ++i) {
    const auto& c = plan->checks[i];
    CAPTURE(c.name);
    CHECK(c.met);
    if (c.name == "yield") {
      yield_checked = true;
      CHECK(c.value >= 95.0);
      CHECK(plan->check_corners[i] == "Monte Carlo");
    } else if (plan->check_corners[i] != "nominal") {
      CHECK(plan->check_corners[i].find("sigma") != std::string::npos);
    }
  }
  CHECK(yield_checked);
}

TEST_CASE("plan for yield: the yield target and plan_for go together, with a [variation] global spread") {
  auto spec = yield_spec("95 %");
  spec.target.yield.reset();
  Diagnostics d("yield.toml");
  CHECK_FALSE(plan_chain(spec, d));
  CHECK(d.format().find("needs [target] yield") != std::string::npos);

  auto stray = yield_spec("95 %");
  stray.target.plan_for = "nominal";
  Diagnostics d2("yield.toml");
  CHECK_FALSE(plan_chain(stray, d2));
  CHECK(d2.format().find("[target] yield is the target of plan_for") != std::string::npos);
}
