#include "lopside/harmonics.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <limits>
#include <map>
#include <stdexcept>

#include "lopside/fft.hpp"

namespace lopside {
namespace {

// Band-limited resampling: a Kaiser-windowed sinc (Oppenheim & Schafer, Discrete-Time Signal
// Processing, 3rd ed., 7.6: Kaiser window design). β = 9 gives about 90 dB stop-band
// attenuation (pass-band ripple ~3e-5) whatever the length; the transition width is
// (A − 8)/(2.285·(N − 1)): 1.1 rad for N = 32 taps, flat up to 0.82 of Nyquist, and 2.4 rad
// for N = 16, flat up to 0.62. The short kernel costs half and is used whenever the orders
// asked for lie inside its flat band; kernels are tabulated at kPhases + 1 fractional positions.
constexpr int kMaxHalfTaps = 16;  // margin kept on either side of a block, in samples
constexpr int kPhases = 1024;
constexpr double kKaiserBeta = 9.0;
// Orders up to this share of the samples per cycle stay inside each kernel's flat band
// (0.82 and 0.62 of Nyquist, less a margin).
constexpr double kUsableShareLong = 0.4;
constexpr double kUsableShareShort = 0.3;
// The grid has at least as many points per cycle as the source (no decimation, so nothing
// above the grid's Nyquist folds back), up to 2^16: beyond, the source's content above
// order 32768 would alias, which no discharge supply has in any measurable amount.
constexpr std::size_t kMaxGridPerCycle = std::size_t{1} << 16;

// Modified Bessel function I0 by its power series (Abramowitz & Stegun 9.6.12).
double bessel_i0(double x) {
  double sum = 1.0, term = 1.0;
  for (int k = 1; k < 60; ++k) {
    term *= (x / (2.0 * k)) * (x / (2.0 * k));
    sum += term;
    if (term < 1e-17 * sum) break;
  }
  return sum;
}

template <int Half>
struct Kernel {
  static constexpr std::size_t kTaps = 2 * static_cast<std::size_t>(Half);
  // table[p][j] = h(p/kPhases − (j − Half + 1)), rows normalised to unit sum (DC gain 1).
  std::vector<std::array<double, kTaps>> table;
  Kernel() : table(kPhases + 1) {
    const double i0_beta = bessel_i0(kKaiserBeta);
    for (int p = 0; p <= kPhases; ++p) {
      const double t = static_cast<double>(p) / kPhases;
      double sum = 0;
      auto& row = table[static_cast<std::size_t>(p)];
      for (int j = 0; j < static_cast<int>(kTaps); ++j) {
        const double x = t - static_cast<double>(j - Half + 1);
        const double sinc = x == 0.0 ? 1.0 : std::sin(M_PI * x) / (M_PI * x);
        const double r = x / Half;
        const double w =
            std::fabs(r) < 1 ? bessel_i0(kKaiserBeta * std::sqrt(1 - r * r)) / i0_beta : 0.0;
        row[static_cast<std::size_t>(j)] = sinc * w;
        sum += sinc * w;
      }
      for (double& v : row) v /= sum;
    }
  }

  // The value at fractional index x ≥ 0 of the samples `s` (s[0] is frame `first`), from the
  // nearest tabulated phase: at most 1/(2·kPhases) of a sample off, a timing error that moves
  // no order's amplitude by more than 1e-3 of itself and averages out over a block.
  double at(const double* s, std::int64_t first, double x) const {
    const auto i0 = static_cast<std::int64_t>(x);  // x ≥ 0: truncation is the floor
    const auto p = static_cast<std::size_t>((x - static_cast<double>(i0)) * kPhases + 0.5);
    const double* h = table[p].data();
    const double* v = s + (i0 - Half + 1 - first);
    double y = 0;
    for (std::size_t j = 0; j < kTaps; ++j) y += v[j] * h[j];
    return y;
  }
};

template <int Half>
const Kernel<Half>& kernel() {
  static const Kernel<Half> k;
  return k;
}

std::size_t next_pow2(std::size_t n) {
  std::size_t p = 1;
  while (p < n) p <<= 1;
  return p;
}

double wrap_rad(double a) {
  a = std::fmod(a + M_PI, 2 * M_PI);
  if (a < 0) a += 2 * M_PI;
  return a - M_PI;
}

struct OrderSums {
  double a = 0, a2 = 0, c = 0, s = 0, group2 = 0, subgroup2 = 0;
};

}  // namespace

struct HarmonicAnalyzer::Impl {
  HarmonicConfig cfg;
  std::vector<double> buf;
  std::uint64_t buf_start = 0;
  std::uint64_t next_sample = 0;
  std::vector<double> bounds;
  std::size_t block_cycles = 0;  // decided from the first cycle
  bool iec = false;
  std::map<std::size_t, std::unique_ptr<RealFft>> plans;  // one plan per block length
  std::vector<OrderSums> sums;
  std::uint64_t blocks = 0;
  double min_cycle_samples = 1e300;
  std::size_t grid = 0;

