// Read-ahead (read_ahead.hpp): a ring of kSlots blocks between one reading thread and the
// measuring caller. std::thread and one mutex are all a two-stage pipeline needs; the blocks
// are large (kBlockFrames), so the lock is taken a few hundred times per second at most.
#include "lopside/read_ahead.hpp"

#include <algorithm>

namespace lopside {

namespace {

std::size_t frames_per_slot(const SampleSource& source, std::size_t max_frames) {
  const std::size_t channels = std::max<std::size_t>(1, source.info().channels.size());
  const std::size_t budget = ReadAhead::kMaxValuesInFlight / ReadAhead::kSlots / channels;
  return std::max<std::size_t>(1, std::min(max_frames, budget));
}

}  // namespace

ReadAhead::ReadAhead(SampleSource& source, std::size_t max_frames)
    : source_(source),
      max_frames_(frames_per_slot(source, max_frames)),
      thread_([this] { run(); }) {}

ReadAhead::~ReadAhead() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    stop_ = true;
  }
  changed_.notify_all();
  thread_.join();
}

void ReadAhead::run() {
  for (std::size_t n = 0;; ++n) {
    {
      // Wait for a free slot: the caller's block and the ready ones stay untouched.
      std::unique_lock<std::mutex> lock(mutex_);
      if (!stop_ && n >= consumed_count_ + kSlots) {
        reader_waiting_ = true;
        reader_wake_at_ = n + 1 + kSlots / 2 - kSlots;  // half the slots free
        changed_.wait(lock, [&] { return stop_ || consumed_count_ >= reader_wake_at_; });
        reader_waiting_ = false;
      }
      if (stop_) return;
    }
    SampleBlock& block = slots_[n % kSlots];
    std::size_t got = 0;
    std::exception_ptr error;
    try {
      got = source_.read(block, max_frames_);
      slot_progress_[n % kSlots] = source_.progress();
    } catch (...) {
      error = std::current_exception();
    }
    bool wake = false;
    {
      std::lock_guard<std::mutex> lock(mutex_);
      if (error) {
        error_ = error;
        ended_ = true;
      } else if (got == 0) {
        ended_ = true;
      } else {
        ++read_count_;
      }
      wake = caller_waiting_ && (ended_ || read_count_ >= caller_wake_at_);
    }
    if (wake) changed_.notify_all();
    if (error || got == 0) return;
  }
}

bool ReadAhead::next(const SampleBlock*& block) {
  std::unique_lock<std::mutex> lock(mutex_);
  if (holding_) {
    ++consumed_count_;
    holding_ = false;
    if (reader_waiting_ && consumed_count_ >= reader_wake_at_) changed_.notify_all();
  }
  if (consumed_count_ >= read_count_ && !ended_) {
    caller_waiting_ = true;
    caller_wake_at_ = consumed_count_ + kSlots / 2;
    changed_.wait(lock, [&] { return read_count_ >= caller_wake_at_ || ended_; });
    caller_waiting_ = false;
  }
  if (consumed_count_ < read_count_) {
    holding_ = true;
    block = &slots_[consumed_count_ % kSlots];
    progress_ = slot_progress_[consumed_count_ % kSlots];
    return true;
  }
  if (error_) {
    std::exception_ptr e = error_;
    error_ = nullptr;
    std::rethrow_exception(e);
  }
  return false;
}

}  // namespace lopside
