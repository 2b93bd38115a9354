#include "models/frequency_response.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>

namespace peakplan {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr int kScanPerDecade = 60;

std::complex<double> at(double f_hz) { return {0.0, kTwoPi * f_hz}; }

// Golden-section search for the maximum of g on [a, b] (log-frequency coordinates).
template <class F>
std::pair<double, double> golden_max(F g, double a, double b) {
  const double ratio = (std::sqrt(5.0) - 1.0) / 2.0;
  double x1 = b - ratio * (b - a), x2 = a + ratio * (b - a);
  double g1 = g(x1), g2 = g(x2);
  for (int i = 0; i < 80 && (b - a) > 1e-13 * std::max(1.0, std::fabs(a)); ++i) {
    if (g1 < g2) {
      a = x1;
      x1 = x2;
      g1 = g2;
      x2 = a + ratio * (b - a);
      g2 = g(x2);
    } else {
      b = x2;
      x2 = x1;
      g2 = g1;
      x1 = b - ratio * (b - a);
      g1 = g(x1);
    }
  }
  return g1 > g2 ? std::pair{x1, g1} : std::pair{x2, g2};
}

}  // namespace

FrequencyGrid::FrequencyGrid(std::vector<double> hz) : hz_(std::move(hz)) {
  if (hz_.empty()) throw std::invalid_argument("FrequencyGrid: no frequencies");
  for (size_t i = 0; i < hz_.size(); ++i) {
    if (!(hz_[i] > 0.0) || !std::isfinite(hz_[i]))
      throw std::invalid_argument("FrequencyGrid: frequencies must be finite and positive");
    if (i > 0 && !(hz_[i] > hz_[i - 1]))
      throw std::invalid_argument("FrequencyGrid: frequencies must be strictly increasing");
  }
}

FrequencyGrid FrequencyGrid::log(double f_start, double f_stop, int points) {
  if (points < 2 || !(f_stop > f_start) || !(f_start > 0.0))
    throw std::invalid_argument("FrequencyGrid::log needs 0 < f_start < f_stop and points >= 2");
  std::vector<double> hz(static_cast<size_t>(points));
  const double step = std::log(f_stop / f_start) / (points - 1);
  for (int i = 0; i < points; ++i) hz[static_cast<size_t>(i)] = f_start * std::exp(step * i);
  hz.back() = f_stop;
  return FrequencyGrid(std::move(hz));
}

std::vector<double> SampledResponse::magnitude_db() const {
  std::vector<double> db(h.size());
  for (size_t i = 0; i < h.size(); ++i) db[i] = 20.0 * std::log10(std::abs(h[i]));
  return db;
}

SampledResponse sample_nodal(const std::vector<const NodalSystem*>& blocks, const FrequencyGrid& grid) {
  SampledResponse r;
  r.frequency_hz = grid.hz();
  r.h.assign(grid.size(), 1.0);
  r.group_delay_s.assign(grid.size(), 0.0);
  for (const auto* block : blocks) {
    for (size_t i = 0; i < grid.size(); ++i) {
      const auto [h, dh] = block->transfer_and_derivative(at(grid.hz()[i]));
      r.h[i] *= h;
      r.group_delay_s[i] += -(dh / h).real();
    }
  }
  return r;
}

SampledResponse sample_rational(const Cascade& cascade, const FrequencyGrid& grid) {
  SampledResponse r;
  r.frequency_hz = grid.hz();
  r.h.resize(grid.size());
  r.group_delay_s.resize(grid.size());
  for (size_t i = 0; i < grid.size(); ++i) {
    const auto p = cascade.at_frequency(kTwoPi * grid.hz()[i]);
    r.h[i] = p.h;
    r.group_delay_s[i] = p.group_delay;
  }
  return r;
}

std::pair<double, double> natural_span(const Cascade& cascade, double margin_decades) {
  double lo = std::numeric_limits<double>::infinity(), hi = 0.0;
  auto include = [&](const std::vector<std::complex<double>>& roots) {
    for (const auto& r : roots) {
      const double f = std::abs(r) / kTwoPi;
      if (f <= 0.0 || !std::isfinite(f)) continue;
      lo = std::min(lo, f);
      hi = std::max(hi, f);
    }
  };
  include(cascade.poles());
  include(cascade.zeros());
  if (hi == 0.0) return {1e6, 1e12};  // no dynamics at all: a pure gain
  const double margin = std::pow(10.0, margin_decades);
  return {lo / margin, hi * margin};
}

