// Reference sanity and outliers (issue 9, items 5 and 6), fed straight to the cycle engine:
// a glitch, a dropout, NaN and infinite samples anywhere in the record (also past the engine's
// kAcquireFrames look-ahead), a record without a periodic fundamental, few whole cycles, a
// frequency-modulated inverter and a quantised mains recording.
//
// Truth comes from the signals' own construction: a sine integrates to zero over whole cycles,
// so the DC of D + A·sin is D; its mean square is D² + A²/2 plus the power of independent noise
// and of the quantisation error q²/12 (Parseval, e.g. Bracewell, The Fourier Transform and its
// Applications, ch. 6; Widrow & Kollár, Quantization Noise, 2008, ch. 4). The cycle count of a
// record of duration T at frequency f is f·T periods, whole and partial together.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <functional>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "lopside/cycle_engine.hpp"

namespace lopside {
namespace {

// One channel (the current) or two (current, voltage), generated frame by frame and fed in
// blocks, as a reader hands them out. `current(n)` and `voltage(n)` are called in frame order.
struct Record {
  double rate_hz = 1e6;
  std::size_t frames = 0;
  std::function<double(std::size_t)> current;
  std::function<double(std::size_t)> voltage;  // empty: one channel
};

// The summary, and every cycle the sink was given (the kept ones).
struct RunResult {
  CycleSummary summary;
  std::vector<CycleRecord> kept;
};

RunResult run_cycles(const Record& rec, CycleReference reference = CycleReference::automatic) {
  CycleConfig config;
  config.sample_rate_hz = rec.rate_hz;
  const std::size_t channels = rec.voltage ? 2 : 1;
  if (rec.voltage) config.voltage_channel = 1;
  config.reference = reference;
  RunResult out;
  CycleEngine engine(config, [&out](const CycleRecord& r) { out.kept.push_back(r); });
  constexpr std::size_t kBlock = 1 << 16;
  SampleBlock block;
  block.channels = channels;
  for (std::size_t start = 0; start < rec.frames; start += kBlock) {
    block.frames = std::min(kBlock, rec.frames - start);
    block.data.resize(block.frames * channels);
    for (std::size_t f = 0; f < block.frames; ++f) {
      block.data[f * channels] = rec.current(start + f);
      if (rec.voltage) block.data[f * channels + 1] = rec.voltage(start + f);
    }
    engine.consume(block);
  }
  out.summary = engine.finish();
  return out;
}

CycleSummary run(const Record& rec, CycleReference reference = CycleReference::automatic) {
  return run_cycles(rec, reference).summary;
}

bool any_warning_has(const CycleSummary& s, const std::string& text) {
  return std::any_of(s.warnings.begin(), s.warnings.end(),
                     [&](const std::string& w) { return w.find(text) != std::string::npos; });
}

std::string all_warnings(const CycleSummary& s) {
  std::string out;
  for (const auto& w : s.warnings) out += "  " + w + "\n";
  return out;
}

// The stretch of the given reason that contains [from_s, to_s], if any.
const Exclusion* stretch_holding(const CycleSummary& s, const std::string& reason, double from_s,
                                 double to_s) {
  for (const Exclusion& e : s.exclusions) {
    if (e.reason == reason && e.start_s <= from_s && e.end_s >= to_s) return &e;
  }
  return nullptr;
}

// The engine's whole, left-out and partial cycles together: what the record's length must be
// accounted for by.
std::uint64_t accounted(const CycleSummary& s) {
  return s.cycles + s.glitch_cycles + s.irregular_cycles + s.not_finite_cycles +
         s.neighbour_cycles + s.partial_cycles;
}

// Nothing silently missing, in time: the kept cycles (each one true period long) and the
// left-out stretches tile the span from the first boundary to the last (to a sample), and that
// span reaches to within one period of each end of the record, plus the stretch in which
// cycle_engine.cpp's refine() places no boundary: the boundary fit's half width (3 % of a
// period) or, at few samples per cycle, the 17 samples of the band-limited kernel.
void expect_record_accounted(const CycleSummary& s, double duration_s, double period_s,
                             double rate_hz) {
  double left_out_s = 0;
  for (const Exclusion& e : s.exclusions) left_out_s += e.end_s - e.start_s;
  ASSERT_LT(s.exclusions.size(), CycleEngine::kMaxExclusions);  // the list is complete
  const double kept_s = static_cast<double>(s.cycles) * period_s;
  EXPECT_NEAR(kept_s + left_out_s, s.last_end_s - s.first_start_s, 1.5 / rate_hz);
  const double reach_s = (std::max(0.03 * period_s * rate_hz, 17.0) + 1) / rate_hz;
  EXPECT_LE(s.first_start_s, period_s + reach_s);
  EXPECT_GE(s.last_end_s, duration_s - period_s - reach_s);
}

// The issue's capture: 1 kHz, 20 mA peak, +1 mA DC, 1 % of peak white noise, 1 MS/s, 2.5 s
// (2.5 M frames, past the engine's 1 M-frame look-ahead).
constexpr double kRate = 1e6, kF = 1000, kPeak = 0.020, kDc = 0.001, kNoise = 0.0002;
constexpr double kDuration = 2.5;
constexpr std::size_t kFrames = static_cast<std::size_t>(kDuration * kRate);
constexpr double kPeriods = kDuration * kF;  // 2500 periods, whole and partial

// √(D² + A²/2 + σ²): Parseval plus the independent noise's power.
const double kRms = std::sqrt(kDc * kDc + kPeak * kPeak / 2 + kNoise * kNoise);

// The issue's acceptance for the DC (measure_cli_test.cpp): within 0.03 % of peak, and here
// also within its own u95 (GUM 6.2, 95 % coverage: one seed, so a 5 % chance by design).
void expect_figures_right(const CycleSummary& s) {
  ASSERT_TRUE(std::isfinite(s.dc_offset_a.value));
  ASSERT_TRUE(std::isfinite(s.rms_a.value));
  EXPECT_NEAR(s.dc_offset_a.value, kDc, s.dc_offset_a.u95) << "u95 " << s.dc_offset_a.u95;
  EXPECT_NEAR(s.dc_offset_a.value, kDc, 3e-4 * kPeak);
  // RMS within its u95 plus 2e-6 relative (the band-limited integral's own error,
  // sampling_accuracy_test.cpp).
  EXPECT_NEAR(s.rms_a.value, kRms, s.rms_a.u95 + 2e-6 * kRms) << "u95 " << s.rms_a.u95;
  EXPECT_TRUE(s.periodic);
}

// The fundamental of the faulty record against the clean one's (the truth's own check, with
// many seeds, is FundamentalU95.IsHonestWithNoise below). With the same kept cycles, leaving
// out n cycles moves f = cycles/Σ periods by f²·Σ(T_k − T̄)/N: the left-out periods' own
// jitter, about half of the faulty record's u95 for one or two cycles. 3·u95 bounds that at
// ~6 σ; a moved boundary (expect_kept_cycles_as_clean) is what it catches when grossly wrong.
void expect_fundamental_as_clean(const CycleSummary& faulty, const CycleSummary& clean) {
  EXPECT_NEAR(faulty.fundamental_hz.value, clean.fundamental_hz.value,
              3 * faulty.fundamental_hz.u95)
      << "clean " << clean.fundamental_hz.value << " ± " << clean.fundamental_hz.u95 << " Hz";
}

// What a glitch, a not-finite run or a dropout must not do: move any cycle the summary keeps.
// The same record without the fault (same noise) is the reference; a cycle is its own
// business, and the engine's level and swing follow the signal "but not through a glitch or
// a not-finite sample" (cycle_engine.cpp), so every kept cycle must be one of the clean
// record's. Tolerances: a left-out cycle withholds one smoothing step of the detector's level
// (a quarter of a cycle mean's 6 µA noise) and swing, which moves later triggers by ~0.01 µs
// on the 122 A/s flank; 0.1 µs is ten times that and half the boundaries' own noise jitter
// (~0.2 µs). A cycle's mean moves by the 6 mA at a boundary times that boundary's shift over
// the period (0.6 µA per 0.1 µs, and less when both boundaries move together); 1 µA allows for
// it and is a sixth of the per-cycle mean's noise (0.2 mA/√1000 = 6.3 µA).
void expect_kept_cycles_as_clean(const RunResult& faulty, const RunResult& clean) {
  std::size_t moved = 0;
  std::string first;
  for (const CycleRecord& r : faulty.kept) {
    const auto it = std::lower_bound(clean.kept.begin(), clean.kept.end(), r.start_s - 0.5 / kF,
                                     [](const CycleRecord& c, double t) { return c.start_s < t; });
    const bool same = it != clean.kept.end() && std::fabs(it->start_s - r.start_s) <= 1e-7 &&
                      std::fabs(it->period_s - r.period_s) <= 1e-7 &&
                      std::fabs(it->mean_a - r.mean_a) <= 1e-6;
    if (same) continue;
    if (++moved <= 3) {
      char line[200];
      std::snprintf(line, sizeof line,
                    "  kept %.7f s, %.4f µs, %.3f µA; clean %.7f s, %.4f µs, %.3f µA\n", r.start_s,
                    r.period_s * 1e6, r.mean_a * 1e6, it != clean.kept.end() ? it->start_s : 0.0,
                    it != clean.kept.end() ? it->period_s * 1e6 : 0.0,
                    it != clean.kept.end() ? it->mean_a * 1e6 : 0.0);
      first += line;
    }
  }
  EXPECT_EQ(moved, 0u) << "kept cycles that differ from the clean record's:\n" << first;
}

// A sine generator with the issue's figures; `edit(n, i)` may change sample n afterwards.
Record issue_capture(double phase, std::function<double(std::size_t, double)> edit,
                     std::uint64_t seed = 7) {
  auto rng = std::make_shared<std::mt19937_64>(seed);
  auto normal = std::make_shared<std::normal_distribution<double>>(0.0, 1.0);
  Record rec;
  rec.frames = kFrames;
  rec.current = [=](std::size_t n) {
    const double t = static_cast<double>(n) / kRate;
    const double i = kDc + kPeak * std::sin(2 * M_PI * kF * t + phase) + kNoise * (*normal)(*rng);
    return edit(n, i);
  };
  return rec;
}

// The unedited record.
double keep(std::size_t, double i) {
  return i;
}

// A +5 A single-sample glitch at t = 1.7 s, at several points of the cycle (the rising
// boundary's trigger lies at phase 0.253 rad, a quarter of the half swing above the mean):
//   0.253   the glitch on the boundary itself;
//   π/2     at the crest;
//   −π/2    in the trough, where the detector is armed, so the spike fakes a crossing;
//   2.5     on the falling flank;
//   0.127   20 samples before a boundary, 0.379 20 samples after one: inside the boundary fit's
//           reach (±30 samples, 3 % of a period) but outside the 16-tap edge kernel's.
// BUG (reported), phases 0.253 and 0.127: the cycles after the glitch keep boundaries about
// 1 µs earlier than the clean record's, fading over ~10 cycles (the detector's level or swing
// took in part of the spike); 10 kept cycles differ, e.g. 1.7010002 s / 999.794 µs against the
// clean 1.7010011 s / 999.805 µs.
// BUG (reported), phase 0.379: the boundary before the glitch is fitted through the spike and
// placed 17 µs early; the cycle ending there is kept (period 982.9 µs, mean 943.9 µA against
// the clean 999.4 µs, 1014.4 µA) and the fundamental is 1000.0064 Hz ± 0.0003 Hz (clean
// 999.99975 Hz).
class Glitch : public ::testing::TestWithParam<double> {};

TEST_P(Glitch, IsFoundPastTheLookAheadAndItsCyclesLeftOut) {
  const std::size_t at = 1'700'000;
  const RunResult clean = run_cycles(issue_capture(GetParam(), keep));
  const RunResult r = run_cycles(
      issue_capture(GetParam(), [at](std::size_t n, double i) { return n == at ? i + 5.0 : i; }));
  const CycleSummary& s = r.summary;
  expect_figures_right(s);
  expect_fundamental_as_clean(s, clean.summary);
  expect_kept_cycles_as_clean(r, clean);
  // One sample touches its own cycle and, through the edge corrections near a boundary, at
  // most its neighbours.
  EXPECT_GE(s.glitch_cycles, 1u);
  EXPECT_LE(s.glitch_cycles, 3u);
  EXPECT_EQ(s.not_finite_cycles, 0u);
  // A faked crossing may split one period in two (one more piece); nothing else is lost.
  EXPECT_GE(accounted(s), static_cast<std::uint64_t>(kPeriods));
  EXPECT_LE(accounted(s), static_cast<std::uint64_t>(kPeriods) + 2);
  EXPECT_LE(s.irregular_cycles, 2u);
  expect_record_accounted(s, kDuration, 1 / kF, kRate);
  const double t = static_cast<double>(at) / kRate;
  EXPECT_NE(stretch_holding(s, "glitch", t, t), nullptr) << all_warnings(s);
  EXPECT_TRUE(any_warning_has(s, "glitch")) << all_warnings(s);
}

INSTANTIATE_TEST_SUITE_P(PhaseAtTheGlitch, Glitch,
                         ::testing::Values(0.253, M_PI / 2, -M_PI / 2, 2.5, 0.127, 0.379));

// NaN or infinite samples: counted, their cycles left out, the figures finite and right. Times
// inside the look-ahead (0.4 s) and past it (1.3 s). Phase 0.37 rad puts a rising boundary
// 18.6 samples before each of these times.
struct NotFinite {
  double at_s;
  double value;
  std::size_t count;  // consecutive samples
};

class NotFiniteSamples : public ::testing::TestWithParam<NotFinite> {};

TEST_P(NotFiniteSamples, AreCountedAndTheirCyclesLeftOut) {
  const NotFinite p = GetParam();
  const auto from = static_cast<std::size_t>(p.at_s * kRate);
  const std::size_t to = from + p.count;
  const RunResult clean = run_cycles(issue_capture(0.37, keep));
  const RunResult r = run_cycles(issue_capture(
      0.37, [=](std::size_t n, double i) { return n >= from && n < to ? p.value : i; }));
  const CycleSummary& s = r.summary;
  expect_figures_right(s);
  expect_fundamental_as_clean(s, clean.summary);
  expect_kept_cycles_as_clean(r, clean);
  EXPECT_EQ(s.not_finite_samples, p.count);
  // 500 samples are half a period: one cycle, or two when they straddle a boundary, plus at
  // most one neighbour reached by the edge corrections.
  EXPECT_GE(s.not_finite_cycles, 1u);
  EXPECT_LE(s.not_finite_cycles, 3u);
  EXPECT_GE(accounted(s), static_cast<std::uint64_t>(kPeriods));
  EXPECT_LE(accounted(s), static_cast<std::uint64_t>(kPeriods) + 1);
  expect_record_accounted(s, kDuration, 1 / kF, kRate);
  const double t0 = static_cast<double>(from) / kRate, t1 = static_cast<double>(to - 1) / kRate;
  EXPECT_NE(stretch_holding(s, "not_finite", t0, t1), nullptr) << all_warnings(s);
  EXPECT_TRUE(any_warning_has(s, "not finite")) << all_warnings(s);
}

const double kNaN = std::numeric_limits<double>::quiet_NaN();
const double kInf = std::numeric_limits<double>::infinity();

INSTANTIATE_TEST_SUITE_P(Samples, NotFiniteSamples,
                         ::testing::Values(NotFinite{1.3, kNaN, 1}, NotFinite{1.3, kInf, 1},
                                           NotFinite{1.3, -kInf, 1}, NotFinite{1.3, kNaN, 500},
                                           NotFinite{0.4, kNaN, 1}, NotFinite{0.4, kInf, 500}));

// A dropout: 20 ms of exact zeros at t = 2.0 s (a recorder's lost buffer). No crossing lies in
// it, so the period around it is about 21 ms against 1 ms: irregular, left out, reported.
// BUG (reported): 13 kept cycles differ from the clean record's. The boundary 18.6 samples
// before the dropout is fitted through its zeros (the cycle ending there: 999.787 µs, 990.5 µA
// against the clean 1000.0015 µs, 991.6 µA), and the long irregular cycle moves the
// detector's level, so the cycles after it start early (the first: 998.211 µs, 986.4 µA
// against 1000.202 µs, 996.0 µA; the next boundary 2 µs early).
TEST(Dropout, IsLeftOutAndTheRecordStillAccountedFor) {
  const std::size_t from = 2'000'000, to = 2'020'000;
  const RunResult clean = run_cycles(issue_capture(0.37, keep));
  const RunResult r = run_cycles(
      issue_capture(0.37, [=](std::size_t n, double i) { return n >= from && n < to ? 0.0 : i; }));
  const CycleSummary& s = r.summary;
  expect_figures_right(s);
  expect_fundamental_as_clean(s, clean.summary);
  expect_kept_cycles_as_clean(r, clean);
  const std::uint64_t out =
      s.irregular_cycles + s.glitch_cycles + s.not_finite_cycles + s.neighbour_cycles;
  EXPECT_GE(out, 1u) << all_warnings(s);
  // A left-out stretch spans the dropout (no cycle boundary lies inside it).
  const double t0 = 2.0, t1 = 2.02 - 1 / kRate;
  bool spanned = false;
  for (const Exclusion& e : s.exclusions) spanned = spanned || (e.start_s <= t0 && e.end_s >= t1);
  EXPECT_TRUE(spanned) << all_warnings(s);
  expect_record_accounted(s, kDuration, 1 / kF, kRate);
  // The rising boundaries lie at k ms − 18.6 µs (phase 0.37 rad, trigger 0.253 rad); the 20 of
  // them inside the dropout (2.000981 s … 2.019981 s) are missing, so one left-out piece stands
  // for 21 periods: 2500 − 20 pieces at least.
  EXPECT_GE(accounted(s), static_cast<std::uint64_t>(kPeriods) - 20);
  EXPECT_TRUE(any_warning_has(s, "irregular")) << all_warnings(s);
}

// The fundamental's u95 is honest on the issue's signal (1 kHz, 20 mA peak, +1 mA DC, 1 % of
// peak noise, 1 MS/s): the truth inside u95 in at least 16 of 20 records (GUM 6.2: 95 %
// coverage; P(X ≤ 15 | n = 20, p = 0.95) ≈ 1.6 %). 0.1 s each (100 cycles) keeps it quick; the
// frequency and phase change with the seed so that the boundaries fall differently on the
// sample grid.
TEST(FundamentalU95, IsHonestWithNoise) {
  int hits = 0;
  std::string misses;
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    auto rng = std::make_shared<std::mt19937_64>(seed);
    auto normal = std::make_shared<std::normal_distribution<double>>(0.0, kNoise);
    const double f = kF * (1 + 1.3e-4 * static_cast<double>(seed));
    const double phase = 0.31 * static_cast<double>(seed);
    Record rec;
    rec.frames = 100'000;
    rec.current = [=](std::size_t n) {
      return kDc + kPeak * std::sin(2 * M_PI * f * static_cast<double>(n) / kRate + phase) +
             (*normal)(*rng);
    };
    const CycleSummary s = run(rec);
    const double err = s.fundamental_hz.value - f;
    if (std::fabs(err) <= s.fundamental_hz.u95) {
      ++hits;
    } else {
      misses += " seed " + std::to_string(seed) + ": " +
                std::to_string(err / s.fundamental_hz.u95) + " u95;";
    }
  }
  EXPECT_GE(hits, 16) << misses;
}

// White Gaussian noise alone has no periodic fundamental (its zero crossings are a random
// point process, Rice, Bell Syst. Tech. J. 24, 1945): the engine must say so, not give one.
TEST(NoSignal, WhiteNoiseIsNotPeriodic) {
  auto rng = std::make_shared<std::mt19937_64>(11);
  auto normal = std::make_shared<std::normal_distribution<double>>(0.0, 0.001);
  Record rec;
  rec.frames = 100'000;  // 0.1 s at 1 MS/s: tens of thousands of random "cycles"
  rec.current = [=](std::size_t) { return (*normal)(*rng); };
  const CycleSummary s = run(rec);
  EXPECT_FALSE(s.periodic) << s.cycles << " cycles, " << s.irregular_cycles << " irregular, f "
                           << s.fundamental_hz.value << " Hz";
}

// A single damped 1 kHz burst in 0.2 s of low noise (10 µA rms), 200 kS/s: one transient,
// not a periodic signal. The issue: refused, never given a fundamental. The engine's ways to
// refuse are `periodic == false` and fewer than two whole cycles (analyse.cpp refuses both);
// a burst long enough for several regular cycles must be judged not periodic.
struct Burst {
  const char* name;
  double length_s, tau_s;
  bool few_cycles_allowed;  // too short for two whole cycles above the band: refused anyway
};

class SingleTransient : public ::testing::TestWithParam<Burst> {};

TEST_P(SingleTransient, IsNotGivenAFundamental) {
  const Burst p = GetParam();
  auto rng = std::make_shared<std::mt19937_64>(5);
  auto normal = std::make_shared<std::normal_distribution<double>>(0.0, 1e-5);
  Record rec;
  rec.rate_hz = 200e3;
  rec.frames = 40'000;
  rec.current = [=](std::size_t n) {
    const double t = static_cast<double>(n) / 200e3 - 0.1;
    const double burst = t >= 0 && t < p.length_s
                             ? 0.02 * std::exp(-t / p.tau_s) * std::sin(2 * M_PI * kF * t)
                             : 0.0;
    return burst + (*normal)(*rng);
  };
  const CycleSummary s = run(rec);
  const std::string seen = std::to_string(s.cycles) + " cycles, " +
                           std::to_string(s.irregular_cycles) + " irregular, f " +
                           std::to_string(s.fundamental_hz.value) + " Hz";
  if (p.few_cycles_allowed) {
    EXPECT_TRUE(!s.periodic || s.cycles < 2) << seen;
  } else {
    EXPECT_FALSE(s.periodic) << seen;
  }
}

INSTANTIATE_TEST_SUITE_P(Bursts, SingleTransient,
                         ::testing::Values(Burst{"three_ms", 0.003, 0.001, true},
                                           Burst{"ten_ms", 0.010, 0.003, false},
                                           Burst{"fifty_ms", 0.050, 0.020, false}),
                         [](const auto& param_info) { return std::string(param_info.param.name); });

// Item 5: a voltage that is not periodic (a converter's output: a level with a step, a slow
// ramp and noise) beside a periodic current (1 kHz, 20 mA peak, +1 mA DC): the current sets
// the cycles, and the output says why. Two shapes: a step large against the noise (the voltage
// crosses its level once or twice in the record) and a step small against it (noise makes
// "cycles" of random length, the issue's 16–520 µs).
struct ConverterOutput {
  const char* name;
  double step_v;   // at 0.2 s, on 300 V plus a ramp of 40 V/s
  double noise_v;  // white, rms
};

class NonPeriodicVoltage : public ::testing::TestWithParam<ConverterOutput> {};

CycleSummary run_with_voltage(const ConverterOutput& p, CycleReference reference) {
  auto rng = std::make_shared<std::mt19937_64>(3);
  auto normal = std::make_shared<std::normal_distribution<double>>(0.0, p.noise_v);
  Record rec;
  rec.frames = 500'000;
  rec.current = [=](std::size_t n) {
    return kDc + kPeak * std::sin(2 * M_PI * kF * static_cast<double>(n) / kRate + 0.37);
  };
  rec.voltage = [=](std::size_t n) {
    const double t = static_cast<double>(n) / kRate;
    return 300 + 40 * t + (t > 0.2 ? p.step_v : 0) + (*normal)(*rng);
  };
  return run(rec, reference);
}

TEST_P(NonPeriodicVoltage, GivesWayToThePeriodicCurrent) {
  const CycleSummary s = run_with_voltage(GetParam(), CycleReference::automatic);
  EXPECT_EQ(s.reference, "current") << s.crossings << " crossings\n" << all_warnings(s);
  EXPECT_FALSE(s.reference_note.empty());
  EXPECT_TRUE(any_warning_has(s, "not periodic")) << all_warnings(s);
  EXPECT_NEAR(s.fundamental_hz.value, kF, std::max(s.fundamental_hz.u95, kF * 1e-6));
  EXPECT_NEAR(s.dc_offset_a.value, kDc, 3e-4 * kPeak);
  // 0.5 s at 1 kHz: 500 periods; phase 0.37 puts the last boundary 18.6 µs before the end,
  // inside the fit's reach, so 499 boundaries and 500 pieces.
  EXPECT_EQ(accounted(s), 500u);
  EXPECT_EQ(s.irregular_cycles, 0u);
  EXPECT_TRUE(s.periodic);
}

// By hand (--reference voltage) the voltage is used, and its cycles are not given out as a
// periodic fundamental: refused (periodic false, or fewer than two whole cycles).
TEST_P(NonPeriodicVoltage, ForcedAsReferenceIsNotGivenAFundamental) {
  const CycleSummary s = run_with_voltage(GetParam(), CycleReference::voltage);
  EXPECT_EQ(s.reference, "voltage");
  EXPECT_TRUE(!s.periodic || s.cycles < 2) << s.cycles << " cycles, " << s.irregular_cycles
                                           << " irregular, f " << s.fundamental_hz.value << " Hz";
}

INSTANTIATE_TEST_SUITE_P(Shapes, NonPeriodicVoltage,
                         ::testing::Values(ConverterOutput{"large_step", 100, 10},
                                           ConverterOutput{"small_step", 20, 10}),
                         [](const auto& param_info) { return std::string(param_info.param.name); });

// Few whole cycles: the fundamental still carries an honest u95 (> 0, the truth inside it),
// and with fewer than three whole cycles a warning says the figures are poorly determined.
// 1 kHz at 1 MS/s, starting at a falling zero crossing: rising boundaries at (0.54 + k) ms
// (the trigger sits 14.5° past the mean), so 2.75 (3.75) periods hold 2 (3) whole cycles.
struct FewCycles {
  int whole;
  double noise_share;  // white noise, share of the peak [1]
};

class FewWholeCycles : public ::testing::TestWithParam<FewCycles> {};

TEST_P(FewWholeCycles, FundamentalCarriesAnHonestU95) {
  const FewCycles p = GetParam();
  // Twenty seeds: the truth must lie inside u95 in at least 16 (GUM 6.2: 95 % coverage;
  // P(X ≤ 15 | n = 20, p = 0.95) ≈ 1.6 %). A noise-free sine differs only in its phase.
  int hits = 0;
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    auto rng = std::make_shared<std::mt19937_64>(seed);
    auto normal = std::make_shared<std::normal_distribution<double>>(0.0, p.noise_share * kPeak);
    const double f = kF * (1 + 1e-3 * static_cast<double>(seed));  // not a whole sample period
    const double phase = M_PI + 0.01 * static_cast<double>(seed);
    Record rec;
    rec.frames = static_cast<std::size_t>((p.whole + 0.75) / f * kRate);
    rec.current = [=](std::size_t n) {
      return kPeak * std::sin(2 * M_PI * f * static_cast<double>(n) / kRate + phase) +
             (p.noise_share > 0 ? (*normal)(*rng) : 0.0);
    };
    const CycleSummary s = run(rec);
    ASSERT_EQ(s.cycles, static_cast<std::uint64_t>(p.whole)) << "seed " << seed;
    EXPECT_GT(s.fundamental_hz.u95, 0.0) << "seed " << seed;
    // Useful as well as honest: 1 % of f is a period error of 10 samples, far beyond what a
    // boundary fitted on a sine flank at 1000 samples per cycle can miss by (~0.2 sample with
    // 1 % noise: the noise over the flank's slope, averaged over the fit's 60 samples). With
    // three cycles σ comes from two period differences, so Student's t with one degree of
    // freedom (12.7, GUM G.3) makes u95 several times the error: honest, not tight.
    EXPECT_LT(s.fundamental_hz.u95, 1e-2 * f) << "seed " << seed;
    hits += std::fabs(s.fundamental_hz.value - f) <= s.fundamental_hz.u95 ? 1 : 0;
    if (p.whole < 3) {
      EXPECT_TRUE(any_warning_has(s, "poorly determined")) << all_warnings(s);
    }
    EXPECT_TRUE(s.periodic);
  }
  EXPECT_GE(hits, 16);
}