  // The nearest tabulated phase: at most 1/(2·kPhases) of a sample off, a timing error of
  // 0.5 ns at 1 MS/s that moves no order's amplitude by more than 1e-3 of itself and averages
  // out over a block.
  bool short_kernel = false;  // chosen at the first block, kept for the capture

  template <int Half>
  void resample(double* in, std::size_t B, std::size_t M) const {
    const Kernel<Half>& k = kernel<Half>();
    const auto first = static_cast<std::int64_t>(buf_start);
    for (std::size_t j = 0; j < B; ++j) {
      const double x0 = bounds[j], step = (bounds[j + 1] - bounds[j]) / static_cast<double>(M);
      for (std::size_t m = 0; m < M; ++m)
        in[j * M + m] = k.at(buf.data(), first, x0 + step * static_cast<double>(m));
    }
  }

  void decide_block(double period_samples) {
    const double f = cfg.sample_rate_hz / period_samples;
    // IEC 61000-4-7 (2002) 4.4.1: a window of 10 cycles in 50 Hz systems, 12 in 60 Hz ones.
    if (std::fabs(f / 50.0 - 1.0) <= 0.05) {
      block_cycles = 10;
      iec = true;
    } else if (std::fabs(f / 60.0 - 1.0) <= 0.05) {
      block_cycles = 12;
      iec = true;
    } else {
      block_cycles = cfg.block_cycles;
    }
  }

  // The first sample index at which the pending block has every sample its last
  // interpolation needs; max() while no block is pending. Kept so that on_sample, called for
  // every sample, only compares two integers.
  std::uint64_t ready_at = std::numeric_limits<std::uint64_t>::max();

  void update_ready_at() {
    if (block_cycles == 0 || bounds.size() < block_cycles + 1) {
      ready_at = std::numeric_limits<std::uint64_t>::max();
      return;
    }
    ready_at = static_cast<std::uint64_t>(std::ceil(bounds[block_cycles])) + kMaxHalfTaps + 2;
  }

  bool ready() const { return next_sample >= ready_at; }

