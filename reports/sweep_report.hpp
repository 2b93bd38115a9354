// A sweep (planner/sweep.hpp) shown three ways over the same rows: a terminal table in
// engineering units, CSV (SI values, one header line, one line per point) and JSON.
#pragma once

#include <nlohmann/json.hpp>
#include <string>

#include "planner/sweep.hpp"

namespace peakplan {

std::string sweep_text(const SweepResult& sweep);
// Columns: the varied key (named ID.KEY), dc_gain_db, bandwidth_hz, peaking_db, overshoot_pct,
// group_delay_ripple_s, prbs_height (with [signal]), the large-signal columns (with a limited
// stage), with [variation] worst_<metric> for each of those (worst corner), overall_yield and
// yield_ci95_lo/hi, then with replanning status and one
// column per open value (ID.KEY). A metric that does not exist is an empty field.
std::string sweep_csv(const SweepResult& sweep);
nlohmann::json sweep_json(const SweepResult& sweep);

}  // namespace peakplan
