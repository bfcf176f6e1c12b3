// Cycle-synchronous harmonics against published Fourier series. The series are the standard
// handbook results (e.g. Abramowitz & Stegun / any table of Fourier series, reproduced in
// DOMAIN.md): half-wave rectified sine, square, triangle.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdint>
#include <functional>
#include <random>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "signals.hpp"

namespace lopside {
namespace {

constexpr double kPi = M_PI;

struct Capture {
  double rate_hz = 10e6;
  double f0_hz = 40e3;
  double f1_hz = 40e3;  // linear drift to f1 at the end
  double duration_s = 0;
  double start_phase = 0.137;  // cycles
};

// Phase in cycles of a linear sweep: θ(t) = φ0 + f0·t + (f1 − f0)·t²/(2D).
double phase_cycles(const Capture& c, double t) {
  return c.start_phase + c.f0_hz * t + (c.f1_hz - c.f0_hz) * t * t / (2 * c.duration_s);
}

// Runs the engine (current only) over `wave`, a function of the phase in cycles.
CycleSummary run(const Capture& c, const std::function<double(double)>& wave,
                 std::size_t max_order = 40, std::size_t block_cycles = 10) {
  CycleConfig config;
  config.sample_rate_hz = c.rate_hz;
  HarmonicConfig h;
  h.max_order = max_order;
  h.block_cycles = block_cycles;
  config.harmonics = h;
  CycleEngine engine(config);
  const auto frames = static_cast<std::size_t>(std::llround(c.duration_s * c.rate_hz));
  SampleBlock block;
  block.channels = 1;
  for (std::size_t at = 0; at < frames; at += 4096) {
    const std::size_t n = std::min<std::size_t>(4096, frames - at);
    block.data.resize(n);
    for (std::size_t k = 0; k < n; ++k) {
      block.data[k] = wave(phase_cycles(c, static_cast<double>(at + k) / c.rate_hz));
    }
    block.frames = n;
    engine.consume(block);
  }
  return engine.finish();
}

double frac(double p) {
  return p - std::floor(p);
}

// Odd orders of a band-limited square of peak A: 4A/(nπ) up to `top` (sine basis, phase 0).
double band_limited_square(double p, int top) {
  double v = 0;
  for (int n = 1; n <= top; n += 2) v += 4.0 / (kPi * n) * std::sin(2 * kPi * n * p);
  return v;
}

double triangle(double p) {
  // Peak 1, rising through zero at p = 0 (sine-like phase): odd orders 8/(π²n²), signs (−1)^k.
  const double x = frac(p);
  if (x < 0.25) return 4 * x;
  if (x < 0.75) return 2 - 4 * x;
  return 4 * x - 4;
}

void expect_order(const HarmonicSummary& h, std::size_t n, double amplitude, double fundamental,
                  const char* what) {
  ASSERT_LT(n, h.orders.size()) << what;
  // The acceptance: each order within 0.2 % of the fundamental.
  EXPECT_NEAR(std::fabs(h.orders[n].amplitude_a), amplitude, 2e-3 * fundamental)
      << what << " order " << n;
}

TEST(Harmonics, HalfWaveRectifiedSine) {
  // A/π DC, H1 = A/2, even n: 2A/(π(n² − 1)), odd n ≥ 3: 0; THD 43.5 % (IEC), ~100 % with DC
  // (IEEE 1459) — DOMAIN.md's table.
  Capture c;
  c.duration_s = 200.5 / c.f0_hz;
  const double A = 1.5;
  const CycleSummary s = run(c, [&](double p) { return std::max(0.0, A * std::sin(2 * kPi * p)); });
  ASSERT_TRUE(s.harmonics);
  const HarmonicSummary& h = *s.harmonics;
  EXPECT_GE(h.blocks, 19u);
  EXPECT_EQ(h.max_usable_order, 40u);
  EXPECT_NEAR(h.orders[0].amplitude_a, A / kPi, 2e-3 * A / 2);
  expect_order(h, 1, A / 2, A / 2, "half-wave");
  expect_order(h, 2, 2 * A / (3 * kPi), A / 2, "half-wave");
  expect_order(h, 4, 2 * A / (15 * kPi), A / 2, "half-wave");
  for (std::size_t n = 3; n <= 39; n += 2) expect_order(h, n, 0.0, A / 2, "half-wave odd");
  for (std::size_t n = 6; n <= 20; n += 2) {
    expect_order(h, n, 2 * A / (kPi * (static_cast<double>(n * n) - 1.0)), A / 2, "half-wave even");
  }
  EXPECT_NEAR(h.thd, 0.435, 0.005);
  // IEEE 1459 counts DC: √(I² − I1²)/I1 with I = A/2 and I1 = A/(2√2) gives exactly 1, less the
  // even orders above 40 (Σ 2/(π(n²−1)) tail < 1e-4).
  EXPECT_NEAR(h.thd_with_dc, 1.0, 0.005);
  EXPECT_NEAR(h.even_harmonic_share, 1.0, 1e-3);
  // Sine basis: H2 of the half-wave series is −(2A/3π)·cos 2θ = (2A/3π)·sin(2θ − 90°).
  EXPECT_NEAR(h.orders[2].phase_deg, -90.0, 0.5);
}

TEST(Harmonics, HalfWaveRectifiedSineUnderTenPercentDrift) {
  for (const double f1 : {44e3, 36e3}) {
    Capture c;
    c.f1_hz = f1;
    c.duration_s = 150.3 / (0.5 * (c.f0_hz + f1));
    const double A = 1.0;
    const CycleSummary s =
        run(c, [&](double p) { return std::max(0.0, A * std::sin(2 * kPi * p)); });
    const HarmonicSummary& h = *s.harmonics;
    expect_order(h, 1, A / 2, A / 2, "drifting half-wave");
    for (std::size_t n = 2; n <= 20; ++n) {
      const double truth = n % 2 ? 0.0 : 2 * A / (kPi * (static_cast<double>(n * n) - 1.0));
      expect_order(h, n, truth, A / 2, "drifting half-wave");
    }
    EXPECT_NEAR(h.orders[2].phase_deg, -90.0, 0.5) << f1;
    EXPECT_NEAR(h.orders[4].phase_deg, -90.0, 0.5) << f1;
    EXPECT_NEAR(h.thd, 0.435, 0.005) << f1;
  }
}

TEST(Harmonics, BandLimitedSquare) {
  Capture c;
  c.duration_s = 100.3 / c.f0_hz;
  const CycleSummary s = run(c, [](double p) { return band_limited_square(p, 39); });
  const HarmonicSummary& h = *s.harmonics;
  const double a1 = 4 / kPi;
  for (std::size_t n = 1; n <= 39; ++n) {
    expect_order(h, n, n % 2 ? 4 / (kPi * static_cast<double>(n)) : 0.0, a1, "square");
  }
  // THD over orders 3…39 of the series: √(Σ 1/n²)·… = √(Σ_{odd 3..39} 1/n²) (analytic).
  double sum = 0;
  for (int n = 3; n <= 39; n += 2) sum += 1.0 / (n * n);
  EXPECT_NEAR(h.thd, std::sqrt(sum), 0.005);
  EXPECT_NEAR(h.even_harmonic_share, 0.0, 1e-3);
  for (std::size_t n = 3; n <= 11; n += 2) EXPECT_NEAR(h.orders[n].phase_deg, 0.0, 0.5) << n;
}

TEST(Harmonics, Triangle) {
  Capture c;
  c.duration_s = 100.7 / c.f0_hz;
  const CycleSummary s = run(c, triangle);
  const HarmonicSummary& h = *s.harmonics;
  const double a1 = 8 / (kPi * kPi);
  for (std::size_t n = 1; n <= 20; ++n) {
    expect_order(h, n, n % 2 ? 8 / (kPi * kPi * static_cast<double>(n * n)) : 0.0, a1, "triangle");
  }
  // 12.12 % (DOMAIN.md) is the infinite series; orders above 40 add < 0.01 pp.
  EXPECT_NEAR(h.thd, 0.1212, 0.005);
  // Odd orders alternate in sign: H3 is −8/(9π²)·sin 3θ, a phase of ±180°.
  EXPECT_NEAR(std::fabs(h.orders[3].phase_deg), 180.0, 0.5);
}

TEST(Harmonics, SmallSecondHarmonicUnderDrift) {
  // sin θ + 0.03·sin(2θ + 30°), with the frequency drifting 40 → 44 kHz (+10 %) in the capture.
  for (const double f1 : {40e3, 44e3, 36e3}) {
    Capture c;
    c.f1_hz = f1;
    c.duration_s = 150.0 / (0.5 * (c.f0_hz + f1));
    const CycleSummary s = run(c, [](double p) {
      return std::sin(2 * kPi * p) + 0.03 * std::sin(2 * (2 * kPi * p) + kPi / 6);
    });
    const HarmonicSummary& h = *s.harmonics;
    expect_order(h, 1, 1.0, 1.0, "drift");
    expect_order(h, 2, 0.03, 1.0, "drift");
    expect_order(h, 3, 0.0, 1.0, "drift");
    EXPECT_NEAR(h.orders[2].phase_deg, 30.0, 0.5) << f1;
    EXPECT_NEAR(h.thd, 0.03, 0.005) << f1;
  }
}

TEST(Harmonics, MainsCapturesUseTheIecWindowAndGroups) {
  // IEC 61000-4-7: 10 cycles at 50 Hz, 12 at 60 Hz; a pure harmonic's group and subgroup both
  // equal its rms value (all other bins are empty).
  for (const double f : {50.0, 60.0}) {
    Capture c;
    c.rate_hz = 20e3;
    c.f0_hz = c.f1_hz = f;
    c.duration_s = 61.0 / f;
    const CycleSummary s =
        run(c, [](double p) { return std::sin(2 * kPi * p) + 0.05 * std::sin(2 * kPi * 5 * p); });
    const HarmonicSummary& h = *s.harmonics;
    EXPECT_TRUE(h.iec_61000_4_7);
    EXPECT_EQ(h.block_cycles, f == 50.0 ? 10u : 12u);
    ASSERT_TRUE(h.orders[5].group_rms_a.has_value());
    EXPECT_NEAR(*h.orders[5].group_rms_a, 0.05 / std::sqrt(2.0), 1e-4);
    EXPECT_NEAR(*h.orders[5].subgroup_rms_a, 0.05 / std::sqrt(2.0), 1e-4);
    EXPECT_NEAR(h.orders[1].rms_a, 1 / std::sqrt(2.0), 1e-4);
  }
}

TEST(Harmonics, OrdersAreCappedByTheSampling) {
  // 40 kHz at 1 MS/s: 25 samples a cycle resolve orders up to 0.4 × 25 = 10.
  Capture c;
  c.rate_hz = 1e6;
  c.duration_s = 100.5 / c.f0_hz;
  const CycleSummary s = run(c, [](double p) { return band_limited_square(p, 9); });
  const HarmonicSummary& h = *s.harmonics;
  EXPECT_EQ(h.max_usable_order, 10u);
  EXPECT_EQ(h.orders.size(), 11u);
  for (std::size_t n = 1; n <= 10; ++n) {
    expect_order(h, n, n % 2 ? 4 / (kPi * static_cast<double>(n)) : 0.0, 4 / kPi, "capped");
  }
  EXPECT_FALSE(h.warnings.empty());
}

TEST(Harmonics, PhaseDoesNotDependOnWhereTheCaptureStarts) {
  double first = 0;
  for (const double start : {0.0, 0.21, 0.77}) {
    Capture c;
    c.start_phase = start;
    c.duration_s = 60.5 / c.f0_hz;
    const CycleSummary s = run(
        c, [](double p) { return std::sin(2 * kPi * p) + 0.1 * std::sin(3 * 2 * kPi * p - 1.0); });
    const double ph = s.harmonics->orders[3].phase_deg;
    if (start == 0.0) first = ph;
    EXPECT_NEAR(ph, first, 0.1);
    EXPECT_NEAR(ph, -1.0 * 180 / kPi, 0.5);
  }
}

TEST(Harmonics, CrestAndFormFactorOfASine) {
  // Sine: crest √2, form factor π/(2√2) = 1.1107 (handbook values).
  Capture c;
  c.duration_s = 100.5 / c.f0_hz;
  const CycleSummary s = run(c, [](double p) { return std::sin(2 * kPi * p); });
  EXPECT_NEAR(s.crest_factor, std::sqrt(2.0), 1e-3);
  EXPECT_NEAR(s.form_factor, kPi / (2 * std::sqrt(2.0)), 1e-3);
}

// --- Uncertainty, noise floor and significance (issue 9, item 3) ------------------------------
//
// White Gaussian noise of known σ on known waveforms, from a fixed-seed std::mt19937 and
// std::normal_distribution (the draws differ between standard libraries, the statistics do not).
// Captures are at 10 MS/s, so 50 kHz gives 200 samples per cycle; blocks are 10 cycles.

struct Noise {
  explicit Noise(unsigned seed, double sigma) : rng(seed), gauss(0.0, sigma) {}
  double operator()() { return gauss(rng); }
  std::mt19937 rng;
  std::normal_distribution<double> gauss;
};

Capture cycles_at(double cycles, double samples_per_cycle) {
  Capture c;
  c.f0_hz = c.f1_hz = c.rate_hz / samples_per_cycle;
  c.duration_s = cycles / c.f0_hz;
  return c;
}

// Per-bin noise of a block, in the peak-amplitude scale of amplitude_a. For S recorded samples
// of white noise of variance σ², the DFT bin X = Σ x_j·e^(−2πikj/S) has E|X|² = S·σ², so the
// amplitude 2|X|/S has rms 2σ/√S. The band-limited resampling onto the grid of N = B·M points
// keeps the block's Fourier coefficients inside the kernel's flat band, so the grid bin's
// 2|X|/N has the same rms: S counts the recorded samples, not the grid's N.
double bin_noise_rms(double sigma, double samples_per_cycle, double block_cycles) {
  return 2 * sigma / std::sqrt(samples_per_cycle * block_cycles);
}

// A discharge whose negative lobe is weaker by ε: sin θ − ε·min(sin θ, 0), i.e. the sine plus ε
// times a half-wave rectified sin(θ + π). DOMAIN.md: DC = εA/π, even n: 2εA/(π(n² − 1)).
double weaker_negative_lobe(double p, double eps) {
  const double x = std::sin(2 * kPi * p);
  return x < 0 ? (1 - eps) * x : x;
}

TEST(HarmonicUncertainty, U95CoversTheTrueAmplitudeOverSeeds) {
  // sin θ + 0.03·sin(2θ + 30°) + noise σ = 0.01: per block H2 scatters by (2σ/√S)/√2 =
  // 3.2e-4, and the noise's lift of the mean amplitude, floor²/(4·H2) ≈ 2e-6, is negligible.
  // With 95 % coverage the hits out of 50 seeds are Binomial(50, 0.95): P(≤ 42) = 0.3 %, so
  // "at least 43" (86 %) rarely fails a correct u95. It is a weak check of under-coverage (a
  // u95 covering 85 % passes half the time, 80 % one time in five): the mean width below is
  // held to its expected value as well.
  const double sigma = 0.01;
  int hits1 = 0, hits2 = 0;
  double u95_sum = 0;
  std::uint64_t blocks = 0;
  for (unsigned seed = 1; seed <= 50; ++seed) {
    Noise noise(seed, sigma);
    const CycleSummary s = run(cycles_at(200.3, 200), [&](double p) {
      return std::sin(2 * kPi * p) + 0.03 * std::sin(2 * (2 * kPi * p) + kPi / 6) + noise();
    });
    const HarmonicSummary& h = *s.harmonics;
    blocks = h.blocks;
    hits1 += std::fabs(h.orders[1].amplitude_a - 1.0) <= h.orders[1].u95_a;
    hits2 += std::fabs(h.orders[2].amplitude_a - 0.03) <= h.orders[2].u95_a;
    u95_sum += h.orders[2].u95_a;
    EXPECT_TRUE(h.orders[2].significant) << seed;
  }
  EXPECT_GE(hits2, 43);
  EXPECT_GE(hits1, 43);
  // Not covered by being wide: the expected u95 is t95(n − 1)·(2σ/√S)/√2/√n with n = 19
  // blocks (t95(18) = 2.101, GUM table G.2), 1.52e-4; the lag-1 correction only widens it
  // when a seed's r1 happens to be positive, so the mean over seeds lies a little above.
  ASSERT_EQ(blocks, 19u);
  const double expected = 2.101 * bin_noise_rms(sigma, 200, 10) / std::sqrt(2.0 * 19);
  EXPECT_GT(u95_sum / 50, 0.9 * expected);
  EXPECT_LT(u95_sum / 50, 1.3 * expected);
}

TEST(HarmonicUncertainty, U95ShrinksWithTheSquareRootOfTheBlocks) {
  // Four times the blocks: u95 = k·s/√n falls by √4 = 2, and k from t95(18) = 2.101 to 2
  // (ν ≥ 30, GUM 6.3.3): a ratio of 2.10. Means over 10 seeds; their scatter (s over 19
  // blocks: ±17 % each, ±5 % for the mean) and the lag-1 widening set the ±15 %.
  double u_short = 0, u_long = 0;
  for (unsigned seed = 1; seed <= 10; ++seed) {
    for (const double cycles : {200.3, 800.3}) {
      Noise noise(seed, 0.01);
      const CycleSummary s = run(cycles_at(cycles, 200), [&](double p) {
        return std::sin(2 * kPi * p) + 0.03 * std::sin(2 * (2 * kPi * p)) + noise();
      });
      (cycles < 500 ? u_short : u_long) += s.harmonics->orders[2].u95_a;
    }
  }
  EXPECT_NEAR(u_short / u_long, 2.10, 0.15 * 2.10);
}

TEST(HarmonicUncertainty, WeakOrderStaysCoveredAsBlocksAccumulate) {
  // H2 = 0.0009 with σ = 0.01: 2.0 times the per-block floor 4.47e-4. Noise lifts the mean
  // amplitude by ~floor²/(4·H2) = 5.6e-5 (Rice, large-SNR expansion), a lift that does not
  // shrink with more blocks while the scatter term does (u95 ≈ 7e-5 at 79 blocks): u95 keeps
  // the truth only because it carries the lift. 40 seeds: at 95 % coverage P(≤ 33 hits) =
  // 0.3 %; with the lift left out of u95, 30 of 40 were measured.
  int hits = 0;
  for (unsigned seed = 1; seed <= 40; ++seed) {
    Noise noise(seed, 0.01);
    const CycleSummary s = run(cycles_at(800.3, 200), [&](double p) {
      return std::sin(2 * kPi * p) + 0.0009 * std::sin(2 * (2 * kPi * p)) + noise();
    });
    const HarmonicOrder& o = s.harmonics->orders[2];
    hits += std::fabs(o.amplitude_a - 0.0009) <= o.u95_a;
  }
  EXPECT_GE(hits, 34);
}

TEST(HarmonicUncertainty, NoiseFloorIsThePerBinNoiseOfTheRecordedSamples) {
  // 130 samples per cycle go onto a grid of M = 256: 2σ/√S = 5.55e-4 with S = 1300, while the
  // grid's 2σ/√N (N = 2560) would be 3.95e-4, 29 % lower, outside the ±15 %. Each order's
  // floor pools 8 bins × 19 blocks of an exponential |X|²: its rms is within ±4.1 % (one
  // standard deviation, 1/(2√152)), so ±15 % is 3.7 of them.
  const double sigma = 0.01;
  Noise noise(11, sigma);
  const CycleSummary s =
      run(cycles_at(200.3, 130), [&](double p) { return std::sin(2 * kPi * p) + noise(); });
  const HarmonicSummary& h = *s.harmonics;
  const double expected = bin_noise_rms(sigma, 130, 10);
  ASSERT_TRUE(h.noise_floor_known);
  EXPECT_EQ(h.grid_points_per_cycle, 256u);
  EXPECT_NEAR(h.noise_floor_a, expected, 0.15 * expected);
  for (std::size_t n = 2; n <= h.max_usable_order; ++n) {
    EXPECT_NEAR(h.orders[n].noise_floor_a, expected, 0.15 * expected) << n;
  }
}

TEST(HarmonicUncertainty, NoiseOnlyOrdersFollowTheFDistributionTheTestAssumes) {
  // The stated false-alarm probability rests on R = (mean power of the order)/(its floor)
  // being F(2n, 2nL) distributed for noise alone (n = 19 blocks, L = 8 floor bins a block):
  // with d1 = 38, d2 = 304 the mean is d2/(d2 − 2) = 1.0066 and the variance
  // 2·d2²(d1 + d2 − 2)/(d1(d2 − 2)²(d2 − 4)) = 0.0604, sd 0.2458 (moments of F, standard
  // tables, e.g. Abramowitz & Stegun 26.6 — from memory). 40 seeds × orders 2 … 40 (a sine,
  // so all of them noise): the mean of 1560 values is within ±0.006 (1 sd), checked to ±0.03;
  // the sd to ±10 %.
  double sum = 0, sum2 = 0, count = 0;
  for (unsigned seed = 100; seed < 140; ++seed) {
    Noise noise(seed, 0.01);
    const CycleSummary s =
        run(cycles_at(200.3, 200), [&](double p) { return std::sin(2 * kPi * p) + noise(); });
    const HarmonicSummary& h = *s.harmonics;
    ASSERT_EQ(h.blocks, 19u);
    for (std::size_t n = 2; n <= h.max_usable_order; ++n) {
      const HarmonicOrder& o = h.orders[n];
      const double r = 2 * o.rms_a * o.rms_a / (o.noise_floor_a * o.noise_floor_a);
      sum += r;
      sum2 += r * r;
      ++count;
    }
  }
  const double mean = sum / count, sd = std::sqrt(sum2 / count - mean * mean);
  EXPECT_NEAR(mean, 304.0 / 302.0, 0.03);
  EXPECT_NEAR(sd, 0.2458, 0.1 * 0.2458);
}

TEST(HarmonicUncertainty, ProbeOffsetShowsNoEvenHarmonic) {
  // A probe offset is a DC added to a symmetric current: it brings no even order. Sine (A = 1)
  // + 0.05 + noise σ = 0.01, 200 cycles. With α = 1e-4 per order and 20 even orders (2 … 40)
  // a capture is falsely flagged with probability ≤ 0.2 %, ≤ 2 % for the 10 seeds.
  for (unsigned seed = 1; seed <= 10; ++seed) {
    Noise noise(seed, 0.01);
    const CycleSummary s = run(cycles_at(200.3, 200),
                               [&](double p) { return std::sin(2 * kPi * p) + 0.05 + noise(); });
    const HarmonicSummary& h = *s.harmonics;
    EXPECT_DOUBLE_EQ(h.false_alarm_per_order, 1e-4);
    ASSERT_TRUE(h.even_evidence_available);
    EXPECT_EQ(h.max_usable_order, 40u);
    EXPECT_TRUE(h.even_significant_orders.empty()) << seed << ": " << h.even_significant_orders[0];
    EXPECT_EQ(h.even_significant_rms_a, 0.0);
    for (std::size_t n = 2; n <= 40; n += 2) EXPECT_FALSE(h.orders[n].significant) << n;
    // The DC itself stands out (its own t-test), and so does the fundamental.
    EXPECT_TRUE(h.orders[0].significant);
    EXPECT_TRUE(h.orders[1].significant);
  }
}

TEST(HarmonicUncertainty, WeakerNegativeLobeShowsASignificantSecondHarmonic) {
  // ε = 0.03 with 1 % noise: H2 = 2εA/(3π) = 6.37e-3 (DOMAIN.md), 14 times the floor; H4 =
  // 2εA/(15π) = 1.27e-3, three times. Over 10 seeds order 2 is flagged every time, and its
  // u95 covers the truth in at least 8 (Binomial(10, 0.95): P(≤ 7) = 1.2 %); likewise the
  // even rms over the flagged orders against √(Σ Hn²/2) over the same orders.
  const double eps = 0.03;
  const auto truth = [&](std::size_t n) {
    return 2 * eps / (kPi * (static_cast<double>(n * n) - 1.0));
  };
  int hits2 = 0, hits_rms = 0;
  for (unsigned seed = 1; seed <= 10; ++seed) {
    Noise noise(seed, 0.01);
    const CycleSummary s = run(cycles_at(200.3, 200),
                               [&](double p) { return weaker_negative_lobe(p, eps) + noise(); });
    const HarmonicSummary& h = *s.harmonics;
    ASSERT_TRUE(h.even_evidence_available);
    EXPECT_TRUE(h.orders[2].significant) << seed;
    ASSERT_FALSE(h.even_significant_orders.empty());
    EXPECT_EQ(h.even_significant_orders.front(), 2u);
    hits2 += std::fabs(h.orders[2].amplitude_a - truth(2)) <= h.orders[2].u95_a;
    double truth2 = 0;
    for (const std::size_t n : h.even_significant_orders) truth2 += truth(n) * truth(n) / 2;
    hits_rms += std::fabs(h.even_significant_rms_a - std::sqrt(truth2)) <= h.even_rms_u95_a;
    EXPECT_GT(h.even_rms_u95_a, 0.0);
    // The odd orders (none in the truth) stay unflagged.
    for (std::size_t n = 3; n <= 39; n += 2) EXPECT_FALSE(h.orders[n].significant) << n;
  }
  EXPECT_GE(hits2, 8);
  EXPECT_GE(hits_rms, 8);
}

TEST(HarmonicUncertainty, EightBitQuantisationShowsNoEvenHarmonic) {
  // round(127·sin θ)/127: rounding is odd, so the error keeps half-wave symmetry and has odd
  // orders only. At exactly 200 samples per cycle the error repeats every cycle (no floor but
  // rounding, the resolution rule applies); at 199.37 it aliases into noise-like spread whose
  // floor is the quantisation noise q/√12, q = 1/127 (Bennett, Bell Syst. Tech. J. 27, 1948),
  // i.e. 2·(q/√12)/√S per bin.
  for (const double spc : {200.0, 199.37}) {
    const CycleSummary s = run(cycles_at(200.3, spc), [](double p) {
      return std::round(127 * std::sin(2 * kPi * p)) / 127;
    });
    const HarmonicSummary& h = *s.harmonics;
    ASSERT_TRUE(h.even_evidence_available);
    EXPECT_TRUE(h.even_significant_orders.empty()) << spc;
    for (std::size_t n = 2; n <= h.max_usable_order; n += 2) {
      EXPECT_FALSE(h.orders[n].significant) << spc << " order " << n;
    }
    if (spc != 200.0) {
      const double expected = bin_noise_rms(1.0 / 127 / std::sqrt(12.0), spc, 10);
      EXPECT_NEAR(h.noise_floor_a, expected, 0.15 * expected);
    }
  }
}

TEST(HarmonicUncertainty, CleanWaveformsKeepTheirEvenOrdersApart) {
  // Noise-free: the half-wave rectified sine's even orders (down to 2/(π·1599) = 4e-4 at
  // order 40, DOMAIN.md) are all claimed, a band-limited square's (exactly 0) none: the
  // floor is rounding only, and the resolution rule (1e-4 of the fundamental) decides.
  Capture c;
  c.duration_s = 200.5 / c.f0_hz;
  const CycleSummary rect = run(c, [](double p) { return std::max(0.0, std::sin(2 * kPi * p)); });
  const HarmonicSummary& hr = *rect.harmonics;
  ASSERT_EQ(hr.even_significant_orders.size(), 20u);
  double truth2 = 0;
  for (std::size_t n = 2; n <= 40; n += 2) {
    const double hn = 2 / (kPi * (static_cast<double>(n * n) - 1.0));
    truth2 += hn * hn / 2;
  }
  // The existing acceptance: each order within 0.2 % of the fundamental (A/2).
  EXPECT_NEAR(hr.even_significant_rms_a, std::sqrt(truth2), 2e-3 * 0.5);
  const CycleSummary square = run(c, [](double p) { return band_limited_square(p, 39); });
  const HarmonicSummary& hs = *square.harmonics;
  EXPECT_TRUE(hs.even_evidence_available);
  EXPECT_TRUE(hs.even_significant_orders.empty());
  for (std::size_t n = 1; n <= 39; n += 2) EXPECT_TRUE(hs.orders[n].significant) << n;
}

TEST(HarmonicUncertainty, DriftingHarmonicCountsFewerIndependentBlocks) {
  // H2 growing linearly 0.02 → 0.04 over 40 blocks (thermal drift): neighbouring blocks are
  // alike, r1 → 1 and n_eff falls to its floor of 2 (ν = 1, t95 = 12.7), so u95 still covers
  // the capture's mean 0.03, where s/√40 with k = 2 would give ±0.0018 around a series that
  // spans ±0.01.
  const double cycles = 400.3;
  Noise noise(5, 0.01);
  const CycleSummary s = run(cycles_at(cycles, 200), [&](double p) {
    const double h2 = 0.02 + 0.02 * p / cycles;
    return std::sin(2 * kPi * p) + h2 * std::sin(2 * (2 * kPi * p)) + noise();
  });
  const HarmonicSummary& h = *s.harmonics;
  ASSERT_EQ(h.blocks, 39u);
  EXPECT_LT(h.orders[2].effective_blocks, 0.25 * static_cast<double>(h.blocks));
  EXPECT_NEAR(h.orders[2].amplitude_a, 0.03, h.orders[2].u95_a);
  // Present in every block, 40 or more times the floor: significant although u95 is wide.
  EXPECT_TRUE(h.orders[2].significant);
  EXPECT_GT(h.orders[2].u95_a, h.orders[2].amplitude_a);
  // The fundamental does not drift: its blocks stay nearly independent.
  EXPECT_GT(h.orders[1].effective_blocks, 0.4 * static_cast<double>(h.blocks));
}

TEST(HarmonicUncertainty, OneBlockUsesTheFloorAndTheClosedFormThreshold) {
  // One block: no scatter, so u95 = t95(ν)·floor/√2 with ν = 2 per floor bin = 16 (t95(16) =
  // 2.120, GUM table G.2) plus the noise lift ā − √(ā² − floor²). The test is F(2, 16), whose
  // tail has a closed form: with F = (χ²₂/2)/(χ²₁₆/16) and P(χ²₂/2 > y) = e^(−y),
  // P(F > f) = E[exp(−f·χ²₁₆/16)] = (1 + 2f/16)^(−8) (the χ² Laplace transform). So
  // f = 8·(α^(−1/8) − 1) = 17.298 at α = 1e-4, and the detection limit, the H with
  // H² + floor² = f·floor², is floor·√(f − 1) = 4.0371·floor.
  Noise noise(3, 0.01);
  const CycleSummary s = run(cycles_at(12.6, 200), [&](double p) {
    return std::sin(2 * kPi * p) + 0.01 * std::sin(2 * (2 * kPi * p)) + noise();
  });
  const HarmonicSummary& h = *s.harmonics;
  ASSERT_EQ(h.blocks, 1u);
  ASSERT_TRUE(h.even_evidence_available);
  for (const std::size_t n : {1u, 2u}) {
    const HarmonicOrder& o = h.orders[n];
    const double a = o.amplitude_a, fl = o.noise_floor_a;
    EXPECT_NEAR(o.u95_a, 2.120 * fl / std::sqrt(2.0) + a - std::sqrt(a * a - fl * fl), 1e-9);
  }
  for (std::size_t n = 2; n <= 10; ++n) {
    EXPECT_NEAR(h.orders[n].detection_limit_a / h.orders[n].noise_floor_a, 4.0371, 1e-4) << n;
  }
  // 0.01 is 22 floors: claimed.
  EXPECT_TRUE(h.orders[2].significant);
}

TEST(HarmonicUncertainty, FewerCyclesThanOneBlockGiveNoEvenEvidence) {
  const CycleSummary s = run(cycles_at(8.5, 200), [](double p) {
    return std::sin(2 * kPi * p) + 0.1 * std::sin(2 * (2 * kPi * p));
  });
  ASSERT_TRUE(s.harmonics);
  const HarmonicSummary& h = *s.harmonics;
  EXPECT_EQ(h.blocks, 0u);
  EXPECT_FALSE(h.even_evidence_available);
  EXPECT_TRUE(h.even_significant_orders.empty());
  EXPECT_FALSE(h.warnings.empty());
}

TEST(HarmonicUncertainty, OneCycleBlocksHaveNoFloor) {
  // B = 1: every bin is a harmonic, nothing between orders to measure the noise on.
  Noise noise(2, 0.01);
  const CycleSummary s = run(
      cycles_at(50.3, 200), [&](double p) { return std::sin(2 * kPi * p) + noise(); }, 40, 1);
  const HarmonicSummary& h = *s.harmonics;
  EXPECT_GT(h.blocks, 40u);
  EXPECT_FALSE(h.noise_floor_known);
  EXPECT_FALSE(h.even_evidence_available);
  EXPECT_FALSE(h.warnings.empty());
  EXPECT_GT(h.orders[1].u95_a, 0.0);  // the scatter still gives the uncertainty
}

// Issue 14: after the detector loses the signal no boundary comes, and the block being filled
// held every later sample (566 MB for 50 M samples). Dropping the partial block, as the engine
// now does once a cycle outlasts any regular period, must let go of them.
TEST(Harmonics, DroppingAPartialBlockLetsGoOfItsSamples) {
  HarmonicConfig h;
  h.sample_rate_hz = 1e6;
  h.max_order = 10;
  h.block_cycles = 10;
  HarmonicAnalyzer a(h);
  std::uint64_t i = 0;
  const auto feed = [&](std::uint64_t n) {
    for (std::uint64_t k = 0; k < n; ++k, ++i)
      a.on_sample(i, std::sin(2 * kPi * static_cast<double>(i) / 1000.0));
  };
  feed(100);
  for (int b = 0; b < 3; ++b) {  // three 1000-sample cycles of a block of ten
    a.on_boundary(100.0 + 1000.0 * b);
    feed(1000);
  }
  feed(1'000'000);  // the signal is lost: no boundary for a thousand periods
  EXPECT_GT(a.held_samples(), 1'000'000u);  // what the block holds until it is let go
  a.drop_partial_block();
  // Only the interpolation margin is kept (2 × 16 taps), and it stays bounded.
  EXPECT_LE(a.held_samples(), 32u);
  feed(100'000);
  EXPECT_LE(a.held_samples(), 64u);
}

}  // namespace
}  // namespace lopside