  void process_block() {
    const std::size_t B = block_cycles;
    double longest = 0;
    for (std::size_t j = 0; j < B; ++j) longest = std::max(longest, bounds[j + 1] - bounds[j]);
    // The block's mean cycle length: single cycles carry the boundaries' jitter.
    min_cycle_samples =
        std::min(min_cycle_samples, (bounds[B] - bounds[0]) / static_cast<double>(B));
    const std::size_t want_orders = cfg.max_order + 2;
    const std::size_t M = std::min(
        kMaxGridPerCycle, next_pow2(std::max<std::size_t>(
                              static_cast<std::size_t>(std::ceil(longest)), 2 * want_orders)));
    grid = std::max(grid, M);
    const std::size_t N = B * M;
    auto& plan = plans[N];
    if (!plan) plan = std::make_unique<RealFft>(N);
    if (blocks == 0) {
      short_kernel = kUsableShareShort * (bounds[B] - bounds[0]) / static_cast<double>(B) >=
                     static_cast<double>(cfg.max_order) + 1;
    }
    if (short_kernel) {
      resample<8>(plan->input(), B, M);
    } else {
      resample<16>(plan->input(), B, M);
    }
    const std::complex<double>* X = plan->forward();
    const double n_points = static_cast<double>(N);
    const std::size_t orders = std::min(cfg.max_order, M / 2 - 1);
    if (sums.size() < orders + 1) sums.resize(orders + 1);
    // Sine basis: a·sin(nθ + φ) puts (N/2)·a·e^{i(φ − π/2)} in bin nB, so φ = arg X + π/2.
    const double phi1 = std::arg(X[B]) + M_PI / 2;
    for (std::size_t n = 0; n <= orders; ++n) {
      const std::size_t k = n * B;
      const double a = n == 0 ? X[0].real() / n_points : 2.0 * std::abs(X[k]) / n_points;
      const double rel =
          n == 0 ? 0.0 : wrap_rad(std::arg(X[k]) + M_PI / 2 - static_cast<double>(n) * phi1);
      OrderSums& s = sums[n];
      s.a += a;
      s.a2 += a * a;
      s.c += std::cos(rel);
      s.s += std::sin(rel);
      if (iec && n >= 1 && k + B / 2 <= N / 2) {
        // IEC 61000-4-7 (2002) 5.5.1 and 5.6: rms values of the 5 Hz bins; a group sums the
        // bins between neighbouring harmonics, those midway counted half; a subgroup is the
        // harmonic bin and its two neighbours.
        const auto bin2 = [&](std::size_t kk) {
          return 2.0 * std::norm(X[kk]) / (n_points * n_points);
        };
        double g = 0.5 * bin2(k - B / 2) + 0.5 * bin2(k + B / 2);
        for (std::size_t kk = k - B / 2 + 1; kk < k + B / 2; ++kk) g += bin2(kk);
        s.group2 += g;
        s.subgroup2 += bin2(k - 1) + bin2(k) + bin2(k + 1);
      }
    }
    ++blocks;
  }

  void advance() {
    update_ready_at();
    while (ready()) {
      process_block();
      bounds.erase(bounds.begin(), bounds.begin() + static_cast<std::ptrdiff_t>(block_cycles));
      trim();
      update_ready_at();
    }
  }

