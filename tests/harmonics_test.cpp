// Cycle-synchronous harmonics against published Fourier series. The series are the standard
// handbook results (e.g. Abramowitz & Stegun / any table of Fourier series, reproduced in
// DOMAIN.md): half-wave rectified sine, square, triangle.
#include <gtest/gtest.h>

#include <cmath>
#include <functional>

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

}  // namespace
}  // namespace lopside
