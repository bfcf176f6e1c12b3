#pragma once
/// \file
/// A read-ahead stage: one thread reads (parses, converts) the next blocks of a source while
/// the caller measures the current one, so reading and measuring share the machine's cores.
///
/// Memory is bounded: kSlots blocks of at most `max_frames` frames, and of at most
/// kMaxValuesInFlight values together, are in flight. The source is
/// touched by the reading thread only, until `next()` has returned false (then `source()` may
/// be asked for its final info and warnings). An error the reader throws is rethrown by
/// `next()` at the block where it occurred, so the caller sees reading errors in order.

#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <exception>
#include <mutex>
#include <thread>

#include "lopside/sample_source.hpp"

namespace lopside {

class ReadAhead {
 public:
  /// Blocks in flight: one being measured, one being read, and up to six ready, so the reader
  /// runs on while the engine works through its look-ahead at once (CycleEngine acquisition).
  static constexpr std::size_t kSlots = 8;
  /// Values (all channels, all slots) in flight at most: 16 MiB of doubles. Blocks of many
  /// channels are asked for fewer frames, so the ring stays within it whatever the channel
  /// count (8 blocks of 2^20 values of a 1024-channel file took 64 MiB before).
  static constexpr std::size_t kMaxValuesInFlight = std::size_t{1} << 21;

  /// Starts reading at once. `source` must outlive this object.
  ReadAhead(SampleSource& source, std::size_t max_frames);
  /// Stops the reader (after the block it is reading) and joins it.
  ~ReadAhead();
  ReadAhead(const ReadAhead&) = delete;
  ReadAhead& operator=(const ReadAhead&) = delete;

  /// The next block in order; false at the end of the capture. Rethrows the reader's error.
  /// The block stays valid until the next call.
  bool next(const SampleBlock*& block);
  /// The source's progress when the block last returned was read (see SampleSource).
  double progress() const { return progress_; }

 private:
  void run();

  SampleSource& source_;
  std::size_t max_frames_;
  SampleBlock slots_[kSlots];
  double slot_progress_[kSlots] = {};
  std::mutex mutex_;
  std::condition_variable changed_;
  std::size_t read_count_ = 0;      // blocks the reader has filled
  std::size_t consumed_count_ = 0;  // blocks the caller has finished with
  bool ended_ = false;              // the reader saw the end (or an error)
  bool stop_ = false;               // the caller wants the reader gone
  bool holding_ = false;            // the caller holds slot (consumed_count_ % kSlots)
  // Each side, once it has had to wait, sleeps until half the ring has turned over, so that
  // the faster side is woken once per kSlots/2 blocks rather than once per block (a futex
  // wake per block cost 6 % of a measurement when the engine was the slower side).
  bool reader_waiting_ = false;
  std::size_t reader_wake_at_ = 0;  // consumed_count_ that wakes the waiting reader
  bool caller_waiting_ = false;
  std::size_t caller_wake_at_ = 0;  // read_count_ that wakes the waiting caller
  std::exception_ptr error_;
  double progress_ = -1.0;
  std::thread thread_;
};

}  // namespace lopside