  // Keeps the samples the next block's first interpolation needs, and no more.
  void trim() {
    if (bounds.empty()) return;
    const auto keep_from = static_cast<std::int64_t>(std::floor(bounds.front())) - kMaxHalfTaps - 1;
    if (keep_from > static_cast<std::int64_t>(buf_start)) {
      const auto drop = static_cast<std::size_t>(keep_from - static_cast<std::int64_t>(buf_start));
      buf.erase(buf.begin(), buf.begin() + static_cast<std::ptrdiff_t>(std::min(drop, buf.size())));
      buf_start += drop;
    }
  }
};

HarmonicAnalyzer::HarmonicAnalyzer(const HarmonicConfig& config) : impl_(std::make_unique<Impl>()) {
  if (config.block_cycles < 1)
    throw std::invalid_argument("HarmonicConfig.block_cycles must be ≥ 1");
  if (config.max_order < 1) throw std::invalid_argument("HarmonicConfig.max_order must be ≥ 1");
  if (!(config.sample_rate_hz > 0))
    throw std::invalid_argument("HarmonicConfig.sample_rate_hz must be > 0");
  impl_->cfg = config;
}
HarmonicAnalyzer::~HarmonicAnalyzer() = default;
HarmonicAnalyzer::HarmonicAnalyzer(HarmonicAnalyzer&&) noexcept = default;
HarmonicAnalyzer& HarmonicAnalyzer::operator=(HarmonicAnalyzer&&) noexcept = default;

void HarmonicAnalyzer::on_sample(std::uint64_t index, double value) {
  Impl& m = *impl_;
  if (m.buf.empty()) m.buf_start = index;
  m.buf.push_back(value);
  m.next_sample = index + 1;
  // Before the first usable boundary only the interpolation margin is worth keeping.
  if (m.bounds.empty() && m.buf.size() > 4 * kMaxHalfTaps) {
    m.buf.erase(m.buf.begin(), m.buf.begin() + 2 * kMaxHalfTaps);
    m.buf_start += 2 * kMaxHalfTaps;
  }
  if (m.ready()) m.advance();
}

void HarmonicAnalyzer::on_boundary(double index) {
  Impl& m = *impl_;
  // A block must start where the kernel has its samples on the left.
  if (m.bounds.empty() &&
      (m.buf.empty() || std::floor(index) - kMaxHalfTaps + 1 < static_cast<double>(m.buf_start))) {
    return;
  }
  m.bounds.push_back(index);
  if (m.block_cycles == 0 && m.bounds.size() == 2) m.decide_block(m.bounds[1] - m.bounds[0]);
  if (m.bounds.size() == 1) m.trim();
  m.advance();
}

void HarmonicAnalyzer::drop_partial_block() {
  impl_->bounds.clear();
  impl_->update_ready_at();
}

HarmonicSummary HarmonicAnalyzer::finish() {
  Impl& m = *impl_;
  HarmonicSummary out;
  out.blocks = m.blocks;
  out.block_cycles = m.block_cycles ? m.block_cycles : m.cfg.block_cycles;
  out.grid_points_per_cycle = m.grid;
  out.iec_61000_4_7 = m.iec;
  if (m.blocks == 0) {
    out.warnings.push_back("fewer than " + std::to_string(out.block_cycles) +
                           " whole cycles with margin: no harmonic block was complete");
    return out;
  }
  const auto usable_by_sampling = static_cast<std::size_t>(std::floor(
      (m.short_kernel ? kUsableShareShort : kUsableShareLong) * m.min_cycle_samples + 0.01));
  std::size_t usable = std::min({m.cfg.max_order, usable_by_sampling, m.sums.size() - 1});
  if (m.grid == kMaxGridPerCycle) usable = std::min(usable, kMaxGridPerCycle / 2 - 1);
  out.max_usable_order = usable;
  if (usable < m.cfg.max_order) {
    out.warnings.push_back("harmonics reported up to order " + std::to_string(usable) +
                           ": the sampling resolves no more (" +
                           std::to_string(static_cast<long>(m.min_cycle_samples)) +
                           " samples per cycle at the fastest)");
  }
  const double nb = static_cast<double>(m.blocks);
  for (std::size_t n = 0; n <= usable; ++n) {
    const OrderSums& s = m.sums[n];
    HarmonicOrder o;
    o.order = n;
    o.amplitude_a = s.a / nb;
    o.rms_a = n == 0 ? std::fabs(o.amplitude_a) : std::sqrt(s.a2 / nb / 2.0);
    const double var = std::max(0.0, s.a2 / nb - o.amplitude_a * o.amplitude_a);
    o.amplitude_spread_a = m.blocks > 1 ? std::sqrt(var * nb / (nb - 1)) : 0.0;
    if (n >= 1) {
      o.phase_deg = std::atan2(s.s, s.c) * 180.0 / M_PI;
      // Circular standard deviation √(−2 ln R̄) (Mardia & Jupp, Directional Statistics, 2.3.4).
      const double r = std::min(1.0, std::hypot(s.s, s.c) / nb);
      o.phase_spread_deg = std::sqrt(std::max(0.0, -2.0 * std::log(r))) * 180.0 / M_PI;
    }
    if (m.iec && n >= 1) {
      o.group_rms_a = std::sqrt(s.group2 / nb);
      o.subgroup_rms_a = std::sqrt(s.subgroup2 / nb);
    }
    out.orders.push_back(o);
  }
  double h2 = 0, even2 = 0;
  for (std::size_t n = 2; n <= usable; ++n) {
    const double r2 = out.orders[n].rms_a * out.orders[n].rms_a;
    h2 += r2;
    if (n % 2 == 0) even2 += r2;
  }
  const double i1 = usable >= 1 ? out.orders[1].rms_a : 0.0;
  const double i0 = out.orders[0].amplitude_a;
  if (i1 > 0) {
    out.thd = std::sqrt(h2) / i1;
    out.thd_with_dc = std::sqrt(h2 + i0 * i0) / i1;
    out.dc_to_fundamental = i0 / i1;
  }
  out.even_harmonic_share = h2 > 0 ? std::sqrt(even2 / h2) : 0.0;
  return out;
}

}  // namespace lopside
