// ChannelStats: count, extremes, mean and the clipping estimate, on short records whose answers
// are worked out by hand in the comments. The clipping rule under test (channel_stats.hpp):
// samples equal to the record's maximum (or minimum) that lie in runs of 3 or more.

#include "lopside/channel_stats.hpp"

#include <gtest/gtest.h>

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

ChannelSummary one_block(const std::vector<double>& values) {
  ChannelStats stats(1);
  stats.add(block_of(values));
  return stats.summary(0);
}

/// The same record fed one sample per block: every run then crosses block boundaries.
ChannelSummary sample_by_sample(const std::vector<double>& values) {
  ChannelStats stats(1);
  for (const double v : values) stats.add(block_of({v}));
  return stats.summary(0);
}

TEST(ChannelStats, CountMinMaxMean) {
  // 0 + 5 + 5 + 0 + 1 = 11 over 5 samples: mean 2.2; min 0, max 5.
  const ChannelSummary s = one_block({0, 5, 5, 0, 1});
  EXPECT_EQ(s.count, 5u);
  EXPECT_EQ(s.min, 0.0);
  EXPECT_EQ(s.max, 5.0);
  EXPECT_DOUBLE_EQ(s.mean, 2.2);
}

TEST(ChannelStats, RunOfTwoAtMaxDoesNotCount) {
  // The maximum 5 occurs twice in a row: a run of 2 is below the rule's 3, nothing clipped.
  // The minimum 0 occurs at samples 1 and 4, runs of 1: nothing clipped either.
  const ChannelSummary s = one_block({0, 5, 5, 0, 1});
  EXPECT_EQ(s.clipped_high_samples, 0u);
  EXPECT_EQ(s.clipped_low_samples, 0u);
  EXPECT_EQ(s.clipped_share, 0.0);
}

TEST(ChannelStats, RunOfThreeAtMaxCounts) {
  // 5 5 5 is a run of 3 at the maximum: 3 of 10 samples clipped high, share 0.3.
  // Mean: (0 + 15 + 0 + 1 + 2 + 3 + 4 + 1) / 10 = 2.6.
  const ChannelSummary s = one_block({0, 5, 5, 5, 0, 1, 2, 3, 4, 1});
  EXPECT_EQ(s.clipped_high_samples, 3u);
  EXPECT_DOUBLE_EQ(s.clipped_high_share, 0.3);
  EXPECT_EQ(s.clipped_low_samples, 0u);
  EXPECT_DOUBLE_EQ(s.clipped_share, 0.3);
  EXPECT_DOUBLE_EQ(s.mean, 2.6);
}

TEST(ChannelStats, LongAndSeparateRunsAddUp) {
  // Runs of 3 and 4 at the maximum 5 plus a run of 2 and an isolated 5: 3 + 4 = 7 of 14.
  const std::vector<double> v{5, 5, 5, 1, 5, 5, 5, 5, 1, 5, 5, 1, 5, 1};
  const ChannelSummary s = one_block(v);
  EXPECT_EQ(s.count, 14u);
  EXPECT_EQ(s.clipped_high_samples, 7u);
  EXPECT_DOUBLE_EQ(s.clipped_high_share, 0.5);
  // Minimum 1 at samples 4, 9, 12, 14: runs of 1 only.
  EXPECT_EQ(s.clipped_low_samples, 0u);
}

TEST(ChannelStats, RunsContinueAcrossBlockBoundaries) {
  // Blocks [1 9 9] and [9 9 2]: the run of 9s is 4 long across the boundary, 4 of 6 clipped.
  ChannelStats stats(1);
  stats.add(block_of({1, 9, 9}));
  stats.add(block_of({9, 9, 2}));
  const ChannelSummary s = stats.summary(0);
  EXPECT_EQ(s.count, 6u);
  EXPECT_EQ(s.clipped_high_samples, 4u);
  EXPECT_DOUBLE_EQ(s.clipped_high_share, 4.0 / 6.0);
  // Mean (1 + 36 + 2) / 6 = 6.5.
  EXPECT_DOUBLE_EQ(s.mean, 6.5);
}

TEST(ChannelStats, RunOfTwoPlusOneAcrossBoundaryReachesThree) {
  // [0 7 7] then [7 0]: the third 7 arrives in the second block and completes a run of 3.
  ChannelStats stats(1);
  stats.add(block_of({0, 7, 7}));
  EXPECT_EQ(stats.summary(0).clipped_high_samples, 0u);  // only a run of 2 so far
  stats.add(block_of({7, 0}));
  EXPECT_EQ(stats.summary(0).clipped_high_samples, 3u);
}

TEST(ChannelStats, OneSamplePerBlockMatchesHandCount) {
  // Same record as LongAndSeparateRunsAddUp: 7 clipped high whatever the blocking.
  const std::vector<double> v{5, 5, 5, 1, 5, 5, 5, 5, 1, 5, 5, 1, 5, 1};
  const ChannelSummary s = sample_by_sample(v);
  EXPECT_EQ(s.clipped_high_samples, 7u);
  EXPECT_EQ(s.count, 14u);
}

TEST(ChannelStats, EmptyBlocksChangeNothing) {
  // An empty block between 8 8 and 8 must not break the run: 3 clipped of 4.
  ChannelStats stats(1);
  stats.add(block_of({8, 8}));
  stats.add(block_of({}));
  stats.add(block_of({8, 3}));
  EXPECT_EQ(stats.summary(0).clipped_high_samples, 3u);
  EXPECT_EQ(stats.frames(), 4u);
}

