#pragma once
/// \file
/// Dead intervals: where a discharge goes out in each cycle (a 50/60 Hz glow conducts only
/// part of each half-cycle, a spark gap likewise), the true current is zero. A probe that
/// blocks DC (an AC-coupled input, a CT with τ ≫ the period) shifts the whole record by minus
/// its DC, so the record's level in the dead intervals is −DC (issue 13, item 4). The same
/// level through a probe that passes DC is the probe's offset.
///
/// Each whole cycle the engine keeps is examined from a ring of the latest frames: its samples'
/// values are binned (50 bins between the cycle's extremes), the densest pair of neighbouring
/// bins is the candidate rest level, and the cycle has dead intervals when at least 15 % of its
/// samples lie within 2 % of its peak-to-peak of that level, the level lies in the middle 40 %
/// of the swing (a sine's densest values are at its crests, a square wave's too), and those
/// samples form at least two separate runs (one rest after each lobe). The rest level of such a
/// cycle is the mean of the middle 60 % of each run (a lobe's first and last samples cross the
/// band too); the record's level is the mean over the cycles, its u95 from their scatter by
/// batch means.

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/sample_source.hpp"
#include "lopside/uncertainty.hpp"

namespace lopside {

struct DeadLevel {
  /// Dead intervals in most whole cycles (at least half of them, and at least three).
  bool found = false;
  std::uint64_t cycles_examined = 0;
  std::uint64_t cycles_with = 0;
  double share_of_period = 0;  ///< mean share of a cycle's samples at rest (cycles with)
  Estimate level_a;            ///< the rest level [A] with its u95 (cycles with)
  std::string reason;          ///< why not found, as a clause
};

class DeadIntervalFinder {
 public:
  static constexpr std::size_t kRingFrames = std::size_t{1} << 18;
  static constexpr std::size_t kBins = 50;
  static constexpr double kBandShare = 0.02;     ///< half-width of the rest band, of p-p
  static constexpr double kMinRestShare = 0.15;  ///< samples at rest, of the cycle's
  static constexpr double kCentralShare = 0.30;  ///< the level must be this far from each extreme

  /// `current_zero_a`: subtracted from every current sample, as the engine does. `stride`:
  /// after the first kFullCycles cycles, only every stride-th cycle is examined (a rest level
  /// that only feeds a warning needs no more, and the examination costs the engine's thread
  /// about a tenth of its time when every cycle is read).
  DeadIntervalFinder(double sample_rate_hz, double start_time_s, std::size_t current_channel,
                     double current_zero_a, std::size_t stride = 1);
  static constexpr std::uint64_t kFullCycles = 256;
  void add_block(const SampleBlock& block);
  void on_cycle(const CycleRecord& record);
  DeadLevel finish() const;

 private:
  double dt_, start_s_;
  std::size_t channel_;
  double zero_a_;
  std::vector<double> ring_;
  std::uint64_t next_frame_ = 0;
  std::vector<double> cycle_;  // the cycle being examined (scratch)
  std::vector<std::uint32_t> counts_;
  std::size_t stride_ = 1;
  std::uint64_t seen_ = 0;
  std::uint64_t examined_ = 0, with_ = 0;
  double sum_share_ = 0;
  BatchMeans levels_;
};

}  // namespace lopside
