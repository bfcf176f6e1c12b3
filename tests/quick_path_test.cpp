// The cycle engine's quick path (cycle_engine.cpp, quick_run) must give exactly what the
// general path gives: every per-cycle record and every summary figure, bit for bit, on
// captures that exercise each event the quick path hands back (boundaries, zeros of the
// current, flat runs at a peak, clipping, glitches, not-finite samples, a lost signal, the
// harmonics' blocks), at few and at many samples per cycle, and at any block size.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>
#include <tuple>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "synth/synth.hpp"

namespace lopside {
namespace {

struct EngineResult {
  CycleSummary summary;
  std::vector<CycleRecord> cycles;
};

// Runs the generator's frames through an engine, optionally damaging them first: `damage`
// maps (frame index, channel, value) to the value the engine sees.
template <typename Damage>
EngineResult run(const synth::CaptureSpec& spec, bool quick, std::size_t block_frames, Damage damage,
        bool harmonics) {
  synth::Generator generator(spec);
  CycleConfig config;
  config.sample_rate_hz = spec.timebase.sample_rate_hz;
  config.current_channel = 0;
  if (spec.voltage) config.voltage_channel = 1;
  if (harmonics) config.harmonics = HarmonicConfig{};
  config.quick_path = quick;
  EngineResult r;
  CycleEngine engine(config, [&r](const CycleRecord& c) { r.cycles.push_back(c); });
  SampleBlock block;
  block.channels = generator.channels();
  std::uint64_t frame = 0;
  while (const std::size_t n = generator.read(block.data, block_frames)) {
    block.frames = n;
    for (std::size_t f = 0; f < n; ++f)
      for (std::size_t c = 0; c < block.channels; ++c) {
        double& v = block.data[f * block.channels + c];
        v = damage(frame + f, c, v);
      }
    frame += n;
    engine.consume(block);
  }
  r.summary = engine.finish();
  return r;
}

// Bit patterns, so that −0 and +0 differ and NaN equals NaN.
bool same(double a, double b) {
  return std::bit_cast<std::uint64_t>(a) == std::bit_cast<std::uint64_t>(b);
}

void expect_same(const Estimate& a, const Estimate& b, const std::string& what) {
  EXPECT_TRUE(same(a.value, b.value) && same(a.u95, b.u95) && same(a.coverage_k, b.coverage_k))
      << what << ": " << a.value << " ± " << a.u95 << " against " << b.value << " ± " << b.u95;
}

void expect_same(const EngineResult& quick, const EngineResult& general) {
  ASSERT_EQ(quick.cycles.size(), general.cycles.size());
  for (std::size_t k = 0; k < quick.cycles.size(); ++k) {
    const CycleRecord &a = quick.cycles[k], &b = general.cycles[k];
    const std::string at = "cycle " + std::to_string(k);
    EXPECT_EQ(a.index, b.index) << at;
    for (const auto& [x, y, name] : std::vector<std::tuple<double, double, const char*>>{
             {a.start_s, b.start_s, "start"},
             {a.period_s, b.period_s, "period"},
             {a.mean_a, b.mean_a, "mean"},
             {a.rms_a, b.rms_a, "rms"},
             {a.ac_rms_a, b.ac_rms_a, "ac rms"},
             {a.charge_positive_c, b.charge_positive_c, "Q+"},
             {a.charge_negative_c, b.charge_negative_c, "Q-"},
             {a.charge_asymmetry, b.charge_asymmetry, "asymmetry"},
             {a.peak_positive_a, b.peak_positive_a, "peak+"},
             {a.peak_negative_a, b.peak_negative_a, "peak-"},
             {a.positive_share, b.positive_share, "share"},
             {a.voltage_mean_v, b.voltage_mean_v, "v mean"},
             {a.voltage_rms_v, b.voltage_rms_v, "v rms"},
             {a.voltage_peak_positive_v, b.voltage_peak_positive_v, "v peak+"},
             {a.voltage_peak_negative_v, b.voltage_peak_negative_v, "v peak-"},
             {a.voltage_positive_share, b.voltage_positive_share, "v share"},
             {a.power_w, b.power_w, "power"},
             {a.energy_positive_j, b.energy_positive_j, "E+"},
             {a.energy_negative_j, b.energy_negative_j, "E-"},
             {a.burning_voltage_positive_v, b.burning_voltage_positive_v, "burn+"},
             {a.burning_voltage_negative_v, b.burning_voltage_negative_v, "burn-"}}) {
      EXPECT_TRUE(same(x, y)) << at << " " << name << ": " << x << " against " << y;
    }
    EXPECT_EQ(a.flat_top_positive, b.flat_top_positive) << at;
    EXPECT_EQ(a.flat_top_negative, b.flat_top_negative) << at;
    EXPECT_EQ(a.clipped_positive, b.clipped_positive) << at;
    EXPECT_EQ(a.clipped_negative, b.clipped_negative) << at;
  }
  const CycleSummary &a = quick.summary, &b = general.summary;
  EXPECT_EQ(a.cycles, b.cycles);
  EXPECT_EQ(a.partial_cycles, b.partial_cycles);
  EXPECT_EQ(a.not_finite_cycles, b.not_finite_cycles);
  EXPECT_EQ(a.glitch_cycles, b.glitch_cycles);
  EXPECT_EQ(a.irregular_cycles, b.irregular_cycles);
  EXPECT_EQ(a.neighbour_cycles, b.neighbour_cycles);
  EXPECT_EQ(a.not_finite_samples, b.not_finite_samples);
  EXPECT_EQ(a.crossings, b.crossings);
  EXPECT_EQ(a.clipped_positive, b.clipped_positive);
  EXPECT_EQ(a.clipped_negative, b.clipped_negative);
  EXPECT_EQ(a.periodic, b.periodic);
  EXPECT_EQ(a.warnings, b.warnings);
  EXPECT_TRUE(same(a.boundary_jitter_s, b.boundary_jitter_s));
  expect_same(a.fundamental_hz, b.fundamental_hz, "fundamental");
  expect_same(a.dc_offset_a, b.dc_offset_a, "DC");
  expect_same(a.rms_a, b.rms_a, "RMS");
  expect_same(a.charge_asymmetry, b.charge_asymmetry, "charge asymmetry");
  expect_same(a.positive_share, b.positive_share, "positive share");
  expect_same(a.peak_positive_a, b.peak_positive_a, "peak+");
  expect_same(a.peak_negative_a, b.peak_negative_a, "peak-");
  expect_same(a.power_w, b.power_w, "power");
  expect_same(a.burning_voltage_positive_v, b.burning_voltage_positive_v, "burning+");
  ASSERT_EQ(a.harmonics.has_value(), b.harmonics.has_value());
  if (a.harmonics) {
    const HarmonicSummary &ha = *a.harmonics, &hb = *b.harmonics;
    EXPECT_EQ(ha.blocks, hb.blocks);
    EXPECT_TRUE(same(ha.thd, hb.thd)) << ha.thd << " against " << hb.thd;
    ASSERT_EQ(ha.orders.size(), hb.orders.size());
    for (std::size_t n = 0; n < ha.orders.size(); ++n) {
      EXPECT_TRUE(same(ha.orders[n].amplitude_a, hb.orders[n].amplitude_a)) << "order " << n;
      EXPECT_TRUE(same(ha.orders[n].phase_deg, hb.orders[n].phase_deg)) << "order " << n;
      EXPECT_TRUE(same(ha.orders[n].u95_a, hb.orders[n].u95_a)) << "order " << n;
    }
  }
}

const auto kIntact = [](std::uint64_t, std::size_t, double v) { return v; };

synth::CaptureSpec spec(double f_hz, double rate_hz, double cycles) {
  synth::CaptureSpec s;
  s.timebase.sample_rate_hz = rate_hz;
  s.timebase.start_frequency_hz = s.timebase.end_frequency_hz = f_hz;
  s.timebase.duration_s = cycles / f_hz;
  s.timebase.start_phase_deg = 37;
  s.current.peak = 0.02;
  s.current.dc = 0.0004;
  return s;
}

void check(const synth::CaptureSpec& s, bool harmonics = false, std::size_t block = 4096) {
  const EngineResult quick = run(s, true, block, kIntact, harmonics);
  const EngineResult general = run(s, false, block, kIntact, harmonics);
  ASSERT_GT(general.summary.cycles, 2u);
  expect_same(quick, general);
}

// Samples per cycle from the fewest the engine measures to many, with noise and without: the
// crossings are found by the reconstruction below ~66 samples per cycle and by the fitted line
// above, and the current's zeros likewise.
TEST(QuickPath, SameResultsAtAnySamplesPerCycle) {
  for (const double spc : {6.3, 11.7, 33.3, 50.0, 97.1, 250.0, 1234.5}) {
    for (const double noise : {0.0, 2e-4}) {
      synth::CaptureSpec s = spec(20e3, 20e3 * spc, 300);
      s.noise_rms_a = noise;
      s.seed = 7;
      SCOPED_TRACE("samples per cycle " + std::to_string(spc) + ", noise " + std::to_string(noise));
      check(s);
    }
  }
}

// A voltage reference, a lobed glow current with dead intervals (long runs near zero, many
// zeros in the noise), an asymmetric and a drifting frequency, harmonics on.
TEST(QuickPath, SameResultsForAGlowWithVoltageAndHarmonics) {
  synth::CaptureSpec s = spec(50, 50 * 397.3, 120);
  s.current.shape = synth::Shape::lobed;
  s.current.negative_ratio = 0.8;
  s.noise_rms_a = 1e-4;
  s.timebase.end_frequency_hz = 52;
  s.voltage = synth::Waveform{};
  s.voltage->peak = 300;
  check(s, true);
  check(s, true, 1000);  // another block size: the quick runs end elsewhere
}

// Flat tops: a clipped recorder (long runs at each peak) and a quantised one (short runs of
// equal samples everywhere, ties with the running extremes).
TEST(QuickPath, SameResultsWithClippingAndQuantisation) {
  synth::CaptureSpec s = spec(32e3, 32e3 * 41.7, 400);
  s.clip_high_a = 0.017;
  s.clip_low_a = -0.015;
  s.noise_rms_a = 5e-5;
  check(s, true);
  synth::CaptureSpec q = spec(32e3, 32e3 * 77.0, 400);
  q.current.peak = 0.02;
  const auto quantise = [](std::uint64_t, std::size_t, double v) {
    return std::round(v / 1e-3) * 1e-3;
  };
  const EngineResult a = run(q, true, 4096, quantise, false);
  const EngineResult b = run(q, false, 4096, quantise, false);
  ASSERT_GT(b.summary.cycles, 2u);
  expect_same(a, b);
}

// Faults the quick path must hand back: not-finite samples, a glitch, a dropout that loses the
// signal for a while (the harmonics' block is let go), and a step in level.
TEST(QuickPath, SameResultsWithFaults) {
  synth::CaptureSpec s = spec(10e3, 10e3 * 60.3, 900);
  s.noise_rms_a = 1e-4;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const auto damage = [nan](std::uint64_t frame, std::size_t, double v) {
    if (frame == 7000 || frame == 7001 || frame == 30500) return nan;
    if (frame == 12345) return 1.0;                    // a glitch, 50 × the peak
    if (frame >= 20000 && frame < 23000) return 1e-6;  // the signal lost
    if (frame >= 40000) return v * 3 + 0.001;          // a new level
    return v;
  };
  for (const bool harmonics : {false, true}) {
    const EngineResult a = run(s, true, 4096, damage, harmonics);
    const EngineResult b = run(s, false, 4096, damage, harmonics);
    ASSERT_GT(b.summary.cycles, 2u);
    EXPECT_GT(b.summary.not_finite_cycles + b.summary.glitch_cycles + b.summary.irregular_cycles,
              0u);
    expect_same(a, b);
  }
}

// A record shorter than the engine's look-ahead is measured from its replay alone.
TEST(QuickPath, SameResultsForAShortRecord) {
  check(spec(1e3, 1e3 * 80.1, 12));
}

}  // namespace
}  // namespace lopside
