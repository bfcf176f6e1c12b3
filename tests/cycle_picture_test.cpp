// The average cycle and the strip of real cycles (cycle_picture.hpp) against closed forms.
#include "lopside/cycle_picture.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace {

using lopside::CyclePicture;
using lopside::CyclePictureBuilder;
using lopside::CycleRecord;
using lopside::SampleBlock;

constexpr double kRate = 1e6;  // [Hz]
// 1280 samples per cycle: ten samples in each of the 128 phase bins, always the same ten.
constexpr std::size_t kPerCycle = 1280;
constexpr double kPeriod = kPerCycle / kRate;

// Current i = dc + a·sin(θ), voltage v = b·cos(θ), θ = 2π·m/1280 (m from the cycle start).
struct Signal {
  double dc = 0, a = 0.1, b = 500;
  double i(std::size_t m) const {
    return dc + a * std::sin(2 * M_PI * static_cast<double>(m) / kPerCycle);
  }
  double v(std::size_t m) const {
    return b * std::cos(2 * M_PI * static_cast<double>(m) / kPerCycle);
  }
};

// Cycle c's record. Its boundaries sit half a sample before frames c·1280 and (c + 1)·1280, so
// that it holds exactly those 1280 frames (a frame on a boundary would end the earlier cycle,
// as in the engine) and frame c·1280 + j lies (j + ½)/1280 of a period in: bin ⌊j/10⌋.
CycleRecord record(std::size_t c) {
  CycleRecord r;
  r.index = c;
  r.start_s = (static_cast<double>(c * kPerCycle) - 0.5) / kRate;
  r.period_s = kPeriod;
  return r;
}

// Feeds `cycles` whole cycles in blocks of 1000 frames, reporting each cycle once its frames
// are in (as the engine does) unless `report` is false.
void feed(CyclePictureBuilder& builder, const Signal& s, std::size_t cycles,
          bool report_each = true) {
  const std::size_t total = cycles * kPerCycle;
  std::size_t reported = 0;
  for (std::size_t first = 0; first < total; first += 1000) {
    SampleBlock block;
    block.channels = 2;
    block.frames = std::min<std::size_t>(1000, total - first);
    for (std::size_t f = 0; f < block.frames; ++f) {
      block.data.push_back(s.i(first + f));
      block.data.push_back(s.v(first + f));
    }
    builder.add_block(block);
    // The cycle's last frame, (c + 1)·1280 − 1, must be in.
    while (report_each && (reported + 1) * kPerCycle <= first + block.frames) {
      builder.on_cycle(record(reported));
      ++reported;
    }
  }
}

// Mean of sin over the ten samples of bin k: Σ_{j=0}^{9} sin(θ0 + jδ)/10 with θ0 = 10kδ,
// δ = 2π/1280, which is sin(θ0 + 4.5δ)·sin(5δ)/(10·sin(δ/2)) (Lagrange's trigonometric
// identity for a sum of sines in arithmetic progression); the same with cos.
double bin_mean_sin(std::size_t k) {
  const double d = 2 * M_PI / kPerCycle;
  return std::sin(10.0 * static_cast<double>(k) * d + 4.5 * d) * std::sin(5 * d) /
         (10 * std::sin(d / 2));
}
double bin_mean_cos(std::size_t k) {
  const double d = 2 * M_PI / kPerCycle;
  return std::cos(10.0 * static_cast<double>(k) * d + 4.5 * d) * std::sin(5 * d) /
         (10 * std::sin(d / 2));
}

TEST(CyclePicture, AverageCycleIsTheBinMeanOfTheSamples) {
  Signal s;
  s.dc = 0.004;
  CyclePictureBuilder b(kRate, 0.0, 0, 1, 0.0);
  feed(b, s, 20);
  const CyclePicture p = b.finish();
  ASSERT_EQ(p.current_a.size(), CyclePictureBuilder::kBins);
  ASSERT_EQ(p.voltage_v.size(), CyclePictureBuilder::kBins);
  EXPECT_EQ(p.cycles_averaged, 20u);
  EXPECT_NEAR(p.period_s, kPeriod, 1e-15);
  for (std::size_t k = 0; k < CyclePictureBuilder::kBins; ++k) {
    // Rounding only: 200 sums of values of order 0.1 (tolerance 1e-12 A).
    EXPECT_NEAR(p.current_a[k], s.dc + s.a * bin_mean_sin(k), 1e-12) << "bin " << k;
    EXPECT_NEAR(p.voltage_v[k], s.b * bin_mean_cos(k), 1e-9) << "bin " << k;
    EXPECT_NEAR(p.phase[k], (static_cast<double>(k) + 0.5) / 128.0, 1e-15);
  }
}

TEST(CyclePicture, HalfWaveSymmetryShowsInTheMirror) {
  // f(φ) + f(φ + ½) = 2·dc for a sine with a DC: zero without one (half-wave symmetry).
  for (const double dc : {0.0, 0.003}) {
    Signal s;
    s.dc = dc;
    CyclePictureBuilder b(kRate, 0.0, 0, std::nullopt, 0.0);
    feed(b, s, 8);
    const CyclePicture p = b.finish();
    EXPECT_TRUE(p.voltage_v.empty());
    for (std::size_t k = 0; k < 64; ++k)
      EXPECT_NEAR(p.current_a[k] + p.current_a[k + 64], 2 * dc, 1e-12) << "bin " << k;
  }
}

TEST(CyclePicture, ProbeZeroIsTakenOff) {
  Signal s;
  s.dc = 0.010;
  CyclePictureBuilder b(kRate, 0.0, 0, 1, 0.010);  // the zero stretch measured 10 mA
  feed(b, s, 4);
  const CyclePicture p = b.finish();
  for (std::size_t k = 0; k < 64; ++k)
    EXPECT_NEAR(p.current_a[k] + p.current_a[k + 64], 0.0, 1e-12);
}

