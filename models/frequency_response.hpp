// Frequency responses: sampled on a grid for display, and the metrics of docs/physics.md (metrics)
// found on the continuous response (grid scan, then bisection or golden-section refinement).
#pragma once

#include <complex>
#include <limits>
#include <vector>

#include "models/nodal_system.hpp"
#include "models/rational.hpp"

namespace peakplan {

// Strictly increasing, positive frequencies in Hz.
class FrequencyGrid {
 public:
  static FrequencyGrid log(double f_start, double f_stop, int points);
  explicit FrequencyGrid(std::vector<double> hz);  // throws std::invalid_argument
  const std::vector<double>& hz() const { return hz_; }
  size_t size() const { return hz_.size(); }

 private:
  std::vector<double> hz_;
};

struct SampledResponse {
  std::vector<double> frequency_hz;
  std::vector<std::complex<double>> h;
  std::vector<double> group_delay_s;
  std::vector<double> magnitude_db() const;
};

// The exact response of blocks in series, solving each block's nodal system at every frequency;
// group delay from the derivative of the same solves.
SampledResponse sample_nodal(const std::vector<const NodalSystem*>& blocks, const FrequencyGrid& grid);
// Blocks in series from their responses sampled on one grid: the product of the transfers and the
// sum of the group delays, with no solve. Throws std::invalid_argument when the grids differ.
SampledResponse in_series(const std::vector<const SampledResponse*>& blocks);
// The same from the rational form (fast path for the planner and for plots).
SampledResponse sample_rational(const Cascade& cascade, const FrequencyGrid& grid);

inline constexpr double not_found = std::numeric_limits<double>::quiet_NaN();

struct FrequencyMetrics {
  double dc_gain = 0.0;            // signed H(0)
  double bandwidth_hz = not_found; // first fall to |H(0)|/sqrt(2); NaN if none in range
  double peaking_db = 0.0;
  double peak_frequency_hz = 0.0;  // 0 when there is no peak
  double group_delay_s = 0.0;      // at DC
  double group_delay_ripple_s = 0.0;
  double ripple_band_hz = 0.0;     // the band the ripple was taken over
  // The deepest dip inside the band that the response climbs back out of before its -3 dB edge,
  // in dB against DC (0 when the passband has none). A response can hover just above -3 dB and
  // recover, which stretches the -3 dB bandwidth far past where its gain first sagged.
  double sag_db = 0.0;
  double sag_frequency_hz = 0.0;   // 0 when there is no sag
};

// Frequencies (Hz) that bracket every pole and zero of the cascade by `margin` decades.
std::pair<double, double> natural_span(const Cascade& cascade, double margin_decades = 3.0);

// How densely the metrics scan the response before refining: the span reaches margin_decades
// beyond the outermost pole or zero, at per_decade points per decade. The default is what every
// reported figure uses; a planner's search may scan more coarsely and re-measure at the end.
struct ScanResolution {
  double margin_decades = 3.0;
  int per_decade = 60;
  bool bandwidth_only = false;  // stop once the bandwidth is found (no peak, sag or ripple)
};

// ripple_band_hz: upper end of the group-delay ripple band; NaN means up to the bandwidth.
FrequencyMetrics frequency_metrics(const Cascade& cascade, double ripple_band_hz = not_found,
                                   const ScanResolution& scan = {});

double group_delay(const Cascade& cascade, double f_hz);

}  // namespace peakplan
