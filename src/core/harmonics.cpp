#include "lopside/harmonics.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <complex>
#include <cstring>
#include <limits>
#include <map>
#include <stdexcept>

#include "lopside/edge_weights.hpp"
#include "lopside/fft.hpp"
#include "lopside/uncertainty.hpp"

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
// (β = 9: kaiser_sinc in edge_weights.hpp.)
// Orders up to this share of the samples per cycle stay inside each kernel's flat band
// (0.82 and 0.62 of Nyquist, less a margin).
constexpr double kUsableShareLong = 0.4;
constexpr double kUsableShareShort = 0.3;
// The grid has at least as many points per cycle as the source (no decimation, so nothing
// above the grid's Nyquist folds back), up to 2^16: beyond, the source's content above
// order 32768 would alias, which no discharge supply has in any measurable amount.
constexpr std::size_t kMaxGridPerCycle = std::size_t{1} << 16;

template <int Half>
struct Kernel {
  static constexpr std::size_t kTaps = 2 * static_cast<std::size_t>(Half);
  // table[p][j] = h(p/kPhases − (j − Half + 1)), rows normalised to unit sum (DC gain 1).
  std::vector<std::array<double, kTaps>> table;
  Kernel() : table(kPhases + 1) {
    for (int p = 0; p <= kPhases; ++p) {
      const double t = static_cast<double>(p) / kPhases;
      double sum = 0;
      auto& row = table[static_cast<std::size_t>(p)];
      for (int j = 0; j < static_cast<int>(kTaps); ++j) {
        const double h = kaiser_sinc(t - static_cast<double>(j - Half + 1), Half);
        row[static_cast<std::size_t>(j)] = h;
        sum += h;
      }
      for (double& v : row) v /= sum;
    }
  }
};

// The band-limited values at one cycle's grid points x = x0 + m·step, m = 0 … M − 1 (x ≥ 0 a
// fractional index into the samples `s`, s[0] being frame `first`), each from the kernel's
// nearest tabulated phase: at most 1/(2·kPhases) of a sample off, a timing error that moves no
// order's amplitude by more than 1e-3 of itself and averages out over a block.
// Each point's sum is taken in four partial sums (one chain of `taps` dependent additions
// would be bound by the adder's latency), held in the four lanes of a vector. Built twice (GCC's
// function multiversioning picks one when the program loads): for AVX2, one instruction per four
// products, and for plain x86-64 (SSE2, two per two): each lane adds the same products in the
// same order in both, and AVX2 alone never fuses a multiply and an add (that is FMA, a separate
// extension), so both give the same bits. Two points are summed at once: their chains are
// independent and overlap.
__attribute__((target_clones("avx2", "default"))) void resample_cycle(
    const double* s, std::int64_t first, const double* table, std::size_t taps, int half, double x0,
    double step, std::size_t points, double* out) {
  // The samples and the table rows are 8-byte aligned only: each vector is loaded by memcpy
  // (one unaligned load), never through a v4 pointer, and never passed to or returned from a
  // function (the plain x86-64 build has no 32-byte registers to pass it in).
  using v4 = double __attribute__((vector_size(32)));
  const auto point = [&](double x, const double*& h, const double*& v) {
    const auto i0 = static_cast<std::int64_t>(x);  // x ≥ 0: truncation is the floor
    const auto p = static_cast<std::size_t>((x - static_cast<double>(i0)) * kPhases + 0.5);
    h = table + p * taps;
    v = s + (i0 - half + 1 - first);
  };
  std::size_t m = 0;
  for (; m + 1 < points; m += 2) {
    const double *ha, *va, *hb, *vb;
    point(x0 + step * static_cast<double>(m), ha, va);
    point(x0 + step * static_cast<double>(m + 1), hb, vb);
    v4 a = {0, 0, 0, 0}, b = {0, 0, 0, 0};
    for (std::size_t j = 0; j < taps; j += 4) {
      v4 sa, ka, sb, kb;
      std::memcpy(&sa, va + j, sizeof sa);
      std::memcpy(&ka, ha + j, sizeof ka);
      std::memcpy(&sb, vb + j, sizeof sb);
      std::memcpy(&kb, hb + j, sizeof kb);
      a += sa * ka;
      b += sb * kb;
    }
    out[m] = (a[0] + a[1]) + (a[2] + a[3]);
    out[m + 1] = (b[0] + b[1]) + (b[2] + b[3]);
  }
  for (; m < points; ++m) {
    const double *h, *v;
    point(x0 + step * static_cast<double>(m), h, v);
    v4 a = {0, 0, 0, 0};
    for (std::size_t j = 0; j < taps; j += 4) {
      v4 sv, kv;
      std::memcpy(&sv, v + j, sizeof sv);
      std::memcpy(&kv, h + j, sizeof kv);
      a += sv * kv;
    }
    out[m] = (a[0] + a[1]) + (a[2] + a[3]);
  }
}

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