TEST(CyclePicture, StripHoldsTheLastCyclesSampleBySample) {
  Signal s;
  CyclePictureBuilder b(kRate, 0.0, 0, 1, 0.0);
  feed(b, s, 10);
  const CyclePicture p = b.finish();
  ASSERT_EQ(p.strip_cycles, CyclePictureBuilder::kStripCycles);
  EXPECT_EQ(p.strip_first_cycle, 6u);
  EXPECT_NEAR(p.strip_start_s, (6 * kPerCycle - 0.5) / kRate, 1e-15);
  ASSERT_EQ(p.strip_time_s.size(), 4 * kPerCycle);
  ASSERT_EQ(p.strip_boundaries_s.size(), 5u);
  for (std::size_t k = 0; k < 5; ++k)
    EXPECT_NEAR(p.strip_boundaries_s[k], static_cast<double>(k) * kPeriod, 1e-12);
  for (const std::size_t m : {std::size_t{0}, std::size_t{321}, 4 * kPerCycle - 1}) {
    // Sample m of the strip is frame 6·1280 + m, half a sample after the strip's origin.
    EXPECT_NEAR(p.strip_time_s[m], (static_cast<double>(m) + 0.5) / kRate, 1e-12);
    EXPECT_DOUBLE_EQ(p.strip_current_a[m], s.i(6 * kPerCycle + m));
    EXPECT_DOUBLE_EQ(p.strip_voltage_v[m], s.v(6 * kPerCycle + m));
  }
}

TEST(CyclePicture, CyclesReportedAfterTheirSamplesLeftTheRingAreNotAveraged) {
  // 300 cycles (384 000 frames) all reported at the end, as after the engine's look-ahead:
  // only cycles wholly inside the last 2^18 = 262 144 frames can be binned, those whose first
  // frame is 121 856 or later, i.e. cycles 96 … 299 (204 of them).
  Signal s;
  CyclePictureBuilder b(kRate, 0.0, 0, 1, 0.0);
  feed(b, s, 300, /*report_each=*/false);
  for (std::size_t c = 0; c < 300; ++c) b.on_cycle(record(c));
  const CyclePicture p = b.finish();
  EXPECT_EQ(p.cycles_averaged, 204u);
  EXPECT_EQ(p.strip_first_cycle, 296u);
}

TEST(CyclePicture, NonFiniteSamplesAreSkippedAndGapsBreakTheStrip) {
  Signal s;
  CyclePictureBuilder b(kRate, 0.0, 0, std::nullopt, 0.0);
  SampleBlock block;
  block.channels = 2;
  block.frames = 3 * kPerCycle;
  for (std::size_t m = 0; m < block.frames; ++m) {
    block.data.push_back(m == 5 ? std::nan("") : s.i(m));
    block.data.push_back(0.0);
  }
  b.add_block(block);
  for (const std::size_t c : {0u, 2u}) b.on_cycle(record(c));  // cycle 1 left out
  const CyclePicture p = b.finish();
  EXPECT_EQ(p.cycles_averaged, 2u);
  // Bin 0 has 9 + 10 samples; its mean is still finite.
  EXPECT_TRUE(std::isfinite(p.current_a[0]));
  ASSERT_EQ(p.strip_cycles, 2u);
  // Two separate cycles: a NaN between them, and both pairs of boundaries.
  ASSERT_EQ(p.strip_time_s.size(), 2 * kPerCycle + 1);
  EXPECT_TRUE(std::isnan(p.strip_time_s[kPerCycle]));
  ASSERT_EQ(p.strip_boundaries_s.size(), 4u);
  EXPECT_NEAR(p.strip_boundaries_s[2], 2 * kPeriod, 1e-12);  // cycle 2 starts 2 periods in
}

TEST(CyclePicture, FewSamplesPerCycleMergeBinsUntilNoneIsEmpty) {
  // 40 samples per cycle locked to it leave 88 of 128 bins empty, and 24 of 64; 32 bins are
  // 1.25 samples wide and all get one. The boundaries sit 0.3 sample before a frame, so frame j
  // of a cycle lies (j + 0.3)/40 of a period in, never on a bin edge: bin k holds the samples
  // with ⌊32·(j + 0.3)/40⌋ = k, whose mean the picture must show.
  constexpr std::size_t spc = 40;
  CyclePictureBuilder b(kRate, 0.0, 0, std::nullopt, 0.0);
  SampleBlock block;
  block.channels = 1;
  block.frames = 10 * spc;
  const auto f = [](std::size_t j) {
    return std::sin(2 * M_PI * static_cast<double>(j % spc) / spc);
  };
  for (std::size_t m = 0; m < block.frames; ++m) block.data.push_back(f(m));
  b.add_block(block);
  for (std::size_t c = 0; c < 10; ++c) {
    CycleRecord r;
    r.index = c;
    r.start_s = (static_cast<double>(c * spc) - 0.3) / kRate;
    r.period_s = spc / kRate;
    b.on_cycle(r);
  }
  const CyclePicture p = b.finish();
  ASSERT_EQ(p.current_a.size(), 32u);
  for (std::size_t k = 0; k < 32; ++k) {
    double sum = 0;
    int n = 0;
    for (std::size_t j = 0; j < spc; ++j) {
      if (static_cast<std::size_t>(32 * (static_cast<double>(j) + 0.3) / spc) == k) {
        sum += f(j);
        ++n;
      }
    }
    ASSERT_GT(n, 0);
    EXPECT_NEAR(p.current_a[k], sum / n, 1e-12) << "bin " << k;
  }
}

}  // namespace
