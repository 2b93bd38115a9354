#!/bin/sh
# The long reference runs of the planning suite (not a test): for every problem here, the planner
# with its global phase's starts multiplied by EFFORT (default 25) once for each of SEEDS seeds
# (default 4; 25 x 4 = 100 times the planner's global budget in all), the best objective written
# to PROBLEM.ref beside the problem with the method, the spread over the seeds and the cost.
# METHOD (default halving, the planner's own global phase) picks the global phase: isres, mlsl or
# crs2 run NLopt's global algorithm of that name instead (planner/plan_global_nlopt.hpp), with
# EFFORT x 25 (12 + n)(n + 2) evaluations per seed; halving_crs2 runs the multi-start, then CRS2.
# A .ref is the best plan any long run found: a run that does not beat the .ref already there
# (wider, or leaner for leanest) leaves it as it is, so references only get stronger whichever
# method found them. PROBLEMS (names without .toml, space-separated) limits the runs to those.
#   cmake --build build --target peakplan_plan_reference && tests/planning/make_references.sh [build]
set -eu
here=$(cd "$(dirname "$0")" && pwd)
build=${1:-$here/../../build}
runner=${RUNNER:-$build/tests/peakplan_plan_reference}
effort=${EFFORT:-25}
seeds=${SEEDS:-4}
method=${METHOD:-halving}
if [ "$method" = halving ]; then
  described="planner global phase x$effort"
  how="with its global phase's starts multiplied by $effort"
else
  described="global phase $method, effort $effort"
  how="with $method as its global phase at effort $effort"
fi
for problem in "$here"/*.toml; do
  name=$(basename "$problem" .toml)
  if [ -n "${PROBLEMS:-}" ] && ! echo " $PROBLEMS " | grep -q " $name "; then continue; fi
  out=$("$runner" "$problem" --effort "$effort" --seeds "$seeds" --method "$method" 2>/dev/null)
  ref="${problem%.toml}.ref"
  new=$(echo "$out" | awk '/^reference/ {print $2}')
  if [ -f "$ref" ] && [ -n "$new" ]; then
    old=$(awk '/^reference = / {print $3}' "$ref")
    lean=$(grep -c 'objective = "leanest"' "$problem" || true)
    if awk -v a="$new" -v b="$old" -v lean="$lean" 'BEGIN { exit !(lean > 0 ? a >= b : a <= b) }'; then
      echo "$name: $method x$effort found $new, not better than the .ref's $old: kept"
      continue
    fi
  fi
  {
    echo "# Reference optimum of $(basename "$problem"), found by tests/planning/make_references.sh:"
    echo "# the planner $how, once per seed ($seeds seeds),"
    echo "# the best of the runs kept. spread: best against worst run, %. Regenerate, never edit."
    echo "method = \"$described, $seeds seeds (1000, 1007, 1014, ...)\""
    echo "$out" | awk '/^reference/ {print "reference = " $2} /^spread/ {print "spread_pct = " $2}
                      /^evaluations/ {print "evaluations = " $2} /^seconds/ {print "seconds = " $2}'
    echo "$out" | awk '/^seed/ {sub(":", "", $2); print "# seed " $2 ": " $3}'
  } > "$ref"
  echo "$name: $(grep '^reference' "$ref")"
done
