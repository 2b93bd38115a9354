// The dynamic range of a limiting chain: its large-signal eye height (differential volts) and
// DDJ against the input swing, from a sweep of [signal] swing that the command ran
// (planner/sweep.hpp). Nothing here simulates.
#pragma once

#include <string>
#include <vector>

#include "planner/sweep.hpp"
#include "reports/plots.hpp"

namespace peakplan {

// The swing range the report sweeps: `points` log-spaced from swing/10 to swing*10 (21 points,
// so the file's own swing is the middle one).
inline constexpr int kDynamicRangePoints = 21;
inline constexpr double kDynamicRangeDecade = 10.0;

// dynamic_range.svg (eye height, V) and dynamic_range_ddj.svg (DDJ, s), both on a log swing
// axis with the file's swing marked; empty when no row has a large-signal eye.
std::vector<PlotFile> dynamic_range_plots(const SweepResult& sweep, double file_swing_v);

}  // namespace peakplan