// Per-order sums over blocks. The scatter sums are taken about the first block's value (shift
// k1 for the amplitude, k2 for its square), so that a clean capture's tiny scatter is not lost
// in the cancellation of Σa² − n·ā² (Chan, Golub & LeVeque, Am. Stat. 37, 1983: shifted data).
struct OrderSums {
  double a = 0, a2 = 0, c = 0, s = 0, group2 = 0, subgroup2 = 0;
  double k1 = 0, d = 0, d2 = 0, dlag = 0, dlast = 0;  // d = a − k1; dlag = Σ d_i·d_(i−1)
  double k2 = 0, p = 0, p2 = 0;                       // p = a² − k2
  double f = 0, f2 = 0;  // the block's local noise floor (mean-square amplitude) and its square
};

// Significance test of an order against its local noise floor (see finish()).
// α = 1e-4 per order: with up to 20 even orders in the usual range 2 … 40 a capture of pure
// noise flags any even order with probability ≤ 20·α = 0.2 %.
constexpr double kFalseAlarmPerOrder = 1e-4;
// Orders below this share of the fundamental's amplitude are not claimed whatever the noise:
// the resampler's own artefacts reach ~3e-5 of the fundamental (the Kaiser kernel's ~90 dB
// stop band and 3e-5 pass-band ripple, and the phase table's timing error), so a clean
// synthetic capture, whose floor is only rounding, cannot tell an order below ~1e-4 from them.
constexpr double kResolutionShare = 1e-4;

// Regularised incomplete beta function I_x(a, b) from its continued fraction (DLMF 8.17.22),
// evaluated by the modified Lentz method (Press et al., Numerical Recipes, 3rd ed., 6.4 and
// 5.2). The fraction converges in O(√max(a, b)) terms, so even the ν ~ 10⁷ of a long capture
// costs only a few thousand.
double beta_continued_fraction(double a, double b, double x) {
  constexpr double kTiny = 1e-300, kEps = 1e-15;
  const double qab = a + b, qap = a + 1, qam = a - 1;
  double c = 1, d = 1 - qab * x / qap;
  if (std::fabs(d) < kTiny) d = kTiny;
  d = 1 / d;
  double h = d;
  for (int m = 1; m < 1000000; ++m) {
    const double m2 = 2.0 * m;
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
    d = 1 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1 / d;
    h *= d * c;
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1 / d;
    const double step = d * c;
    h *= step;
    if (std::fabs(step - 1) < kEps) break;
  }
  return h;
}

double incomplete_beta(double a, double b, double x) {
  if (x <= 0) return 0;
  if (x >= 1) return 1;
  const double front = std::exp(std::lgamma(a + b) - std::lgamma(a) - std::lgamma(b) +
                                a * std::log(x) + b * std::log1p(-x));
  // The fraction converges fast on this side of the mean (Numerical Recipes 6.4).
  if (x < (a + 1) / (a + b + 2)) return front * beta_continued_fraction(a, b, x) / a;
  return 1 - front * beta_continued_fraction(b, a, 1 - x) / b;
}

