#pragma once
/// \file
/// Per-channel summary of a capture, built while streaming: count, extremes, mean, and an
/// estimate of how much of the record sits flat on an extreme (the sign of a recorder that
/// clipped). Memory does not grow with the capture.

#include <cstddef>
#include <cstdint>
#include <vector>

#include "lopside/sample_source.hpp"

namespace lopside {

/// Runs of at least this many consecutive samples on an extreme value count as clipped. Two
/// equal neighbours at a peak happen by chance in any quantised record; three are rarer and
/// a clipped recorder holds its rail for many samples.
inline constexpr std::uint64_t kClipRunMin = 3;

/// Share of one side's samples in clipped runs above which a channel is reported as possibly
/// clipped. A sine quantised to 16 bits and heavily oversampled keeps about 0.25 % of its
/// samples on its top code (samples within one step of the peak: θ < sqrt(2/32768) rad on each
/// side of it, 2θ/2π of the period), so the threshold sits above that.
inline constexpr double kClipWarnShare = 0.01;

/// What ChannelStats found for one channel. Shares are fractions (0…1) of `count`.
struct ChannelSummary {
  std::uint64_t count = 0;  ///< samples seen
  double min = 0.0;         ///< smallest value [SI unit of the channel]; 0 when count == 0
  double max = 0.0;         ///< largest value [SI unit of the channel]; 0 when count == 0
  double mean = 0.0;        ///< arithmetic mean [SI unit of the channel]; 0 when count == 0
  std::uint64_t clipped_high_samples = 0;  ///< samples equal to `max` in runs ≥ kClipRunMin
  std::uint64_t clipped_low_samples = 0;   ///< samples equal to `min` in runs ≥ kClipRunMin
  double clipped_high_share = 0.0;         ///< clipped_high_samples / count
  double clipped_low_share = 0.0;          ///< clipped_low_samples / count
  /// Samples on either extreme in such runs, over count. When min == max (a constant record)
  /// both sides are the same samples, which are then counted once.
  double clipped_share = 0.0;

  /// True when either side holds at least kClipWarnShare of the samples in clipped runs.
  bool clipping_suspected() const noexcept {
    return clipped_high_share >= kClipWarnShare || clipped_low_share >= kClipWarnShare;
  }
};

/// Streaming accumulator over all channels of a capture.
///
/// The clipping count is exact without buffering: for each side it keeps the extreme seen so
/// far, the length of the current run of samples equal to it, and how many samples equal to it
/// lie in runs of kClipRunMin or more. A run reaching kClipRunMin adds kClipRunMin, each further
/// sample adds 1; a new extreme resets the count, because samples equal to the old extreme are
/// no longer on the extreme. Runs continue across block boundaries.
class ChannelStats {
 public:
  /// `channels`: number of channels of the blocks to come (≥ 1).
  explicit ChannelStats(std::size_t channels);

  /// Adds every frame of `block`. Preconditions: block.channels equals the count given at
  /// construction and every value is finite (readers reject NaN and infinity); otherwise
  /// throws std::invalid_argument, since that is a bug upstream, not bad input.
  void add(const SampleBlock& block);

  std::size_t channels() const noexcept { return per_channel_.size(); }
  /// Frames seen so far (the same for every channel).
  std::uint64_t frames() const noexcept { return frames_; }

  /// Summary of channel `channel` (0-based) over everything added so far.
  ChannelSummary summary(std::size_t channel) const;
  /// Summaries of all channels, in channel order.
  std::vector<ChannelSummary> summaries() const;

 private:
  /// One side (high or low) of one channel.
  struct ExtremeRun {
    double extreme = 0.0;
    std::uint64_t run = 0;      ///< length of the current run of samples equal to `extreme`
    std::uint64_t clipped = 0;  ///< samples equal to `extreme` in runs ≥ kClipRunMin
  };
  struct Accumulator {
    ExtremeRun high;
    ExtremeRun low;
    // Neumaier's compensated sum (Z. angew. Math. Mech. 54 (1974) 39–51) keeps the mean of
    // millions of samples accurate to a few ulp instead of losing digits as the sum grows.
    double sum = 0.0;
    double compensation = 0.0;
  };

  std::vector<Accumulator> per_channel_;
  std::uint64_t frames_ = 0;
};

}  // namespace lopside