INSTANTIATE_TEST_SUITE_P(Cycles, FewWholeCycles,
                         ::testing::Values(FewCycles{2, 0.0}, FewCycles{3, 0.0}, FewCycles{2, 0.01},
                                           FewCycles{3, 0.01}));

// A resonant inverter whose frequency follows the mains ripple: 40 kHz ± 5 % at 100 Hz,
// 1 MS/s (25 samples per cycle), 0.1 s = ten modulation periods. Within kPeriodTolerance, so
// no cycle is left out, and the measured frequency is the mean one. Phase
// φ(t) = 2π·f0·t − (Δf/fm)·cos(2π·fm·t): the count of cycles between boundaries t1 and t2 is
// (φ(t2) − φ(t1))/2π, which differs from f0·(t2 − t1) by at most (Δf/fm)/π·(1 − cos(2π·fm·25 µs))
// ≈ 8e-4 cycles out of 4000 (t1, t2 within a period of the record's ends): 2e-7 of f0.
TEST(FrequencyModulation, NoCycleIsLeftOutAndTheMeanFrequencyIsMeasured) {
  const double f0 = 40e3, df = 0.05 * f0, fm = 100;
  auto rng = std::make_shared<std::mt19937_64>(9);
  auto normal = std::make_shared<std::normal_distribution<double>>(0.0, kNoise);
  Record rec;
  rec.frames = 100'000;
  rec.current = [=](std::size_t n) {
    const double t = static_cast<double>(n) / kRate;
    const double phi = 2 * M_PI * f0 * t - df / fm * std::cos(2 * M_PI * fm * t);
    return kDc + kPeak * std::sin(phi) + (*normal)(*rng);
  };
  const CycleSummary s = run(rec);
  EXPECT_EQ(s.irregular_cycles, 0u) << all_warnings(s);
  EXPECT_EQ(s.glitch_cycles, 0u);
  EXPECT_EQ(s.not_finite_cycles, 0u);
  // 4000 periods in 0.1 s, whole and partial.
  EXPECT_GE(accounted(s), 4000u);
  EXPECT_LE(accounted(s), 4001u);
  EXPECT_NEAR(s.fundamental_hz.value, f0, s.fundamental_hz.u95 + 2e-7 * f0)
      << "u95 " << s.fundamental_hz.u95;
  EXPECT_NEAR(s.dc_offset_a.value, kDc, std::max(s.dc_offset_a.u95, 3e-4 * kPeak));
  EXPECT_TRUE(s.periodic);
}

