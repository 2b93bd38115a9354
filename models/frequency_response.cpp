#include "models/frequency_response.hpp"

#include <algorithm>
#include <cmath>
#include <numbers>
#include <stdexcept>

namespace peakplan {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;

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

SampledResponse in_series(const std::vector<const SampledResponse*>& blocks) {
  if (blocks.empty()) throw std::invalid_argument("in_series: no blocks");
  SampledResponse r;
  r.frequency_hz = blocks.front()->frequency_hz;
  r.h.assign(r.frequency_hz.size(), 1.0);
  r.group_delay_s.assign(r.frequency_hz.size(), 0.0);
  for (const auto* b : blocks) {
    if (b->frequency_hz != r.frequency_hz) throw std::invalid_argument("in_series: the blocks' grids differ");
    for (size_t i = 0; i < r.h.size(); ++i) {
      r.h[i] *= b->h[i];
      r.group_delay_s[i] += b->group_delay_s[i];
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

namespace {

// |s| / 2 pi of every finite, non-zero pole and zero, sorted.
std::vector<double> root_frequencies(const Cascade& cascade) {
  std::vector<double> f;
  auto include = [&](const std::vector<std::complex<double>>& roots) {
    for (const auto& r : roots) {
      const double x = std::abs(r) / kTwoPi;
      if (x > 0.0 && std::isfinite(x)) f.push_back(x);
    }
  };
  include(cascade.poles());
  include(cascade.zeros());
  std::sort(f.begin(), f.end());
  return f;
}

std::pair<double, double> span_of(const std::vector<double>& roots_hz, double margin_decades) {
  if (roots_hz.empty()) return {1e6, 1e12};  // no dynamics at all: a pure gain
  const double margin = std::pow(10.0, margin_decades);
  return {roots_hz.front() / margin, roots_hz.back() * margin};
}

}  // namespace

std::pair<double, double> natural_span(const Cascade& cascade, double margin_decades) {
  return span_of(root_frequencies(cascade), margin_decades);
}

double group_delay(const Cascade& cascade, double f_hz) {
  return cascade.at_frequency(kTwoPi * f_hz).group_delay;
}

namespace {

// Scan abscissae (log frequency about f_lo): a uniform grid plus the natural frequency of every
// pole and zero inside the span. A lightly damped zero pair makes a notch, and a lightly damped
// pole pair a peak, narrower than any grid step could promise to catch; sampling at each root's
// |s| puts a scan point where the notch or peak is, so the first -3 dB crossing and the peak are
// never missed between grid points.
std::vector<double> scan_points(const std::vector<double>& roots_hz, double f_lo, double u_end, int points) {
  std::vector<double> us(static_cast<size_t>(points));
  for (int i = 0; i < points; ++i) us[static_cast<size_t>(i)] = u_end * i / (points - 1);
  const auto grid_end = static_cast<std::ptrdiff_t>(us.size());
  for (double f : roots_hz) {
    if (!(f > f_lo)) continue;
    const double u = std::log(f / f_lo);
    if (u < u_end) us.push_back(u);
  }
  // Both parts are sorted already: merge rather than sort.
  std::inplace_merge(us.begin(), us.begin() + grid_end, us.end());
  us.erase(std::unique(us.begin(), us.end()), us.end());
  return us;
}

}  // namespace

namespace {

// Log-frequency coordinates u = ln(f / f_lo) and the cascade's magnitude there.
struct LogAxis {
  const Cascade& cascade;
  double f_lo;
  double freq(double u) const { return f_lo * std::exp(u); }
  double mag(double u) const { return cascade.gain_at(kTwoPi * freq(u)); }
};

// The magnitude at every scan point, and the largest one above h0 (peak_index = size: none).
// A scan for the bandwidth alone fills its magnitudes only as far as the crossing search reads
// them (at(i)); nothing past the crossing is measured then, and the peak is not kept.
struct MagnitudeScan {
  const LogAxis* axis = nullptr;
  std::vector<double> us, mags;
  size_t filled = 0;
  double peak_mag = 0.0;
  size_t peak_index = 0;
  size_t size() const { return us.size(); }
  double at(size_t i) {
    for (; filled <= i; ++filled) mags[filled] = axis->mag(us[filled]);
    return mags[i];
  }
};

MagnitudeScan scan_magnitude(const LogAxis& axis, std::vector<double> us, double h0, bool on_demand) {
  MagnitudeScan s;
  s.axis = &axis;
  s.us = std::move(us);
  s.mags.resize(s.size());
  s.peak_mag = h0;
  s.peak_index = s.size();
  if (on_demand) return s;
  for (size_t i = 0; i < s.size(); ++i) {
    s.mags[i] = axis.mag(s.us[i]);
    if (s.mags[i] > s.peak_mag) {
      s.peak_mag = s.mags[i];
      s.peak_index = i;
    }
  }
  s.filled = s.size();
  return s;
}

// The first fall below `level`, bracketed by the scan: the scan index (size: none) and the
// bracket [a, b] in u. A shallow dip can touch the level between two scan points: every local
// minimum of the scan within 0.5 dB of the level is refined, and the crossing taken in the first
// that reaches it.
struct Crossing {
  size_t index;
  double a = 0.0, b = 0.0;
};

Crossing first_crossing(const LogAxis& axis, MagnitudeScan& scan, double level) {
  const auto& us = scan.us;
  const size_t n = scan.size();
  Crossing c{n};
  for (size_t i = 0; i < n && c.index == n; ++i) {
    const double mag = scan.at(i);
    if (mag < level) {
      if (i == 0) break;  // already below at the bottom of the span: not expected for dc-coupled
      c = {i, us[i - 1], us[i]};
    } else if (i > 0 && i + 1 < n && mag <= scan.at(i - 1) && mag <= scan.at(i + 1) && mag < level * 1.06) {
      const auto [u_min, neg] = golden_max([&](double u) { return -axis.mag(u); }, us[i - 1], us[i + 1]);
      if (-neg < level) c = {i, us[i - 1], u_min};
    }
  }
  return c;
}

// The crossing inside its bracket by bisection, Hz.
double bisect_crossing(const LogAxis& axis, double level, double a, double b) {
  for (int it = 0; it < 100 && b - a > 1e-14; ++it) {
    const double mid = 0.5 * (a + b);
    (axis.mag(mid) >= level ? a : b) = mid;
  }
  return axis.freq(0.5 * (a + b));
}

// Sags: interior minima of the scan before the crossing that the response rises out of (by more
// than 0.01 dB, so that numerical flatness is not one); the deepest, refined, into m.
void measure_sag(const LogAxis& axis, const MagnitudeScan& scan, size_t crossing, double h0, FrequencyMetrics& m) {
  const auto& us = scan.us;
  const auto& mags = scan.mags;
  const size_t n = scan.size();
  double rise_after = 0.0;
  for (size_t i = crossing; i-- > 1;) {
    rise_after = std::max(rise_after, mags[i + 1 < n ? i + 1 : i]);
    if (mags[i] <= mags[i - 1] && mags[i] <= mags[i + 1] && rise_after > mags[i] * 1.00115) {
      const auto [u_min, neg] = golden_max([&](double u) { return -axis.mag(u); }, us[i - 1], us[i + 1]);
      const double dip_db = 20.0 * std::log10(std::max(-neg, 1e-300) / h0);
      if (dip_db < m.sag_db) {
        m.sag_db = dip_db;
        m.sag_frequency_hz = axis.freq(u_min);
      }
    }
  }
}

// The peak above h0, refined about the scan's largest point, into m.
void measure_peak(const LogAxis& axis, const MagnitudeScan& scan, double h0, FrequencyMetrics& m) {
  const size_t n = scan.size(), i = scan.peak_index;
  if (i >= n || !(scan.peak_mag > h0 * (1.0 + 1e-12))) return;
  const auto [u, g] = golden_max([&](double x) { return axis.mag(x); }, scan.us[i == 0 ? 0 : i - 1],
                                 scan.us[std::min(n - 1, i + 1)]);
  const double peak_u = g > scan.peak_mag ? u : scan.us[i];
  m.peaking_db = 20.0 * std::log10(std::max(g, scan.peak_mag) / h0);
  m.peak_frequency_hz = axis.freq(peak_u);
}

// Group-delay ripple over (0, band]: a scan at the magnitude scan's step (`step` in u), then every
// interior extremum refined; the DC delay counts as one end.
double group_delay_ripple(const LogAxis& axis, const std::vector<double>& roots_hz, double band, double step,
                          double dc_delay) {
  auto tau = [&](double u) { return group_delay(axis.cascade, axis.freq(u)); };
  const double u_end = std::log(band / axis.f_lo);
  const auto ts = scan_points(roots_hz, axis.f_lo, u_end, std::max(3, static_cast<int>(u_end / step) + 2));
  const size_t n = ts.size();
  std::vector<double> taus(n);
  for (size_t i = 0; i < n; ++i) taus[i] = tau(ts[i]);
  double hi = std::max({dc_delay, taus.front(), taus.back()});
  double lo = std::min({dc_delay, taus.front(), taus.back()});
  for (size_t i = 1; i + 1 < n; ++i) {
    const double t = taus[i];
    const double left = taus[i - 1], right = taus[i + 1];
    if (t >= left && t >= right) hi = std::max({hi, t, golden_max(tau, ts[i - 1], ts[i + 1]).second});
    if (t <= left && t <= right)
      lo = std::min({lo, t, -golden_max([&](double u) { return -tau(u); }, ts[i - 1], ts[i + 1]).second});
  }
  return hi - lo;
}

}  // namespace

FrequencyMetrics frequency_metrics(const Cascade& cascade, double ripple_band_hz, const ScanResolution& scan) {
  FrequencyMetrics m;
  m.dc_gain = cascade.dc_value();
  m.group_delay_s = -cascade.log_derivative({0.0, 0.0}).real();
  const double h0 = std::fabs(m.dc_gain);
  if (h0 == 0.0 || !std::isfinite(h0)) return m;

  const auto roots_hz = root_frequencies(cascade);
  const auto [f_lo, f_hi] = span_of(roots_hz, scan.margin_decades);
  const int points = std::max(2, static_cast<int>(std::log10(f_hi / f_lo) * scan.per_decade));
  const LogAxis axis{cascade, f_lo};
  auto mags = scan_magnitude(axis, scan_points(roots_hz, f_lo, std::log(f_hi / f_lo), points), h0, scan.bandwidth_only);

  // Bandwidth: the first fall below h0/sqrt(2), bracketed by the scan, then bisection.
  const double level = h0 / std::sqrt(2.0);
  const auto crossing = first_crossing(axis, mags, level);
  if (crossing.index < mags.size()) {
    m.bandwidth_hz = bisect_crossing(axis, level, crossing.a, crossing.b);
    if (scan.bandwidth_only) return m;
    measure_sag(axis, mags, crossing.index, h0, m);
  }
  if (scan.bandwidth_only) return m;  // none in the span
  measure_peak(axis, mags, h0, m);

  const double band = std::isfinite(ripple_band_hz) ? ripple_band_hz : m.bandwidth_hz;
  if (std::isfinite(band) && band > 0.0) {
    m.ripple_band_hz = band;
    m.group_delay_ripple_s =
        group_delay_ripple(axis, roots_hz, band, std::log(f_hi / f_lo) / (points - 1), m.group_delay_s);
  }
  return m;
}

}  // namespace peakplan