// P(F > f) for Fisher's F with ν1, ν2 degrees of freedom: I_x(ν2/2, ν1/2), x = ν2/(ν2 + ν1·f)
// (Abramowitz & Stegun 26.6.2).
double f_upper_tail(double f, double nu1, double nu2) {
  return incomplete_beta(nu2 / 2, nu1 / 2, nu2 / (nu2 + nu1 * f));
}

// The f with P(F > f) = α, by bisection: the tail falls monotonically in f.
double f_upper_quantile(double alpha, double nu1, double nu2) {
  double lo = 0, hi = 1;
  while (f_upper_tail(hi, nu1, nu2) > alpha && hi < 1e12) {
    lo = hi;
    hi *= 2;
  }
  for (int i = 0; i < 200 && hi - lo > 1e-12 * hi; ++i) {
    const double mid = 0.5 * (lo + hi);
    (f_upper_tail(mid, nu1, nu2) > alpha ? lo : hi) = mid;
  }
  return 0.5 * (lo + hi);
}

// Order n's local floor uses the bins nB ± d, d = 1 + guard … ⌊B/2⌋: the half of each gap
// nearer to n. The guard leaves out the direct neighbours, into which a harmonic whose level
// or phase wanders from cycle to cycle spreads (sidebands), so that the floor does not follow
// the harmonic; blocks of fewer than 4 cycles keep them (else nothing would be left). The far
// halves are left to the neighbouring orders: the boundary jitter of a strong order puts
// sidebands into its own gaps, falling off as sinc² of the distance (the cycle-by-cycle linear
// time warp of the resampler), which would otherwise inflate the next order's floor.
// 1-cycle blocks have no bin between orders at all.
std::size_t floor_guard_bins(std::size_t block_cycles) {
  return block_cycles >= 4 ? 1 : 0;
}
std::size_t floor_bins_per_side(std::size_t block_cycles) {
  return block_cycles / 2 - floor_guard_bins(block_cycles);
}

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
      resample_cycle(buf.data(), first, k.table.front().data(), Kernel<Half>::kTaps, Half, x0, step,
                     M, in + j * M);
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
    // The grid holds the orders the kernel passes and no more: orders beyond its flat band are
    // never reported (finish(): usable), and a grid twice as fine would double the
    // resampling, the largest cost of the whole measurement.
    const double block_cycle_samples = (bounds[B] - bounds[0]) / static_cast<double>(B);
    if (blocks == 0) {
      short_kernel =
          kUsableShareShort * block_cycle_samples >= static_cast<double>(cfg.max_order) + 1;
    }
    const auto passed = static_cast<std::size_t>(std::floor(
        (short_kernel ? kUsableShareShort : kUsableShareLong) * block_cycle_samples + 0.01));
    const std::size_t want_orders = std::min(cfg.max_order, passed) + 2;
    const std::size_t M = std::min(
        kMaxGridPerCycle, next_pow2(std::max<std::size_t>(
                              static_cast<std::size_t>(std::ceil(longest)), 2 * want_orders)));
    grid = std::max(grid, M);
    const std::size_t N = B * M;
    auto& plan = plans[N];
    if (!plan) plan = std::make_unique<RealFft>(N);
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
    // The noise floor: the bins between orders hold what the block's cycles do not share
    // (noise, interharmonics); for noise that is white across a few orders their mean-square
    // amplitude is what the harmonic bin itself gets from it (same bin width, same power).
    const std::size_t guard = floor_guard_bins(B), per_side = floor_bins_per_side(B);
    const double scale = 4.0 / (n_points * n_points);  // |X|² → (2|X|/N)²
    // Mean-square bin amplitude of order n's local floor bins (n·B + per_side ≤ N/2).
    const auto local_floor = [&](std::size_t n) {
      if (per_side == 0) return 0.0;
      double sum = 0;
      for (std::size_t d = 1 + guard; d <= guard + per_side; ++d) {
        sum += std::norm(X[n * B + d]);
        if (n > 0) sum += std::norm(X[n * B - d]);
      }
      return scale * sum / static_cast<double>((n > 0 ? 2 : 1) * per_side);
    };
    for (std::size_t n = 0; n <= orders; ++n) {
      const std::size_t k = n * B;
      const double a = n == 0 ? X[0].real() / n_points : 2.0 * std::abs(X[k]) / n_points;
      const double rel =
          n == 0 ? 0.0 : wrap_rad(std::arg(X[k]) + M_PI / 2 - static_cast<double>(n) * phi1);
      OrderSums& s = sums[n];
      if (blocks == 0) {
        s.k1 = a;
        s.k2 = a * a;
      }
      const double d = a - s.k1, p = a * a - s.k2;
      if (blocks > 0) s.dlag += d * s.dlast;
      s.dlast = d;
      s.d += d;
      s.d2 += d * d;
      s.p += p;
      s.p2 += p * p;
      const double fl = local_floor(n);
      s.f += fl;
      s.f2 += fl * fl;
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

void HarmonicAnalyzer::on_samples(std::uint64_t first, const double* values, std::size_t count) {
  Impl& m = *impl_;
  // Before a boundary on_sample() trims at every sample; the samples are taken one by one.
  if (m.bounds.empty() || m.buf.empty()) {
    for (std::size_t k = 0; k < count; ++k) on_sample(first + k, values[k]);
    return;
  }
  // With a boundary nothing is trimmed until a block is ready, and a block reads the same
  // samples whether the later ones are already in or not: appending them all before
  // processing the blocks they complete gives the same sums as taking them one by one.
  m.buf.insert(m.buf.end(), values, values + count);
  m.next_sample = first + count;
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
  Impl& m = *impl_;
  m.bounds.clear();
  m.update_ready_at();
  // Without a boundary only the interpolation margin is worth keeping (as in on_sample).
  const std::size_t keep = 2 * kMaxHalfTaps;
  if (m.buf.size() > keep) {
    const std::size_t drop = m.buf.size() - keep;
    m.buf.erase(m.buf.begin(), m.buf.begin() + static_cast<std::ptrdiff_t>(drop));
    m.buf_start += drop;
  }
}

std::string order_list(const std::vector<std::size_t>& orders, std::size_t max_chars) {
  std::string out;
  for (std::size_t n : orders) {
    if (out.size() > max_chars) {
      out += ", \xE2\x80\xA6";
      break;
    }
    out += (out.empty() ? "" : ", ") + std::to_string(n);
  }
  return out;
}

std::size_t HarmonicAnalyzer::held_samples() const {
  return impl_->buf.size();
}

HarmonicSummary HarmonicAnalyzer::finish() {
  Impl& m = *impl_;
  HarmonicSummary out;
  out.blocks = m.blocks;
  out.block_cycles = m.block_cycles ? m.block_cycles : m.cfg.block_cycles;
  out.grid_points_per_cycle = m.grid;
  out.iec_61000_4_7 = m.iec;
  out.false_alarm_per_order = kFalseAlarmPerOrder;
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
  const std::size_t per_side = floor_bins_per_side(out.block_cycles);
  out.noise_floor_known = per_side > 0;
  const double resolution_a = kResolutionShare * (usable >= 1 ? std::fabs(m.sums[1].a / nb) : 0.0);
  // Per order: the type-A scatter (u, ν) of the mean amplitude and of the mean squared
  // amplitude, and the floor test's degrees of freedom, kept for the even-harmonic sum.
  struct Kept {
    UncertaintyComponent power, floor;
  };
  std::vector<Kept> kept(usable + 1);
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
    // Bins in the order's local floor per block: both sides (DC: the one above it).
    const double local_bins = static_cast<double>((n == 0 ? 1 : 2) * per_side);
    const double floor_ms = s.f / nb;  // mean-square amplitude of a noise-only bin
    if (n >= 1 && out.noise_floor_known) o.noise_floor_a = std::sqrt(floor_ms);

    // Type A uncertainty of the mean over blocks (GUM 4.2.3). Neighbouring blocks share slow
    // drift, so the scatter counts n_eff = n(1 − r1)/(1 + r1) independent blocks, the large-n
    // variance of the mean of an AR(1) series with lag-1 autocorrelation r1 (Bayley &
    // Hammersley, JRSS Suppl. 8, 1946; Zięba, Metrol. Meas. Syst. 17, 2010). r1 ≤ 0 is taken
    // as 0: a lucky negative estimate must not shrink the uncertainty.
    UncertaintyComponent amp;
    if (m.blocks >= 2) {
      const double dm = s.d / nb;
      const double ss = std::max(0.0, s.d2 - nb * dm * dm);
      // Σ_{i≥2} (d_i − d̄)(d_(i−1) − d̄), with d_1 = 0 by the shift.
      const double lag = s.dlag - dm * s.d - dm * (s.d - s.dlast) + (nb - 1) * dm * dm;
      const double r1 = ss > 0 ? lag / ss : 0.0;
      o.effective_blocks = r1 > 0 ? std::clamp(nb * (1 - r1) / (1 + r1), 2.0, nb) : nb;
      amp = {std::sqrt(ss / (nb - 1) / o.effective_blocks), o.effective_blocks - 1};
      const double pm = s.p / nb;
      const double pss = std::max(0.0, s.p2 - nb * pm * pm);
      kept[n].power = {0.5 * std::sqrt(pss / (nb - 1) / o.effective_blocks),
                       o.effective_blocks - 1};
    } else if (out.noise_floor_known) {
      // One block has no scatter; the floor says how far noise moves it instead. A bin's noise
      // phasor z has E|z|² = floor_ms, half of it along the harmonic's own phasor, so a strong
      // order's amplitude scatters by √(floor_ms/2) (by less for a weak one: conservative);
      // DC is real, X[0]/N, with a variance a quarter of a bin amplitude's mean square. ν is
      // the floor's: 2 per bin. For the squared amplitude |H + z|², var = 2H²·floor + floor².
      o.effective_blocks = 1;
      const double dof = 2 * local_bins;
      amp = {n == 0 ? 0.5 * std::sqrt(floor_ms) : std::sqrt(floor_ms / 2), dof};
      const double p_mean = s.a2;
      kept[n].power = {0.5 * std::sqrt(std::max(0.0, 2 * p_mean * floor_ms - floor_ms * floor_ms)),
                       dof};
    } else {
      o.effective_blocks = 1;
    }
    o.u95_a = combine({amp}).expanded();
    if (n >= 1 && out.noise_floor_known) {
      // Noise lifts a bin's mean amplitude (Rice: E[a] ≈ H + floor_ms/(4H) for H ≫ noise,
      // √(π·floor_ms)/2 for H = 0), while the mean power P is unbiased: E[P] = H² + floor_ms.
      // The amplitude is reported uncorrected, as the mean over blocks; its estimated bias
      // ā − √(P − floor_ms) is added to the expanded uncertainty (GUM F.2.4.5, an uncorrected
      // known bias; from memory), which keeps a weak order's coverage as blocks accumulate.
      const double h_from_power = std::sqrt(std::max(0.0, s.a2 / nb - floor_ms));
      o.u95_a += std::max(0.0, o.amplitude_a - h_from_power);
    }

    if (n == 0) {
      o.significant = std::fabs(o.amplitude_a) > o.u95_a && o.u95_a > 0;
    } else if (out.noise_floor_known) {
      // Significance against the local floor. For Gaussian noise a bin's squared amplitude is
      // exponential (χ² with 2 degrees of freedom, scaled), so under "noise only" the order's
      // mean power over n blocks and the floor's mean over n·L bins are two independent
      // scaled χ²: their ratio is F(2n, 2nL) distributed (Abramowitz & Stegun 26.6; the
      // spectral F-test of steady-state response detection, e.g. Dobie & Wilson, J. Acoust.
      // Soc. Am. 100, 1996 — from memory). A floor that drifts between
      // blocks makes the sums weigh blocks unevenly: ν1 = 2(Σf)²/Σf² (Satterthwaite, Biometrics
      // 2, 1946), Σf² first freed of the per-block floor's own sampling variance (factor
      // 1 + 1/L), and ν2 = L·ν1. Testing the power, not the mean amplitude, avoids the Rayleigh
      // bias of a noisy amplitude: noise alone gives a mean amplitude of √(π·floor_ms)/2.
      const double p_mean = s.a2 / nb;
      double limit_a = 0;
      bool above = false;
      if (floor_ms > 0 && s.f2 > 0) {
        const double nu1 = std::clamp(2 * s.f * s.f * (1 + 1 / local_bins) / s.f2, 2.0, 2 * nb);
        const double nu2 = local_bins * nu1;
        const double c = f_upper_quantile(kFalseAlarmPerOrder, nu1, nu2);
        above = p_mean > c * floor_ms;
        // Expected power H² + floor reaches the threshold c·floor at H = √((c − 1)·floor).
        limit_a = std::sqrt(std::max(0.0, c - 1) * floor_ms);
        // The floor is a mean of scaled χ² with ν2 degrees of freedom: u/floor = √(2/ν2).
        kept[n].floor = {0.5 * floor_ms * std::sqrt(2 / nu2), nu2};
      } else {
        above = p_mean > 0;  // a floor of exact zeros: only the resolution rule below applies
      }
      o.detection_limit_a = std::max(limit_a, resolution_a);
      // Presence is judged against the noise only, not against u95_a: an order that drifts
      // (self-rectification builds up over seconds) has few effective blocks and a wide u95_a,
      // yet it is there in every block. Passing the test implies P > floor, so the noise-lift
      // corrected amplitude √(P − floor_ms) is positive too.
      o.significant = above && o.amplitude_a > resolution_a;
    }
    out.orders.push_back(o);
  }
  if (out.noise_floor_known) {
    std::vector<double> floors;
    for (std::size_t n = std::min<std::size_t>(2, usable); n <= usable; ++n) {
      if (n >= 1) floors.push_back(out.orders[n].noise_floor_a);
    }
    if (!floors.empty()) {
      const auto mid = floors.begin() + static_cast<std::ptrdiff_t>(floors.size() / 2);
      std::nth_element(floors.begin(), mid, floors.end());
      out.noise_floor_a = *mid;
      if (floors.size() % 2 == 0) {
        out.noise_floor_a = 0.5 * (out.noise_floor_a + *std::max_element(floors.begin(), mid));
      }
    }
  } else {
    out.warnings.push_back(
        "blocks of one cycle leave no bins between harmonics: no noise floor, so no order is "
        "tested for significance");
  }
  out.even_evidence_available = out.noise_floor_known && usable >= 2;
  if (out.noise_floor_known && usable < 2) {
    out.warnings.push_back("order 2 is not resolved: no even-harmonic evidence");
  }
  if (out.even_evidence_available) {
    // Σ (rms² − floor rms²) = Σ (P − floor_ms)/2, P the mean squared amplitude: unbiased for
    // Σ Hn²/2, as E[P] = Hn² + floor_ms. Its uncertainty combines each order's scatter of P and
    // the floor's sampling error (GUM 5.1.2); for the root, u(√Q) = u(Q)/(2√Q) (first order).
    double q = 0;
    std::vector<UncertaintyComponent> parts;
    for (std::size_t n = 2; n <= usable; n += 2) {
      const HarmonicOrder& o = out.orders[n];
      if (!o.significant) continue;
      out.even_significant_orders.push_back(n);
      q += o.rms_a * o.rms_a - 0.5 * o.noise_floor_a * o.noise_floor_a;
      parts.push_back(kept[n].power);
      parts.push_back(kept[n].floor);
    }
    if (q > 0) {
      out.even_significant_rms_a = std::sqrt(q);
      const CombinedUncertainty uq = combine(parts);
      out.even_rms_u95_a = uq.expanded() / (2 * out.even_significant_rms_a);
    }
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
