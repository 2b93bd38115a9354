// The spread of the main output's magnitude and step responses across a [variation] result's
// corners, for a report to draw as a band: every corner analysed with the nominal analysis's
// options (no eye, no noise: only the responses are wanted), its magnitude sampled on the
// nominal frequency grid itself and its step interpolated onto the nominal time axis (linear
// time), then the least and greatest value at each grid point. The nominal corner is one of the
// corners, so the band contains the nominal curve.
#pragma once

#include <vector>

#include "models/analysis.hpp"
#include "planner/variation_analysis.hpp"

namespace peakplan {

struct CornerEnvelope {
  int corners = 0;
  std::vector<double> frequency_hz;                  // the nominal grid
  std::vector<double> magnitude_db, magnitude_lo_db, magnitude_hi_db;  // nominal, least, greatest
  std::vector<double> time_s;                        // the nominal step's axis (decimated)
  std::vector<double> step, step_lo, step_hi;        // divided by each corner's own DC gain
};

// `nominal_analysis` is analyze_chain(nominal, options) with waveforms kept.
CornerEnvelope corner_envelope(const VariationResult& result, const Chain& nominal,
                               const ChainAnalysis& nominal_analysis, AnalysisOptions options);

}  // namespace peakplan