// The issue's mains case: 50 Hz recorded at 400 S/s (8 samples per cycle) by an 8-bit
// recorder over ±25 mA, 10 s. Quantisation plateaus are no dropout and no glitch: no cycle is
// left out, and the RMS is within its u95 of Parseval plus the noise's power and q²/12 (1 % of
// peak Gaussian noise, σ ≈ q, dithers the quantiser well enough for q²/12 to hold: Widrow &
// Kollár, ch. 4–5). Twenty seeds, at least 16 inside u95 (GUM 6.2; binomial, as above).
TEST(QuantisedMains, NoCycleIsLeftOutAndTheRmsIsInsideItsU95) {
  const double f = 50, rate = 400, a1 = 0.020, a3 = 0.002, d = 0.0005, sigma = 0.0002;
  const double q = 2 * 0.025 / 255;
  const double rms = std::sqrt(d * d + (a1 * a1 + a3 * a3) / 2 + sigma * sigma + q * q / 12);
  int hits = 0;
  for (std::uint64_t seed = 1; seed <= 20; ++seed) {
    auto rng = std::make_shared<std::mt19937_64>(seed);
    auto normal = std::make_shared<std::normal_distribution<double>>(0.0, sigma);
    const double phase = 0.3 * static_cast<double>(seed);
    Record rec;
    rec.rate_hz = rate;
    rec.frames = 4000;
    rec.current = [=](std::size_t n) {
      const double th = 2 * M_PI * f * static_cast<double>(n) / rate + phase;
      const double i = d + a1 * std::sin(th) + a3 * std::sin(3 * th + 0.5) + (*normal)(*rng);
      return q * std::round(i / q);
    };
    const CycleSummary s = run(rec);
    EXPECT_EQ(s.irregular_cycles + s.glitch_cycles + s.not_finite_cycles + s.neighbour_cycles, 0u)
        << "seed " << seed << "\n"
        << all_warnings(s);
    // 500 periods in 10 s; the boundaries within 17 samples (two periods) of either end are
    // not placed (cycle_engine.cpp, refine()), so those periods join the partial cycles.
    expect_record_accounted(s, 10.0, 1 / f, rate);
    EXPECT_GE(accounted(s), 500u - 2 * 3) << "seed " << seed;
    EXPECT_LE(accounted(s), 501u) << "seed " << seed;
    hits += std::fabs(s.rms_a.value - rms) <= s.rms_a.u95 ? 1 : 0;
  }
  EXPECT_GE(hits, 16);
}

}  // namespace
}  // namespace lopside
