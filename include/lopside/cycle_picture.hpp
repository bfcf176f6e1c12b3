#pragma once
/// \file
/// What a report draws of the waveform itself: the average cycle of the current (and the
/// voltage) over the phase of the cycle, and a strip of the last few real cycles. Both come
/// from the same samples the cycle engine measures, bounded in memory whatever the capture's
/// length: a ring of the latest kRingFrames frames, from which each whole cycle the engine
/// reports is binned by phase as it is found.
///
/// The average cycle is what shows an asymmetry at a glance: mirrored by half a period,
/// −i(φ + ½), it lies on i(φ) exactly when the current has half-wave symmetry,
/// f(t + T/2) = −f(t), the symmetry that rules out both a DC and even harmonics (DOMAIN.md).

#include <cstddef>
#include <cstdint>
#include <deque>
#include <optional>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/sample_source.hpp"

namespace lopside {

struct CyclePicture {
  /// Phase of each bin's centre as a share of the period, 0 … 1 from the cycle's start (the
  /// reference's rising crossing).
  std::vector<double> phase;
  /// Mean current in each phase bin over the averaged cycles [A]: kBins bins, or fewer (a
  /// power of two ≥ 16) when few samples per cycle locked to the cycle leave bins empty; NaN
  /// where even 16 bins leave one empty.
  std::vector<double> current_a;
  std::vector<double> voltage_v;  ///< the same for the voltage [V]; empty without one
  std::uint64_t cycles_averaged = 0;
  double period_s = 0;  ///< mean period of the averaged cycles [s]
  /// The last whole cycles as recorded (samples, not the average): time [s] from the first
  /// one's start, current [A], voltage [V] (empty without one); NaN between cycles that are
  /// not consecutive in the record.
  std::vector<double> strip_time_s, strip_current_a, strip_voltage_v;
  std::vector<double>
      strip_boundaries_s;               ///< the cycles' start and end boundaries [s], same origin
  double strip_start_s = 0;             ///< capture time of the strip's origin [s]
  std::uint64_t strip_first_cycle = 0;  ///< 0-based index of its first cycle
  std::size_t strip_cycles = 0;
};

class CyclePictureBuilder {
 public:
  static constexpr std::size_t kBins = 128;  ///< phase bins, a power of two (the mirror needs T/2)
  /// Frames kept: 4 MiB of current and voltage. Cycles whose samples have left the ring when
  /// the engine reports them (those held during its first look-ahead on long captures, or
  /// cycles longer than the ring) are not averaged; the count says how many were.
  static constexpr std::size_t kRingFrames = std::size_t{1} << 18;
  static constexpr std::size_t kStripCycles = 4;

  /// `current_zero_a`: the probe offset the engine subtracts (from --zero), taken off here too.
  CyclePictureBuilder(double sample_rate_hz, double start_time_s, std::size_t current_channel,
                      std::optional<std::size_t> voltage_channel, double current_zero_a);

  /// Every block, in order, as the engine is fed.
  void add_block(const SampleBlock& block);
  /// Every whole cycle the engine keeps, as it reports it.
  void on_cycle(const CycleRecord& record);
  /// The average and the strip of the last cycles still in the ring.
  CyclePicture finish() const;

 private:
  // The frames [first, last] of the cycle from from_s to to_s, if all are still in the ring.
  bool frames_of(double from_s, double to_s, std::uint64_t& first, std::uint64_t& last) const;

  double dt_, start_s_;
  std::size_t current_channel_;
  std::optional<std::size_t> voltage_channel_;
  double zero_a_;
  std::vector<double> ring_i_, ring_v_;
  std::uint64_t next_frame_ = 0;  // global index of the next frame to enter the ring
  std::vector<double> sum_i_, sum_v_;
  std::vector<std::uint64_t> count_;
  std::uint64_t cycles_ = 0;
  double sum_period_s_ = 0;
  std::deque<CycleRecord> last_;  // the last kStripCycles cycles reported
};

}  // namespace lopside
