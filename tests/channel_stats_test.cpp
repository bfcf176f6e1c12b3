// ChannelStats: count, extremes, mean, and the clipping rule of clipping.hpp applied per channel
// (issue 9, item 1): a flat run at the record's extreme is clipped when it is too long for
// quantisation and its flanks bend towards a crest beyond it; a sample on the integer full
// scale is clipped whatever its run. Signals with analytic answers, worked out beside each
// check.

#include "lopside/channel_stats.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <vector>

namespace {

using lopside::ChannelStats;
using lopside::ChannelSummary;
using lopside::SampleBlock;

SampleBlock block_of(const std::vector<double>& values, std::size_t channels = 1) {
  SampleBlock b;
  b.data = values;
  b.channels = channels;
  b.frames = values.size() / channels;
  return b;
}

/// `values` fed to a one-channel ChannelStats in blocks of `block` frames.
ChannelSummary summarise(const std::vector<double>& values, std::size_t block = 4096) {
  ChannelStats stats(1);
  for (std::size_t at = 0; at < values.size(); at += block) {
    const std::size_t n = std::min(block, values.size() - at);
    stats.add(block_of(std::vector<double>(values.begin() + static_cast<std::ptrdiff_t>(at),
                                           values.begin() + static_cast<std::ptrdiff_t>(at + n))));
  }
  return stats.summary(0);
}

/// `cycles` cycles of sin(2πk/spc + phase): the default start phase keeps samples off the
/// crests' exact symmetry. `shape` maps the ideal value to the recorded one.
template <typename Shape>
std::vector<double> sine(double spc, int cycles, Shape shape, double phase = 0.3) {
  std::vector<double> x;
  const auto n = static_cast<std::size_t>(spc * cycles);
  for (std::size_t k = 0; k < n; ++k) {
    x.push_back(shape(std::sin(2 * M_PI * static_cast<double>(k) / spc + phase)));
  }
  return x;
}

/// A start near the trough: every crest then lies inside the record with both flanks, as the
/// rule needs (the header: runs cut by the record's ends are not judged), so each cycle counts.
constexpr double kNearTrough = 0.3 - M_PI / 2;

/// A signed 8-bit recorder spanning exactly ±1: code round(127·v), read back as code/127.
double eight_bit(double v) {
  return std::round(127 * v) / 127;
}

/// The longest run of samples equal to the record's maximum.
std::size_t longest_run_at_max(const std::vector<double>& x) {
  const double top = *std::max_element(x.begin(), x.end());
  std::size_t best = 0, run = 0;
  for (const double v : x) {
    run = v == top ? run + 1 : 0;
    best = std::max(best, run);
  }
  return best;
}

TEST(ChannelStats, CountMinMaxMean) {
  // 0 + 5 + 5 + 0 + 1 = 11 over 5 samples: mean 2.2; min 0, max 5.
  const ChannelSummary s = summarise({0, 5, 5, 0, 1});
  EXPECT_EQ(s.count, 5u);
  EXPECT_EQ(s.min, 0.0);
  EXPECT_EQ(s.max, 5.0);
  EXPECT_DOUBLE_EQ(s.mean, 2.2);
}

TEST(ChannelStats, MeanKeepsSmallTermsNextToLargeOnes) {
  // 1e16 + 1 − 1e16: in double the naive sum loses the 1 (ulp of 1e16 is 2, IEEE 754 binary64);
  // compensated summation (Neumaier 1974) keeps it, so the mean is 1/3.
  const ChannelSummary s = summarise({1e16, 1.0, -1e16});
  EXPECT_DOUBLE_EQ(s.mean, 1.0 / 3.0);
}

TEST(ChannelStats, SamplesPerCycleFromTheCrossings) {
  // An integer number of samples per cycle puts every rising crossing the same number of
  // samples apart: the estimate is N exactly (the first cycle, while the running mean
  // settles, is outvoted by the median).
  for (const double spc : {50.0, 400.0, 1000.0}) {
    const ChannelSummary s = summarise(sine(spc, 20, [](double v) { return v; }));
    EXPECT_EQ(s.samples_per_cycle, spc);
  }
}

TEST(ChannelStats, EightBitQuantisedSineIsNotClipped) {
  // The false alarm of issue 9: an 8-bit recorder holds a slow sine on its top code while
  // 127·sin θ ≥ 126.5, |θ| ≤ acos(126.5/127) = 0.0888 rad, 28 samples of 1000 (analytic); the
  // old rule (3 equal samples at the extreme) called that clipped. The quantisation allowance
  // is 3·n_q + 2 with n_q = (N/π)·acos(1 − q/A), q = 1/127, A = 1: 122 samples at N = 1000,
  // 8.0 at N = 50 (clipping.cpp); the flank is a sine's, whose parabola peaks within a code of
  // the top. Neither side is clipped.
  for (const double spc : {50.0, 1000.0}) {
    const std::vector<double> x = sine(spc, 100, eight_bit);
    if (spc == 1000.0) {
      EXPECT_GE(longest_run_at_max(x), 27u);  // the plateau is there (28 ± 1 by sampling)
    }
    for (const std::size_t block : {std::size_t{4096}, std::size_t{1}}) {
      const ChannelSummary s = summarise(x, block);
      EXPECT_EQ(s.max, 1.0) << spc;
      EXPECT_EQ(s.clipped_high_samples, 0u) << spc;
      EXPECT_EQ(s.clipped_low_samples, 0u) << spc;
      EXPECT_EQ(s.clipped_share, 0.0) << spc;
      EXPECT_FALSE(s.clipping_suspected()) << spc;
    }
  }
}

// The share of a cycle a sine spends at or above c·A is (π − 2·asin c)/2π (elementary
// trigonometry): 20.48 % at c = 0.8. Sampling moves each of a crest's two ends by less than a
// sample: at most 2 samples a cycle, 2/N of the share.
double share_above(double c) {
  return (M_PI - 2 * std::asin(c)) / (2 * M_PI);
}

TEST(ChannelStats, SineClippedAtEightyPercentIsClippedHighOnly) {
  // Clipped at +0.8 before the recorder: runs of 0.2048·N samples (10 at N = 50, 41 at 200,
  // 205 at 1000), entered and left by flanks whose parabola peaks well above the level (near
  // 1.2 at N = 50), against the quantisation allowance 3·n_q + 2 (n_q = (N/π)·acos(1 − q/A),
  // A = 0.9): near 2 samples unquantised; at 8 bits, with q the smallest step the record
  // shows (1 or 2 codes of 1/127), 27–38 samples at N = 200 and 128–181 at 1000. Each of the
  // 100 crests is clipped; the untouched negative crests are not. (At 8 bits and N = 50 the
  // allowance, 8.3–10.9 samples, meets the 10-sample run: too close to call, not tested.)
  for (const double spc : {50.0, 200.0, 1000.0}) {
    for (const bool quantised : {false, true}) {
      if (quantised && spc == 50.0) continue;
      const auto clip = [quantised](double v) {
        const double c = std::min(v, 0.8);
        return quantised ? eight_bit(c) : c;
      };
      const ChannelSummary s = summarise(sine(spc, 100, clip, kNearTrough));
      SCOPED_TRACE(std::to_string(spc) + (quantised ? " 8-bit" : " float"));
      EXPECT_EQ(s.clipped_high_crests, 100u);
      // At 8 bits the level is round(101.6)/127 = 102/127, reached from 101.5/127 = 0.7992 on.
      const double level = quantised ? 101.5 / 127 : 0.8;
      EXPECT_NEAR(s.clipped_high_share, share_above(level), 2 / spc);
      EXPECT_EQ(s.clipped_low_samples, 0u);
      EXPECT_EQ(s.clipped_low_crests, 0u);
      EXPECT_DOUBLE_EQ(s.clipped_share, s.clipped_high_share);
      EXPECT_TRUE(s.clipping_suspected());
    }
  }
}

TEST(ChannelStats, ClippingAtTheMinimumIsCountedThere) {
  // The mirror image: a sine clipped at −0.8 is clipped low, with the same share.
  std::vector<double> x = sine(
      1000, 100, [](double v) { return eight_bit(std::min(v, 0.8)); }, kNearTrough);
  for (double& v : x) v = -v;
  const ChannelSummary s = summarise(x);
  EXPECT_EQ(s.clipped_low_crests, 100u);
  EXPECT_NEAR(s.clipped_low_share, share_above(101.5 / 127), 2.0 / 1000);
  EXPECT_EQ(s.clipped_high_samples, 0u);

  // Clipped at ±0.8: both sides clipped, each with that share, and the total is their sum.
  const ChannelSummary both = summarise(sine(
      1000, 100, [](double v) { return eight_bit(std::clamp(v, -0.8, 0.8)); }, kNearTrough));
  EXPECT_EQ(both.clipped_high_crests, 100u);
  // The record starts and ends inside a trough's run (at −0.955 and −0.957): those two are cut
  // and not judged, leaving 99 whole troughs.
  EXPECT_EQ(both.clipped_low_crests, 99u);
  EXPECT_NEAR(both.clipped_low_share, 0.99 * share_above(101.5 / 127), 2.0 / 1000);
  EXPECT_DOUBLE_EQ(both.clipped_share, both.clipped_high_share + both.clipped_low_share);
}

TEST(ChannelStats, BlockingDoesNotChangeTheResult) {
  // Runs and flanks continue across block boundaries: one sample per block, odd blocks and
  // one block give the same counts.
  const std::vector<double> x = sine(
      200, 20, [](double v) { return eight_bit(std::min(v, 0.8)); }, kNearTrough);
  const ChannelSummary whole = summarise(x, x.size());
  EXPECT_EQ(whole.clipped_high_crests, 20u);
  for (const std::size_t block : {std::size_t{1}, std::size_t{7}, std::size_t{333}}) {
    const ChannelSummary s = summarise(x, block);
    EXPECT_EQ(s.clipped_high_crests, whole.clipped_high_crests) << block;
    EXPECT_EQ(s.clipped_high_samples, whole.clipped_high_samples) << block;
    EXPECT_EQ(s.clipped_low_samples, whole.clipped_low_samples) << block;
  }
}

TEST(ChannelStats, SummaryMidwayLeavesTheStreamAsItWas) {
  // summary() judges the runs still waiting on copies: asking after every block must not
  // change the final answer.
  const std::vector<double> x = sine(
      50, 40, [](double v) { return std::min(v, 0.8); }, kNearTrough);
  ChannelStats asked(1);
  for (std::size_t at = 0; at < x.size(); at += 25) {
    asked.add(block_of(std::vector<double>(x.begin() + static_cast<std::ptrdiff_t>(at),
                                           x.begin() + static_cast<std::ptrdiff_t>(at + 25))));
    static_cast<void>(asked.summary(0));
    asked.add(block_of({}));  // an empty block changes nothing either
  }
  const ChannelSummary once = summarise(x);
  EXPECT_EQ(asked.summary(0).clipped_high_crests, once.clipped_high_crests);
  EXPECT_EQ(asked.summary(0).clipped_high_samples, once.clipped_high_samples);
  EXPECT_EQ(once.clipped_high_crests, 40u);
}

TEST(ChannelStats, NewExtremeDropsTheClippedRunsOfTheOldOne) {
  // 50 cycles clipped at 0.8, then 5 unclipped cycles of the same sine: the maximum becomes
  // the sine's own crest (a sample or two near 1.0), so nothing at the maximum is clipped any
  // more: clipping is judged at the record's extreme, where a recorder's rail would be.
  std::vector<double> x = sine(200, 50, [](double v) { return std::min(v, 0.8); });
  const std::vector<double> tail = sine(200, 5, [](double v) { return v; });
  x.insert(x.end(), tail.begin(), tail.end());
  const ChannelSummary s = summarise(x);
  EXPECT_GT(s.max, 0.99);
  EXPECT_EQ(s.clipped_high_samples, 0u);
  EXPECT_FALSE(s.clipping_suspected());
}

// A ±1 trapezoid of `spc` samples a cycle: ramps of `ramp` samples, flat levels the signal
// itself holds for spc/2 − ramp samples. `rounded` shapes each ramp as a half cosine (a
// band-limited edge that bends onto the level).
std::vector<double> trapezoid(double spc, double ramp, bool rounded, bool quantised) {
  std::vector<double> x;
  for (std::size_t k = 0; k < static_cast<std::size_t>(100 * spc); ++k) {
    const double t = std::fmod(static_cast<double>(k) + 17, spc);  // not starting on an edge
    const auto edge = [&](double u) { return rounded ? -std::cos(M_PI * u) : 2 * u - 1; };
    double v;
    if (t < ramp)
      v = edge(t / ramp);
    else if (t < spc / 2)
      v = 1;
    else if (t < spc / 2 + ramp)
      v = -edge((t - spc / 2) / ramp);
    else
      v = -1;
    x.push_back(quantised ? eight_bit(v) : v);
  }
  return x;
}

TEST(ChannelStats, LevelsTheSignalHoldsAreNotClipped) {
  // Flat tops of 160 samples at the record's extremes, far beyond any quantisation allowance,
  // but the signal holds them: a straight ramp runs into the level with no bend (its second
  // difference is within the ±2q rounding can make), a half-cosine edge bends onto it (its
  // parabola peaks about 1 % of A above the level, under the rule's 2 %; clipping.cpp), and a
  // square's edge jumps onto it (the flank sample before the run is not above the one before
  // it). None is clipped, at 8 bits or unquantised.
  for (const bool rounded : {false, true}) {
    for (const bool quantised : {false, true}) {
      const ChannelSummary s = summarise(trapezoid(400, 40, rounded, quantised));
      EXPECT_EQ(s.max, 1.0);
      EXPECT_EQ(s.clipped_share, 0.0) << rounded << quantised;
      EXPECT_FALSE(s.clipping_suspected()) << rounded << quantised;
    }
  }
  for (const bool quantised : {false, true}) {
    const ChannelSummary square = summarise(trapezoid(400, 1, false, quantised));
    EXPECT_EQ(square.clipped_share, 0.0) << quantised;
  }
}

TEST(ChannelStats, ConverterSwitchingLevelIsNotClipped) {
  // A converter's switched output as a recorder sees it: 0 or +1 (30 % duty) at 100 or 250
  // samples a cycle, each edge a first-order response of time constant τ = 2 samples (settled
  // to within an 8-bit code in τ·ln 255 = 11 samples), recorded at 8 bits. The level is held
  // for 19 or 64 samples, beyond the quantisation allowance, but the edge settles onto it:
  // the entering flank bends like a clipped sine's, the leaving one falls away from the level,
  // and their mean shows no crest beyond it. Each record ends inside a high level, where the
  // entering flank alone would call the last run clipped at 100 samples a cycle (measured):
  // such a run, cut by the record's end, is not judged. Not clipped at either level.
  for (const double spc : {100.0, 250.0}) {
    const double tau = 2, duty = 0.3;
    std::vector<double> x;
    double v = 0;
    for (std::size_t k = 0; k < static_cast<std::size_t>(100 * spc); ++k) {
      const double target = std::fmod(static_cast<double>(k) + 30, spc) < duty * spc ? 1.0 : 0.0;
      v += (target - v) * (1 - std::exp(-1 / tau));  // exact step response of a first-order lag
      x.push_back(std::round(255 * v) / 255);
    }
    ASSERT_EQ(x.back(), 1.0);  // the record ends on the high level
    const ChannelSummary s = summarise(x);
    EXPECT_EQ(s.max, 1.0);
    EXPECT_EQ(s.min, 0.0);
    EXPECT_EQ(s.clipped_share, 0.0) << spc;
    EXPECT_FALSE(s.clipping_suspected()) << spc;
  }
}

// A 16-bit recorder: code round(32768·v) limited to [−32768, 32767], read as code/32768.
double sixteen_bit(double v) {
  return std::clamp(std::round(32768 * v), -32768.0, 32767.0) / 32768;
}

TEST(ChannelStats, SamplesOnTheIntegerFullScaleAreClipped) {
  // 0.1 + g·sin with its crest at 32767.3 codes, g = 32767.3/32768 − 0.1: the crest rounds to
  // the top code 32767 while g·sin θ ≥ 32766.5/32768 − 0.1, |θ| ≤ √(2·0.8/(32768·g)) = 7.4 mrad,
  // 2 or 3 samples of 1000 a cycle (the trough, −0.8, is far from −1). A run of 2–3 samples at
  // a sine's crest is nothing the run rule calls clipped; on the file's full scale it is the
  // recorder's range reached.
  const double gain = 32767.3 / 32768 - 0.1;
  const std::vector<double> x =
      sine(1000, 100, [gain](double v) { return sixteen_bit(0.1 + gain * v); });
  const double top = 32767.0 / 32768;
  const auto on_top = static_cast<std::uint64_t>(std::count(x.begin(), x.end(), top));
  ASSERT_GE(on_top, 200u);  // every crest reaches the top code
  ASSERT_LE(longest_run_at_max(x), 3u);

  const ChannelSummary plain = summarise(x);
  EXPECT_EQ(plain.max, top);
  EXPECT_FALSE(plain.clipping_suspected());

  ChannelStats told(1);
  told.set_full_scale(0, -1.0, top);
  told.add(block_of(x));
  const ChannelSummary s = told.summary(0);
  EXPECT_TRUE(s.full_scale_high);
  EXPECT_FALSE(s.full_scale_low);
  EXPECT_EQ(s.clipped_high_samples, on_top);
  EXPECT_EQ(s.clipped_high_crests, 100u);
  EXPECT_EQ(s.clipped_low_samples, 0u);
  EXPECT_TRUE(s.clipping_suspected());
}

TEST(ChannelStats, ConstantRecordIsALevelUnlessOnTheFullScale) {
  // Four equal samples are a level the samples cannot tell from a rail: not clipped. On the
  // full scale they are clipped, and counted once although they are maximum and minimum.
  const ChannelSummary level = summarise({1, 1, 1, 1});
  EXPECT_EQ(level.clipped_share, 0.0);
  EXPECT_DOUBLE_EQ(level.mean, 1.0);
  ChannelStats stats(1);
  stats.set_full_scale(0, -1.0, 1.0);
  stats.add(block_of({1, 1, 1, 1}));
  const ChannelSummary rail = stats.summary(0);
  EXPECT_EQ(rail.clipped_high_samples, 4u);
  EXPECT_DOUBLE_EQ(rail.clipped_share, 1.0);
}

TEST(ChannelStats, ChannelsAreIndependent) {
  // Channel 1 a sine clipped at +0.8, channel 2 the 8-bit sine: only channel 1 is clipped, and
  // a full scale told for channel 2 does not reach channel 1.
  const std::vector<double> a = sine(
      200, 30, [](double v) { return eight_bit(std::min(v, 0.8)); }, kNearTrough);
  const std::vector<double> b = sine(200, 30, eight_bit);
  std::vector<double> both;
  for (std::size_t k = 0; k < a.size(); ++k) {
    both.push_back(a[k]);
    both.push_back(b[k]);
  }
  ChannelStats stats(2);
  stats.set_full_scale(1, -2.0, 2.0);
  stats.add(block_of(both, 2));
  EXPECT_EQ(stats.frames(), a.size());
  EXPECT_EQ(stats.summary(0).clipped_high_crests, 30u);
  EXPECT_FALSE(stats.summary(1).clipping_suspected());
  EXPECT_EQ(stats.summaries().size(), 2u);
  EXPECT_THROW(stats.set_full_scale(2, 0.0, 1.0), std::out_of_range);
}

TEST(ChannelStats, NothingAddedGivesAnEmptySummary) {
  ChannelStats stats(3);
  const ChannelSummary s = stats.summary(2);
  EXPECT_EQ(s.count, 0u);
  EXPECT_EQ(s.clipped_share, 0.0);
  EXPECT_THROW(static_cast<void>(stats.summary(3)), std::out_of_range);
}

TEST(ChannelStats, RejectsBlocksThatBreakThePreconditions) {
  ChannelStats stats(2);
  EXPECT_THROW(stats.add(block_of({1, 2, 3}, 1)), std::invalid_argument);  // wrong channel count
  EXPECT_THROW(stats.add(block_of({1, std::numeric_limits<double>::quiet_NaN()}, 2)),
               std::invalid_argument);
  EXPECT_THROW(stats.add(block_of({std::numeric_limits<double>::infinity(), 0}, 2)),
               std::invalid_argument);
  EXPECT_THROW(ChannelStats(0), std::invalid_argument);
}

}  // namespace
