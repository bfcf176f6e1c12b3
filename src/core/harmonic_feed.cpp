// HarmonicFeed (harmonic_feed.hpp): a bounded queue of batches between the cycle engine and a
// HarmonicAnalyzer on its own thread.
#include "lopside/harmonic_feed.hpp"

#include <utility>

namespace lopside {

HarmonicFeed::HarmonicFeed(const HarmonicConfig& config)
    : analyzer_(config), thread_([this] { run(); }) {
  batch_.values.reserve(kBatchSamples);
}

HarmonicFeed::~HarmonicFeed() {
  {
    std::lock_guard<std::mutex> lock(mutex_);
    closing_ = true;
    queue_.clear();
  }
  changed_.notify_all();
  if (thread_.joinable()) thread_.join();
}

void HarmonicFeed::replay(HarmonicAnalyzer& h, const Batch& b) {
  std::size_t e = 0;
  for (std::size_t k = 0; k < b.values.size();) {
    for (; e < b.events.size() && b.events[e].before == k; ++e) {
      if (b.events[e].drop) {
        h.drop_partial_block();
      } else {
        h.on_boundary(b.events[e].boundary);
      }
    }
    // The samples up to the next event, at once.
    const std::size_t end = e < b.events.size() ? b.events[e].before : b.values.size();
    h.on_samples(b.first + k, b.values.data() + k, end - k);
    k = end;
  }
  // Events after the batch's last sample (the engine's last calls before finish()).
  for (; e < b.events.size(); ++e) {
    if (b.events[e].drop) {
      h.drop_partial_block();
    } else {
      h.on_boundary(b.events[e].boundary);
    }
  }
}

void HarmonicFeed::send() {
  if (batch_.values.empty() && batch_.events.empty()) return;
  Batch next;
  {
    std::unique_lock<std::mutex> lock(mutex_);
    changed_.wait(lock, [&] { return queue_.size() < kBatches || error_; });
    if (error_) {
      // The analyser has failed: nothing more is worth sending; finish() rethrows.
      batch_.values.clear();
      batch_.events.clear();
      return;
    }
    queue_.push_back(std::move(batch_));
    if (!spare_.empty()) {
      next = std::move(spare_.back());
      spare_.pop_back();
    }
  }
  changed_.notify_all();
  next.values.clear();
  next.events.clear();
  next.values.reserve(kBatchSamples);
  batch_ = std::move(next);
}

void HarmonicFeed::run() {
  for (;;) {
    Batch b;
    {
      std::unique_lock<std::mutex> lock(mutex_);
      changed_.wait(lock, [&] { return closing_ || !queue_.empty(); });
      if (queue_.empty()) return;  // closing, and everything sent is analysed
      b = std::move(queue_.front());
      queue_.pop_front();
    }
    std::exception_ptr error;
    try {
      replay(analyzer_, b);
    } catch (...) {
      error = std::current_exception();
    }
    {
      std::lock_guard<std::mutex> lock(mutex_);
      if (error) error_ = error;
      if (spare_.size() < 2) spare_.push_back(std::move(b));  // reused storage, bounded
    }
    changed_.notify_all();
    if (error) return;
  }
}

HarmonicSummary HarmonicFeed::finish() {
  send();
  {
    std::lock_guard<std::mutex> lock(mutex_);
    closing_ = true;
  }
  changed_.notify_all();
  thread_.join();
  if (error_) std::rethrow_exception(error_);
  return analyzer_.finish();
}

}  // namespace lopside
