#pragma once
/// \file
/// Per-channel summary of a capture, built while streaming: count, extremes, mean, and the
/// samples where the recorder's range was reached (the clipping rule of clipping.hpp, applied
/// to the flat runs at the channel's extremes, and the integer full scale of the file). Memory
/// does not grow with the capture.

#include <array>
#include <cstddef>
#include <cstdint>
#include <optional>
#include <vector>

#include "lopside/clipping.hpp"
#include "lopside/sample_source.hpp"

namespace lopside {

/// What ChannelStats found for one channel. Shares are fractions (0…1) of `count`.
struct ChannelSummary {
  std::uint64_t count = 0;  ///< samples seen
  double min = 0.0;         ///< smallest value [SI unit of the channel]; 0 when count == 0
  double max = 0.0;         ///< largest value [SI unit of the channel]; 0 when count == 0
  double mean = 0.0;        ///< arithmetic mean [SI unit of the channel]; 0 when count == 0
  /// Flat runs at `max` that the clipping rule calls clipped (crest_clipped), or, when `max`
  /// is on the file's integer full scale, every run of samples there (one sample is a run).
  std::uint64_t clipped_high_crests = 0;
  std::uint64_t clipped_low_crests = 0;    ///< the same at `min`
  std::uint64_t clipped_high_samples = 0;  ///< samples in those runs at `max`
  std::uint64_t clipped_low_samples = 0;   ///< samples in those runs at `min`
  bool full_scale_high = false;            ///< `max` is on the integer full scale (set_full_scale)
  bool full_scale_low = false;             ///< `min` is on the integer full scale
  double clipped_high_share = 0.0;         ///< clipped_high_samples / count
  double clipped_low_share = 0.0;          ///< clipped_low_samples / count
  /// Samples in clipped runs on either side, over count. When min == max (a constant record)
  /// both sides are the same samples, which are then counted once.
  double clipped_share = 0.0;
  /// Samples per cycle the rule was judged with: the median of the last three intervals
  /// between rising crossings of the mean, or the record's length when it holds fewer than
  /// four crossings; 0 when count == 0.
  double samples_per_cycle = 0.0;

  /// True when the recorder's range was reached on either side: at least one crest the rule
  /// calls clipped, or a sample on the integer full scale. One is enough: the rule only passes
  /// crests cut by more than 2 % of the amplitude, and such a cut moves its cycle's mean by
  /// more than measure's "negligible" limit (clipping.cpp).
  bool clipping_suspected() const noexcept {
    return clipped_high_samples > 0 || clipped_low_samples > 0;
  }
};

/// Streaming accumulator over all channels of a capture.
///
/// Per channel and side it keeps the extreme seen so far and the flat runs of samples equal to
/// it. A run of three or more is judged by crest_clipped() once the samples per cycle N are
/// known and the 2h + 1 samples after it that its leaving flank needs have arrived
/// (h = flank_spacing(N)); until then, at most kMaxPendingRuns runs wait, each with the
/// 2·kMaxFlankSpacing + 1 samples before and after it that its flanks may need. A new extreme drops
/// the runs and counts of the old one. The inputs of the rule: samples per cycle from rising
/// crossings of the running mean through a hysteresis band of a quarter of the running half swing
/// (the cycle engine's band), q the smallest non-zero step between consecutive samples, and A half
/// the record's peak-to-peak so far. Only runs with both flanks inside the record are judged
/// (measure likewise judges whole cycles): a run closer than 2h + 1 samples to the record's start
/// or end is not counted, nor, in a summary taken midway, one whose leaving flank has not yet
/// arrived. summary() judges on copies, so it may be called at any time.
class ChannelStats {
 public:
  /// Runs waiting for their judgement, per channel and side; beyond it the oldest is judged
  /// with what is known. The samples per cycle are known from the fourth rising crossing on:
  /// sixteen holds the runs of the first four cycles with up to four flat runs at each crest.
  static constexpr std::size_t kMaxPendingRuns = 16;

  /// `channels`: number of channels of the blocks to come (≥ 1).
  explicit ChannelStats(std::size_t channels);

  /// The lowest and highest value the integer encoding of `channel` (0-based) can hold
  /// (ChannelInfo::full_scale_low/high): samples on them are counted as clipped whatever the
  /// run rule says. Unset means none. Call before add(); throws std::out_of_range for a
  /// channel that does not exist.
  void set_full_scale(std::size_t channel, std::optional<double> low, std::optional<double> high);

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
  /// Samples a flank needs on one side of a run: p0 lies 2h from p2, h ≤ kMaxFlankSpacing.
  static constexpr std::size_t kFlankSamples = 2 * kMaxFlankSpacing + 1;
  /// Recent samples kept per channel: a run is taken up at its third sample, when the
  /// kFlankSamples before its first one are 3 to kFlankSamples + 2 back. A power of two.
  static constexpr std::size_t kRing = 128;
  static_assert(kRing >= kFlankSamples + 3 && (kRing & (kRing - 1)) == 0);

  /// A flat run of three or more samples at a side's extreme, with the samples around it,
  /// turned (negated on the low side) so that the extreme is a maximum.
  struct Run {
    std::uint64_t length = 0;
    std::array<double, kFlankSamples> before{};  ///< before[kFlankSamples − 1] just before it
    std::size_t before_count = 0;                ///< how many of `before` exist (record start)
    std::array<double, kFlankSamples> after{};   ///< after[0] is the first sample off the run
    std::size_t after_count = 0;
  };

  /// One side (high or low) of one channel, in turned values.
  struct Side {
    double extreme = 0.0;
    std::uint64_t at_extreme = 0;  ///< samples equal to `extreme`
    std::uint64_t runs_at_extreme = 0;
    std::uint64_t clipped_runs = 0;  ///< runs judged clipped by the rule
    std::uint64_t clipped_samples = 0;
    bool in_run = false;  ///< the last sample was on `extreme`
    std::uint64_t run_length = 0;
    Run run;                   ///< the run in progress, once 3 long
    std::vector<Run> pending;  ///< ended, waiting for samples after them or for N
  };

  /// What the rule is judged with, as known at one moment.
  struct Context {
    double samples_per_cycle = 0;
    bool cycle_known = false;
    double half_swing = 0;
    double step = 0;
  };

  struct Accumulator {
    Side high;
    Side low;
    // Neumaier's compensated sum (Z. angew. Math. Mech. 54 (1974) 39–51) keeps the mean of
    // millions of samples accurate to a few ulp instead of losing digits as the sum grows.
    double sum = 0.0;
    double compensation = 0.0;
    double min = 0.0, max = 0.0;
    std::array<double, kRing> ring{};
    double min_step = 0.0;  ///< smallest non-zero |x[n] − x[n−1]|; 0 while none
    // Rising crossings of the running mean with hysteresis, for the samples per cycle.
    bool armed = false;
    std::uint64_t crossings = 0;
    std::uint64_t last_crossing = 0;
    std::array<std::uint64_t, 3> intervals{};  ///< the last three, oldest first
    std::optional<double> full_scale_low, full_scale_high;
  };

  Context context(const Accumulator& acc, bool at_end) const;
  static void feed(Side& side, double x, double sign, std::uint64_t n, const Accumulator& acc,
                   const Context& ctx);
  static bool judge(const Run& run, double level, const Context& ctx);
  static void settle(Side& side, const Context& ctx, bool at_end);

  std::vector<Accumulator> per_channel_;
  std::uint64_t frames_ = 0;
};

}  // namespace lopside
