#pragma once
/// \file
/// Runs a HarmonicAnalyzer on a thread of its own: the cycle engine hands it samples and
/// boundaries in batches, and the analyser replays them in exactly the order they were given,
/// so its results are those of calling it directly. On a two-core machine the harmonics then
/// cost the measurement almost nothing where the reader leaves a core free (WAV-family files).
///
/// Memory is bounded: at most kBatches batches of kBatchSamples samples are in flight.

#include <algorithm>
#include <condition_variable>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <exception>
#include <mutex>
#include <thread>
#include <vector>

#include "lopside/harmonics.hpp"

namespace lopside {

class HarmonicFeed {
 public:
  static constexpr std::size_t kBatchSamples = std::size_t{1} << 15;
  static constexpr std::size_t kBatches = 3;

  explicit HarmonicFeed(const HarmonicConfig& config);
  /// Stops the thread without finishing (after an error elsewhere).
  ~HarmonicFeed();
  HarmonicFeed(const HarmonicFeed&) = delete;
  HarmonicFeed& operator=(const HarmonicFeed&) = delete;

  /// As HarmonicAnalyzer's, in the same order.
  void on_sample(std::uint64_t index, double value) {
    if (batch_.values.empty()) {
      batch_.first = index;
    } else if (index != batch_.first + batch_.values.size()) {
      send();
      batch_.first = index;
    }
    batch_.values.push_back(value);
    if (batch_.values.size() >= kBatchSamples) send();
  }
  /// on_sample() for `count` consecutive samples from `first` on: the same batches.
  void on_samples(std::uint64_t first, const double* values, std::size_t count) {
    while (count > 0) {
      if (batch_.values.empty()) {
        batch_.first = first;
      } else if (first != batch_.first + batch_.values.size()) {
        send();
        batch_.first = first;
      }
      const std::size_t take = std::min(count, kBatchSamples - batch_.values.size());
      batch_.values.insert(batch_.values.end(), values, values + take);
      first += take;
      values += take;
      count -= take;
      if (batch_.values.size() >= kBatchSamples) send();
    }
  }
  void on_boundary(double index) { batch_.events.push_back({batch_.values.size(), index, false}); }
  void drop_partial_block() { batch_.events.push_back({batch_.values.size(), 0.0, true}); }
  /// Waits for every batch to be analysed and returns the analyser's summary; rethrows what
  /// the analyser threw.
  HarmonicSummary finish();

 private:
  struct Event {
    std::size_t before;  // the event comes before the sample at this position of the batch
    double boundary;
    bool drop;
  };
  struct Batch {
    std::uint64_t first = 0;
    std::vector<double> values;
    std::vector<Event> events;
  };
  void send();
  void run();
  static void replay(HarmonicAnalyzer& h, const Batch& b);

  HarmonicAnalyzer analyzer_;
  Batch batch_;
  std::deque<Batch> queue_;
  std::vector<Batch> spare_;  // storage of analysed batches, reused
  std::mutex mutex_;
  std::condition_variable changed_;
  bool closing_ = false;
  std::exception_ptr error_;
  std::thread thread_;
};

}  // namespace lopside
