#include "lopside/dead_interval.hpp"

#include <algorithm>
#include <cmath>

namespace lopside {

DeadIntervalFinder::DeadIntervalFinder(double sample_rate_hz, double start_time_s,
                                       std::size_t current_channel, double current_zero_a,
                                       std::size_t stride)
    : dt_(1.0 / sample_rate_hz),
      start_s_(start_time_s),
      channel_(current_channel),
      zero_a_(current_zero_a),
      ring_(kRingFrames),
      counts_(kBins),
      stride_(stride > 0 ? stride : 1) {}

void DeadIntervalFinder::add_block(const SampleBlock& block) {
  constexpr std::size_t mask = kRingFrames - 1;
  for (std::size_t f = 0; f < block.frames; ++f)
    ring_[static_cast<std::size_t>(next_frame_ + f) & mask] = block.value(f, channel_) - zero_a_;
  next_frame_ += block.frames;
}

void DeadIntervalFinder::on_cycle(const CycleRecord& r) {
  if (seen_++ >= kFullCycles && seen_ % stride_ != 0) return;
  // The cycle's frames as the engine counts them (cycle_picture.cpp: ⌊x0⌋ + 1 … ⌊x1⌋), if all
  // are still in the ring.
  const double a = std::floor((r.start_s - start_s_) / dt_) + 1;
  const double b = std::floor((r.start_s + r.period_s - start_s_) / dt_);
  const double oldest =
      next_frame_ > kRingFrames ? static_cast<double>(next_frame_ - kRingFrames) : 0.0;
  if (!(a >= oldest) || !(b >= a + 7) || b >= static_cast<double>(next_frame_)) return;
  cycle_.clear();
  constexpr std::size_t mask = kRingFrames - 1;
  for (auto m = static_cast<std::uint64_t>(a); m <= static_cast<std::uint64_t>(b); ++m) {
    const double v = ring_[static_cast<std::size_t>(m) & mask];
    if (std::isfinite(v)) cycle_.push_back(v);
  }
  if (cycle_.size() < 8) return;
  ++examined_;
  const auto [lo_it, hi_it] = std::minmax_element(cycle_.begin(), cycle_.end());
  const double lo = *lo_it, hi = *hi_it, pp = hi - lo;
  if (!(pp > 0)) return;
  // The densest pair of neighbouring bins (each 2 % of p-p wide): the candidate rest level.
  std::fill(counts_.begin(), counts_.end(), 0u);
  const double scale = static_cast<double>(kBins) / pp;
  for (const double v : cycle_) {
    const auto k = std::min(static_cast<std::size_t>((v - lo) * scale), kBins - 1);
    ++counts_[k];
  }
  std::size_t best = 0;
  for (std::size_t k = 1; k + 1 < kBins; ++k) {
    if (counts_[k] + counts_[k + 1] > counts_[best] + counts_[best + 1]) best = k;
  }
  const double centre = lo + (static_cast<double>(best) + 1.0) / scale;
  const double half = kBandShare * pp;
  // The runs of samples inside the band. A lobe's first and last samples pass through it too
  // (and a lobe's foot rounds into the rest), so only the middle 60 % of each run long enough
  // to be a rest counts towards the level.
  double sum = 0;
  std::size_t at_rest = 0, used = 0, runs = 0;
  const std::size_t min_run = std::max<std::size_t>(2, cycle_.size() * 3 / 100);
  const auto close_run = [&](std::size_t begin, std::size_t end) {
    const std::size_t len = end - begin;
    if (len < min_run) return;
    ++runs;
    at_rest += len;
    const std::size_t trim = len / 5;
    for (std::size_t k = begin + trim; k < end - trim; ++k) {
      sum += cycle_[k];
      ++used;
    }
  };
  std::size_t begin = 0;
  bool inside = false;
  for (std::size_t k = 0; k < cycle_.size(); ++k) {
    const bool in = std::fabs(cycle_[k] - centre) <= half;
    if (in && !inside) begin = k;
    if (!in && inside) close_run(begin, k);
    inside = in;
  }
  if (inside) close_run(begin, cycle_.size());
  const double n = static_cast<double>(cycle_.size());
  const double level = used > 0 ? sum / static_cast<double>(used) : centre;
  const bool central = level > lo + kCentralShare * pp && level < hi - kCentralShare * pp;
  if (static_cast<double>(at_rest) < kMinRestShare * n || !central || runs < 2) return;
  ++with_;
  sum_share_ += static_cast<double>(at_rest) / n;
  levels_.add(level);
}

DeadLevel DeadIntervalFinder::finish() const {
  DeadLevel d;
  d.cycles_examined = examined_;
  d.cycles_with = with_;
  if (with_ > 0) {
    d.share_of_period = sum_share_ / static_cast<double>(with_);
    d.level_a.value = levels_.mean();
    const double se = levels_.standard_error();
    const double dof = levels_.degrees_of_freedom();
    d.level_a.coverage_k = dof >= 30 ? 2.0 : (dof >= 1 ? student_t95(dof) : 2.0);
    d.level_a.u95 = std::isfinite(se) ? d.level_a.coverage_k * se : 0.0;
  }
  if (examined_ == 0) {
    d.reason = "no whole cycle could be examined";
  } else if (with_ < 3 && 2 * with_ >= examined_) {
    d.reason = "the current rests between lobes in " + std::to_string(with_) + " of " +
               std::to_string(examined_) +
               " whole cycles examined, fewer than the three a rest level needs";
  } else if (with_ < 3 || 2 * with_ < examined_) {
    d.reason = "the current rests at one level in " + std::to_string(with_) + " of " +
               std::to_string(examined_) +
               " cycles examined: the discharge does not go out in each cycle";
  } else {
    d.found = true;
  }
  return d;
}

}  // namespace lopside
