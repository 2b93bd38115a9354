#include "models/noise.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <numbers>
#include <stdexcept>

#include <boost/container/small_vector.hpp>
#include <boost/math/quadrature/gauss.hpp>

#include "models/fixed_size.hpp"
#include "models/small_lu.hpp"

namespace peakplan {
namespace {

constexpr double kTwoPi = 2.0 * std::numbers::pi;
constexpr int kFixedNoiseSize = 8;  // the largest system solved by the fixed-size LU

double generator_psd(const NodalSystem::NoiseGenerator& g, const NoiseOptions& o) {
  const double four_kt = 4.0 * boltzmann * o.temperature;
  using Kind = NodalSystem::NoiseGenerator::Kind;
  switch (g.kind) {
    case Kind::resistor: return o.resistor_noise ? four_kt * g.value : 0.0;   // A^2/Hz
    case Kind::coil_loss: return o.resistor_noise ? four_kt * g.value : 0.0;  // V^2/Hz
    case Kind::gm_cell: return o.gm_noise ? four_kt * o.gamma * g.value : 0.0;  // A^2/Hz
    case Kind::shot: return 2.0 * elementary_charge * g.value;                  // A^2/Hz
  }
  return 0.0;
}

template <class Vector>
std::complex<double> excitation(const Vector& w, const NodalSystem::NoiseGenerator& g) {
  std::complex<double> v = 0.0;
  if (g.plus != NodalSystem::ground) v += w[g.plus];
  if (g.minus != NodalSystem::ground) v -= w[g.minus];
  return v;
}

// w = (G + sC)^-T e_out, then the transfer w . b and the PSD sum |w . e_gen|^2 S_gen; fixed-size
// solves (N unknowns, models/small_lu.hpp) for the small systems stages are. G, C and b are real.
template <int N, class Generators>
std::pair<std::complex<double>, double> evaluate_fixed(const Eigen::MatrixXd& g, const Eigen::MatrixXd& c,
                                                       const Eigen::VectorXd& b, int output,
                                                       const Generators& generators, std::complex<double> s_scaled) {
  // (G + sC)^T, with s purely imaginary: entry (r, col) is that of (col, r).
  const SmallLU<N> lu([&](int r, int col) { return std::complex<double>(g(col, r), s_scaled.imag() * c(col, r)); });
  typename SmallLU<N>::Vector w{};
  w[output] = 1.0;
  lu.solve(w);
  double psd = 0.0;
  for (const auto& [gen, density] : generators) psd += std::norm(excitation(w, gen)) * density;
  std::complex<double> h = 0.0;
  for (int r = 0; r < N; ++r) h += w[r] * b(r);
  return {h, psd};
}

}  // namespace

CircuitNoise::CircuitNoise(const NodalSystem& system, const NoiseOptions& options) {
  if (system.output_node() == NodalSystem::ground) throw std::logic_error("noise: no output node set");
  g_real_ = system.G();
  c_real_ = system.C();
  b_real_ = system.b();
  output_ = system.output_node();
  if (system.size() > kFixedNoiseSize) {
    g_ = g_real_.cast<std::complex<double>>();
    c_ = c_real_.cast<std::complex<double>>();
    b_ = b_real_.cast<std::complex<double>>();
    e_out_ = Eigen::VectorXcd::Zero(system.size());
    e_out_(system.output_node()) = 1.0;
  }
  for (const auto& g : system.noise_generators()) {
    const double psd = generator_psd(g, options);
    if (psd > 0.0) generators_.emplace_back(g, psd);
  }
}

std::pair<std::complex<double>, double> CircuitNoise::evaluate(double f_hz) const {
  const std::complex<double> s_scaled(0.0, kTwoPi * f_hz * NodalSystem::time_scale);
  // v_out = e_out^T (G + sC)^-1 e = w^T e for every right-hand side e: one transposed solve.
  return with_fixed_size<kFixedNoiseSize>(
      static_cast<int>(g_real_.rows()),
      [&](auto n) { return evaluate_fixed<n.value>(g_real_, c_real_, b_real_, output_, generators_, s_scaled); },
      [&]() -> std::pair<std::complex<double>, double> {
        const Eigen::MatrixXcd y = (g_ + s_scaled * c_).transpose();
        const Eigen::VectorXcd w = Eigen::PartialPivLU<Eigen::MatrixXcd>(y).solve(e_out_);
        double psd = 0.0;
        for (const auto& [gen, density] : generators_) psd += std::norm(excitation(w, gen)) * density;
        return {w.cwiseProduct(b_).sum(), psd};
      });
}

namespace {

int stage_of(const Chain& chain, int output) {
  if (output < 0 || output >= static_cast<int>(chain.stages.size()))
    throw std::logic_error("ChainNoise: output is not a stage of the chain");
  return output;
}

}  // namespace

ChainNoise::ChainNoise(const Chain& chain, int output, NoiseOptions options)
    : ChainNoise(chain, output, options, output_cascade(chain, stage_of(chain, output))) {}

ChainNoise::ChainNoise(const Chain& chain, int output, NoiseOptions options, Cascade cascade)
    : options_(options), cascade_(std::move(cascade)) {
  stage_of(chain, output);
  // The source network as analyze_chain and output_cascade see it; with c_in = 0 it is a plain
  // resistor whose noise reaches the first gate unfiltered.
  if (chain.r_source > 0.0 && !chain.current_input()) {
    NodalSystem source;
    const int in = source.add_node("in");
    source.add_source(in, chain.r_source);
    source.add_capacitor(in, NodalSystem::ground,
                         chain.stages[static_cast<size_t>(chain.input_stage())].c_in);
    source.set_output(in);
    blocks_.emplace_back(source, options_);
  }
  alike_.assign(blocks_.size(), 0);
  for (size_t b = 0; b < blocks_.size(); ++b) alike_[b] = b;
  std::vector<const StageCircuit*> circuits(blocks_.size(), nullptr);  // none for the source network
  for (int s : chain.path_to(output)) {
    const StageCircuit& circuit = chain.stages[static_cast<size_t>(s)].circuit;
    const size_t b = blocks_.size();
    circuits.push_back(&circuit);
    alike_.push_back(b);
    for (size_t j = 0; j < b && alike_[b] == b; ++j)
      if (circuits[j] && *circuits[j] == circuit) alike_[b] = j;
    if (alike_[b] == b) blocks_.emplace_back(build_stage_system(circuit), options_);
    else blocks_.push_back(blocks_[alike_[b]]);
  }
}

std::pair<std::complex<double>, double> ChainNoise::evaluate(double f_hz) const {
  // A stage repeating an earlier one's circuit has its transfer and noise: solved once.
  boost::container::small_vector<std::pair<std::complex<double>, double>, 16> at(blocks_.size());
  for (size_t b = 0; b < blocks_.size(); ++b) at[b] = alike_[b] == b ? blocks_[b].evaluate(f_hz) : at[alike_[b]];
  // From the output backwards, so each block's own noise meets the gain after it.
  double psd = 0.0, gain_after = 1.0;
  std::complex<double> h = 1.0;
  for (size_t b = blocks_.size(); b-- > 0;) {
    const auto [hi, own] = at[b];
    psd += own * gain_after;
    gain_after *= std::norm(hi);
    h *= hi;
  }
  psd += options_.input_density * options_.input_density * gain_after;
  return {h, psd};
}

double ChainNoise::output_psd(double f_hz) const { return evaluate(f_hz).second; }
std::complex<double> ChainNoise::transfer(double f_hz) const { return evaluate(f_hz).first; }

std::vector<NoisePoint> noise_spectrum(const ChainNoise& noise, const FrequencyGrid& grid) {
  std::vector<NoisePoint> out;
  out.reserve(grid.size());
  for (double f : grid.hz()) {
    const auto [h, psd] = noise.evaluate(f);
    NoisePoint p;
    p.frequency_hz = f;
    p.output_density = std::sqrt(psd);
    p.gain = std::abs(h);
    p.input_density = p.gain > 0.0 ? p.output_density / p.gain : std::numeric_limits<double>::infinity();
    out.push_back(p);
  }
  return out;
}

double integrate_psd(const std::function<double(double)>& psd, double f_lo, double f_hi, int per_decade) {
  const int kPerDecade = std::max(2, per_decade);
  const double u_lo = std::log(f_lo), u_hi = std::log(f_hi);
  int intervals = static_cast<int>(std::ceil((u_hi - u_lo) / std::log(10.0) * kPerDecade));
  intervals += intervals % 2;
  const double h = (u_hi - u_lo) / intervals;
  // In u = ln f the integrand is S(f) f: smooth on a log grid for responses spanning decades.
  auto g = [&](double u) {
    const double f = std::exp(u);
    return psd(f) * f;
  };
  double sum = g(u_lo) + g(u_hi);
  for (int i = 1; i < intervals; ++i) sum += (i % 2 ? 4.0 : 2.0) * g(u_lo + i * h);
  const double middle = sum * h / 3.0;
  const double below = psd(f_lo) * f_lo;  // flat below f_lo
  // Above f_hi the response is its high-frequency asymptote, a power of f: its slope from two
  // close points integrates the tail in closed form.
  const double s_hi = psd(f_hi);
  if (s_hi == 0.0) return below + middle;
  const double ratio = 1.01;
  const double slope = std::log(psd(f_hi * ratio) / s_hi) / std::log(ratio);
  if (!(slope < -1.5)) return std::numeric_limits<double>::infinity();
  return below + middle + s_hi * f_hi / (-slope - 1.0);
}

double noise_bandwidth(const Cascade& cascade) {
  int relative_degree = 0;
  for (const auto& block : cascade.blocks()) relative_degree += block.order() - block.numerator_degree();
  if (relative_degree <= 0) return std::numeric_limits<double>::infinity();
  const double h0 = cascade.dc_value();
  const auto [f_lo, f_hi] = natural_span(cascade, 3.0);
  return integrate_psd(
      [&](double f) { return std::norm(cascade.evaluate({0.0, kTwoPi * f}) / h0); }, f_lo, f_hi);
}

namespace {

// The output PSD behind the receiver's first-order limit (none when its bandwidth is 0), as the
// rms, Q and BER take it.
std::function<double(double)> receiver_limited_psd(const ChainNoise& noise) {
  const double fr = noise.options().receiver_bandwidth_hz;
  return [&noise, fr](double f) {
    const double psd_out = noise.output_psd(f);
    return fr > 0.0 ? psd_out / (1.0 + (f / fr) * (f / fr)) : psd_out;
  };
}

// The integrated output PSD with the receiver's first-order limit, over a span that grows (up to
// six decades) while the PSD still falls too slowly at its end; returns it and the span's end.
std::pair<double, double> integrated_output_psd(const ChainNoise& noise, int per_decade) {
  auto [f_lo, f_hi] = natural_span(noise.cascade(), 3.0);
  const auto psd = receiver_limited_psd(noise);
  double total = integrate_psd(psd, f_lo, f_hi, per_decade);
  for (int extra = 0; extra < 6 && !std::isfinite(total); ++extra) {
    f_hi *= 10.0;
    total = integrate_psd(psd, f_lo, f_hi, per_decade);
  }
  return {total, f_hi};
}

}  // namespace

double output_rms_noise(const ChainNoise& noise, int per_decade) {
  return std::sqrt(integrated_output_psd(noise, per_decade).first);
}

namespace {

using Psd = std::function<double(double)>;

// 1.5 decades beyond the outermost roots, the first term the two-term asymptotes below and
// above leave out is (10^-1.5)^4 = 1e-6 of their own share of the total: measured 1e-9..1e-8 of
// the total on the shipped chains (a one-decade margin left 2e-6).
constexpr double kPanelMargin = 1.5;                  // decades
constexpr double kPanelWidth = 0.5 * std::numbers::ln10;  // in ln f: half a decade at most
constexpr double kGradedDamping = 0.5;                // graded below it
constexpr int kExtraDecades = 6;                      // as integrated_output_psd lets its span grow
// Points of each Gauss-Legendre panel. On the shipped chains 6 leave the mean square within
// 6.5e-7 of the 160-a-decade Simpson integral (7: 6.8e-8, 10: 4.4e-8, where the end fits
// dominate; 5: 1.5e-5), far inside what ranks two candidates, for 14 % fewer PSD evaluations than 7.
constexpr unsigned kGaussPoints = 6;

// Panel edges over [u_a, u_b] in u = ln f. A pole pair of damping zeta puts a peak in S(f) f
// whose nearest singularities lie zeta off the real u axis at u_n = ln(f_n): too narrow for a
// half-decade panel when zeta is small. Edges at u_n and u_n +- zeta 3^k make every panel at
// least its own half-width from those singularities (Bernstein ellipse parameter 2 + sqrt3 or
// more: the 6-point rule errs by about 3.7^-12, 1.4e-7, of the panel), as on a smooth stretch.
std::vector<double> panel_edges(double u_a, double u_b, const std::vector<std::complex<double>>& poles) {
  std::vector<double> edges{u_a, u_b};
  const auto add = [&](double u) {
    if (u > u_a && u < u_b) edges.push_back(u);
  };
  for (const auto& p : poles) {
    const double zeta = -p.real() / std::abs(p);
    if (p.imag() <= 0.0 || !(zeta > 0.0 && zeta < kGradedDamping)) continue;  // unstable: no resonance to grade
    const double u_n = std::log(std::abs(p) / kTwoPi);
    add(u_n);
    for (double step = zeta; step < kPanelWidth; step *= 3.0) add(u_n - step), add(u_n + step);
  }
  std::sort(edges.begin(), edges.end());
  return edges;
}

// The integral of S(f) df = S(f) f du between consecutive edges, 6-point Gauss-Legendre panels
// of at most half a decade in u = ln f: away from a resonance the integrand is smooth on that
// scale, where Simpson's rule needed 40 points a decade for the same accuracy.
double panels(const Psd& psd, const std::vector<double>& edges) {
  const auto g = [&](double u) {
    const double f = std::exp(u);
    return psd(f) * f;
  };
  double sum = 0.0;
  for (size_t e = 1; e < edges.size(); ++e) {
    const double u_a = edges[e - 1], span = edges[e] - u_a;
    const int count = static_cast<int>(std::ceil(span / kPanelWidth));
    for (int i = 0; i < count; ++i)
      sum += boost::math::quadrature::gauss<double, kGaussPoints>::integrate(g, u_a + span * i / count, u_a + span * (i + 1) / count);
  }
  return sum;
}

// An end's closed-form integral, and whether the PSD there has settled to the form it assumes.
struct End {
  double integral = 0.0;
  bool settled = false;
};

// The fits below accept an end whose PSD is within 0.02 (in S, or in the log-log slope over an
// octave) of its asymptote; the term they leave out is then of order 0.02^2 of that end's share.
constexpr double kSettled = 0.02;

// Below f_lo, far under the lowest root, S = a + b f^2 (the PSD is even in f): fitted at f_lo and
// f_lo/2, its integral over (0, f_lo) is a f_lo + b f_lo^3 / 3. Settled when S is flat there.
End below(const Psd& psd, double f_lo) {
  const double s_lo = psd(f_lo), s_half = psd(0.5 * f_lo);
  const double b = (s_lo - s_half) / (0.75 * f_lo * f_lo);
  const double integral = (s_lo - b * f_lo * f_lo) * f_lo + b * f_lo * f_lo * f_lo / 3.0;
  return {integral, std::fabs(s_half - s_lo) <= kSettled * s_lo};
}

// Above f_hi, far over the highest root, S = c x^m (1 + d x) with x = (f_hi/f)^2, the leading
// terms of a rational function of f^2 at infinity: m from the slope over the octave above f_hi,
// c and d from the PSD at both ends of it; the integral is c f_hi (1/(2m-1) + d/(2m+1)). Settled
// when the slope is that of an even power; +inf when it is flatter than 1/f^2 (no convergence).
End above(const Psd& psd, double f_hi) {
  const double s_hi = psd(f_hi);
  if (s_hi == 0.0) return {0.0, true};
  const double s_octave = psd(2.0 * f_hi);
  const double slope = std::log2(s_octave / s_hi);
  const long m = std::lround(-slope / 2.0);
  const bool settled = std::fabs(slope + 2.0 * static_cast<double>(m)) <= kSettled;
  if (m < 1) return {std::numeric_limits<double>::infinity(), false};
  // s_octave / s_hi = 4^-m (1 + d/4) / (1 + d)
  const double q = s_octave / s_hi * std::pow(4.0, static_cast<double>(m));
  const double d = (q - 1.0) / (0.25 - q);
  const double c = s_hi / (1.0 + d);
  const double two_m = 2.0 * static_cast<double>(m);
  return {c * f_hi * (1.0 / (two_m - 1.0) + d / (two_m + 1.0)), settled};
}

}  // namespace

double integrate_psd_panels(const Psd& psd, double f_first, double f_last,
                            const std::vector<std::complex<double>>& poles) {
  const double margin = std::pow(10.0, kPanelMargin);
  double f_lo = f_first / margin, f_hi = f_last * margin;
  double middle = panels(psd, panel_edges(std::log(f_lo), std::log(f_hi), poles));
  // A generator may see a mode the signal path cancels: until the PSD settles to an end's
  // asymptote, the middle grows there a decade at a time.
  End start = below(psd, f_lo), tail = above(psd, f_hi);
  for (int extra = 0; extra < kExtraDecades && !start.settled; ++extra) {
    middle += panels(psd, {std::log(0.1 * f_lo), std::log(f_lo)});
    f_lo *= 0.1;
    start = below(psd, f_lo);
  }
  for (int extra = 0; extra < kExtraDecades && !tail.settled; ++extra) {
    middle += panels(psd, {std::log(f_hi), std::log(10.0 * f_hi)});
    f_hi *= 10.0;
    tail = above(psd, f_hi);
  }
  return start.integral + middle + tail.integral;
}

double output_rms_noise_panels(const ChainNoise& noise) {
  // The receiver's limit is a root of the PSD too: the span covers it.
  auto [f_first, f_last] = natural_span(noise.cascade(), 0.0);
  const double fr = noise.options().receiver_bandwidth_hz;
  if (fr > 0.0) {
    f_first = std::min(f_first, fr);
    f_last = std::max(f_last, fr);
  }
  return std::sqrt(integrate_psd_panels(receiver_limited_psd(noise), f_first, f_last, noise.cascade().poles()));
}

NoiseSummary summarise_noise(const ChainNoise& noise) {
  NoiseSummary r;
  // A generator may see a mode the signal path cancels; if the PSD still falls slowly at the
  // end of the span, the span grows before the tail is trusted (integrated_output_psd).
  r.receiver_bandwidth_hz = noise.options().receiver_bandwidth_hz;
  const auto [total, f_hi] = integrated_output_psd(noise, 160);
  r.output_rms_v = std::sqrt(total);
  r.differential_rms_v = std::sqrt(2.0) * r.output_rms_v;
  r.integration_limit_hz = f_hi;
  r.noise_bandwidth_hz = noise_bandwidth(noise.cascade());
  r.equivalent_input_density = r.output_rms_v / (std::fabs(noise.dc_gain()) * std::sqrt(r.noise_bandwidth_hz));
  return r;
}

}  // namespace peakplan