double group_delay(const Cascade& cascade, double f_hz) {
  return cascade.at_frequency(kTwoPi * f_hz).group_delay;
}

FrequencyMetrics frequency_metrics(const Cascade& cascade, double ripple_band_hz) {
  FrequencyMetrics m;
  m.dc_gain = cascade.dc_value();
  m.group_delay_s = -cascade.log_derivative({0.0, 0.0}).real();
  const double h0 = std::fabs(m.dc_gain);
  if (h0 == 0.0 || !std::isfinite(h0)) return m;

  const auto [f_lo, f_hi] = natural_span(cascade);
  const int points = std::max(2, static_cast<int>(std::log10(f_hi / f_lo) * kScanPerDecade));
  const double step = std::log(f_hi / f_lo) / (points - 1);
  auto freq = [&](double u) { return f_lo * std::exp(u); };
  auto mag = [&](double u) { return std::abs(cascade.at_frequency(kTwoPi * freq(u)).h); };

  // Bandwidth: the first scan point below h0/sqrt(2), then bisection on log frequency.
  const double level = h0 / std::sqrt(2.0);
  double peak_u = 0.0, peak_mag = h0;
  int peak_index = -1;
  std::vector<double> mags(static_cast<size_t>(points));
  for (int i = 0; i < points; ++i) {
    mags[static_cast<size_t>(i)] = mag(step * i);
    if (mags[static_cast<size_t>(i)] > peak_mag) {
      peak_mag = mags[static_cast<size_t>(i)];
      peak_index = i;
    }
  }
  for (int i = 0; i < points; ++i) {
    if (mags[static_cast<size_t>(i)] >= level) continue;
    if (i == 0) break;  // already below at the bottom of the span: not expected for dc-coupled
    double a = step * (i - 1), b = step * i;
    for (int it = 0; it < 100 && b - a > 1e-14; ++it) {
      const double mid = 0.5 * (a + b);
      (mag(mid) >= level ? a : b) = mid;
    }
    m.bandwidth_hz = freq(0.5 * (a + b));
    break;
  }

  if (peak_index >= 0 && peak_mag > h0 * (1.0 + 1e-12)) {
    const double a = step * std::max(0, peak_index - 1);
    const double b = step * std::min(points - 1, peak_index + 1);
    const auto [u, g] = golden_max(mag, a, b);
    peak_u = u;
    peak_mag = std::max(g, peak_mag);
    m.peaking_db = 20.0 * std::log10(peak_mag / h0);
    m.peak_frequency_hz = freq(peak_u);
  }

  // Group-delay ripple over (0, band]: scan, then refine every interior extremum.
  const double band = std::isfinite(ripple_band_hz) ? ripple_band_hz : m.bandwidth_hz;
  if (std::isfinite(band) && band > 0.0) {
    m.ripple_band_hz = band;
    auto tau = [&](double u) { return group_delay(cascade, freq(u)); };
    const double u_end = std::log(band / f_lo);
    const int n = std::max(3, static_cast<int>(u_end / step) + 2);
    const double du = u_end / (n - 1);
    std::vector<double> taus(static_cast<size_t>(n));
    for (int i = 0; i < n; ++i) taus[static_cast<size_t>(i)] = tau(du * i);
    double hi = std::max({m.group_delay_s, taus.front(), taus.back()});
    double lo = std::min({m.group_delay_s, taus.front(), taus.back()});
    for (int i = 1; i + 1 < n; ++i) {
      const double t = taus[static_cast<size_t>(i)];
      const double left = taus[static_cast<size_t>(i - 1)], right = taus[static_cast<size_t>(i + 1)];
      if (t >= left && t >= right)
        hi = std::max(hi, golden_max(tau, du * (i - 1), du * (i + 1)).second);
      if (t <= left && t <= right)
        lo = std::min(lo, -golden_max([&](double u) { return -tau(u); }, du * (i - 1), du * (i + 1)).second);
    }
    m.group_delay_ripple_s = hi - lo;
  }
  return m;
}

}  // namespace peakplan