TEST(ChannelStats, NewMaximumResetsTheCount) {
  // 5 5 5 5 was clipped (4) until 7 arrived; 7 7 is a run of 2, so nothing is clipped now.
  const ChannelSummary s = one_block({5, 5, 5, 5, 0, 7, 7, 0});
  EXPECT_EQ(s.max, 7.0);
  EXPECT_EQ(s.clipped_high_samples, 0u);
  // Minimum 0 at samples 5 and 8: runs of 1.
  EXPECT_EQ(s.clipped_low_samples, 0u);
}

TEST(ChannelStats, NewMaximumInsideARunStartsAFreshRun) {
  // 5 5 7 7 7 7: the 5s are not on the maximum; the four 7s are, in one run: 4 of 6.
  const ChannelSummary s = one_block({5, 5, 7, 7, 7, 7});
  EXPECT_EQ(s.clipped_high_samples, 4u);
  // 5 5 5 then 7 7 7: the old run of 3 is dropped, the new one counts: 3.
  EXPECT_EQ(one_block({5, 5, 5, 7, 7, 7}).clipped_high_samples, 3u);
  // Blocked as [5 5 5 7] [7 7]: the same 3.
  ChannelStats stats(1);
  stats.add(block_of({5, 5, 5, 7}));
  stats.add(block_of({7, 7}));
  EXPECT_EQ(stats.summary(0).clipped_high_samples, 3u);
}

TEST(ChannelStats, MinimumSideIsCountedSeparately) {
  // −3 four times at the start: 4 clipped low of 9; the maximum 2 appears twice (run of 2): 0.
  const ChannelSummary s = one_block({-3, -3, -3, -3, 0, 2, 2, 0, -1});
  EXPECT_EQ(s.min, -3.0);
  EXPECT_EQ(s.clipped_low_samples, 4u);
  EXPECT_DOUBLE_EQ(s.clipped_low_share, 4.0 / 9.0);
  EXPECT_EQ(s.clipped_high_samples, 0u);
  EXPECT_DOUBLE_EQ(s.clipped_share, 4.0 / 9.0);
  // A new minimum resets the low side the same way: −3 −3 −3 then −4 −4 → 0 clipped low.
  EXPECT_EQ(one_block({-3, -3, -3, -4, -4}).clipped_low_samples, 0u);
}

TEST(ChannelStats, BothSidesAndTotal) {
  // A clipped square: +4 three times (3 high), −4 four times (4 low), one 0: total 7 of 8.
  const ChannelSummary s = one_block({4, 4, 4, -4, -4, -4, -4, 0});
  EXPECT_EQ(s.clipped_high_samples, 3u);
  EXPECT_EQ(s.clipped_low_samples, 4u);
  EXPECT_DOUBLE_EQ(s.clipped_high_share, 3.0 / 8.0);
  EXPECT_DOUBLE_EQ(s.clipped_low_share, 4.0 / 8.0);
  EXPECT_DOUBLE_EQ(s.clipped_share, 7.0 / 8.0);
  EXPECT_TRUE(s.clipping_suspected());
}

TEST(ChannelStats, ConstantRecordIsCountedOnce) {
  // Four equal samples are the maximum and the minimum at once: total share 4/4, not 8/4.
  const ChannelSummary s = one_block({1, 1, 1, 1});
  EXPECT_EQ(s.clipped_high_samples, 4u);
  EXPECT_EQ(s.clipped_low_samples, 4u);
  EXPECT_DOUBLE_EQ(s.clipped_share, 1.0);
  EXPECT_DOUBLE_EQ(s.mean, 1.0);
}

TEST(ChannelStats, ChannelsAreIndependent) {
  // Two channels interleaved: channel 1 = 2 2 2 0 (3 high), channel 2 = 0 −1 −1 −1 (3 low).
  ChannelStats stats(2);
  stats.add(block_of({2, 0, 2, -1, 2, -1, 0, -1}, 2));
  const ChannelSummary a = stats.summary(0);
  const ChannelSummary b = stats.summary(1);
  EXPECT_EQ(stats.frames(), 4u);
  EXPECT_EQ(a.count, 4u);
  EXPECT_EQ(a.clipped_high_samples, 3u);
  EXPECT_EQ(a.clipped_low_samples, 0u);
  EXPECT_DOUBLE_EQ(a.mean, 1.5);  // (2 + 2 + 2 + 0) / 4
  EXPECT_EQ(b.clipped_high_samples, 0u);
  EXPECT_EQ(b.clipped_low_samples, 3u);
  EXPECT_DOUBLE_EQ(b.mean, -0.75);  // (0 − 1 − 1 − 1) / 4
  EXPECT_EQ(stats.summaries().size(), 2u);
}

TEST(ChannelStats, MeanKeepsSmallTermsNextToLargeOnes) {
  // 1e16 + 1 − 1e16: in double the naive sum loses the 1 (ulp of 1e16 is 2, IEEE 754 binary64);
  // compensated summation (Neumaier 1974) keeps it, so the mean is 1/3.
  const ChannelSummary s = one_block({1e16, 1.0, -1e16});
  EXPECT_DOUBLE_EQ(s.mean, 1.0 / 3.0);
}

TEST(ChannelStats, WarnThresholdSeparatesOnePercent) {
  // 3 clipped of 300 is exactly 1 % (the warning threshold kClipWarnShare); 3 of 301 is below.
  std::vector<double> v(300, 0.0);
  for (std::size_t i = 0; i < v.size(); ++i) v[i] = static_cast<double>(i % 7);  // max 6, isolated
  v[0] = v[1] = v[2] = 10.0;
  EXPECT_EQ(one_block(v).clipped_high_samples, 3u);
  EXPECT_TRUE(one_block(v).clipping_suspected());
  v.push_back(1.0);
  EXPECT_FALSE(one_block(v).clipping_suspected());
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
