#include "lopside/cycle_picture.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace lopside {

CyclePictureBuilder::CyclePictureBuilder(double sample_rate_hz, double start_time_s,
                                         std::size_t current_channel,
                                         std::optional<std::size_t> voltage_channel,
                                         double current_zero_a)
    : dt_(1.0 / sample_rate_hz),
      start_s_(start_time_s),
      current_channel_(current_channel),
      voltage_channel_(voltage_channel),
      zero_a_(current_zero_a),
      ring_i_(kRingFrames),
      ring_v_(voltage_channel ? kRingFrames : 0),
      sum_i_(kBins, 0.0),
      sum_v_(kBins, 0.0),
      count_(kBins, 0) {}

void CyclePictureBuilder::add_block(const SampleBlock& block) {
  constexpr std::size_t mask = kRingFrames - 1;
  static_assert((kRingFrames & mask) == 0);
  for (std::size_t f = 0; f < block.frames; ++f) {
    const std::size_t slot = static_cast<std::size_t>(next_frame_ + f) & mask;
    ring_i_[slot] = block.value(f, current_channel_) - zero_a_;
    if (voltage_channel_) ring_v_[slot] = block.value(f, *voltage_channel_);
  }
  next_frame_ += block.frames;
}

bool CyclePictureBuilder::frames_of(double from_s, double to_s, std::uint64_t& first,
                                    std::uint64_t& last) const {
  // Frame m is at start + m·dt; as in the engine, a cycle from x0 to x1 (fractional frame
  // indices) holds the frames ⌊x0⌋ + 1 … ⌊x1⌋ (a frame on a boundary ends a cycle).
  const double a = std::floor((from_s - start_s_) / dt_) + 1;
  const double b = std::floor((to_s - start_s_) / dt_);
  if (!(a >= 0) || !(b >= a)) return false;
  const double oldest =
      next_frame_ > kRingFrames ? static_cast<double>(next_frame_ - kRingFrames) : 0.0;
  if (a < oldest || b >= static_cast<double>(next_frame_)) return false;
  first = static_cast<std::uint64_t>(a);
  last = static_cast<std::uint64_t>(b);
  return true;
}

void CyclePictureBuilder::on_cycle(const CycleRecord& r) {
  last_.push_back(r);
  if (last_.size() > kStripCycles) last_.pop_front();
  std::uint64_t first = 0, last = 0;
  if (!(r.period_s > 0) || !frames_of(r.start_s, r.start_s + r.period_s, first, last)) return;
  constexpr std::size_t mask = kRingFrames - 1;
  const double bins_per_s = static_cast<double>(kBins) / r.period_s;
  for (std::uint64_t m = first; m <= last; ++m) {
    const std::size_t slot = static_cast<std::size_t>(m) & mask;
    const double i = ring_i_[slot];
    const double v = voltage_channel_ ? ring_v_[slot] : 0.0;
    if (!std::isfinite(i) || !std::isfinite(v)) continue;
    const double t = start_s_ + static_cast<double>(m) * dt_ - r.start_s;
    const auto bin = std::min(static_cast<std::size_t>(std::max(t * bins_per_s, 0.0)), kBins - 1);
    sum_i_[bin] += i;
    sum_v_[bin] += v;
    ++count_[bin];
  }
  ++cycles_;
  sum_period_s_ += r.period_s;
}

CyclePicture CyclePictureBuilder::finish() const {
  CyclePicture p;
  const double nan = std::numeric_limits<double>::quiet_NaN();
  p.cycles_averaged = cycles_;
  p.period_s = cycles_ > 0 ? sum_period_s_ / static_cast<double>(cycles_) : 0.0;
  // With few samples per cycle locked to the cycle (31 at 32 kHz and 1 MS/s), some of the 128
  // bins never get a sample: neighbouring bins merge in pairs until none is empty (or 16 are
  // left), so the curve has no holes; the bin count stays a power of two, hence even.
  std::vector<double> si = sum_i_, sv = sum_v_;
  std::vector<std::uint64_t> n = count_;
  while (n.size() > 16 && std::find(n.begin(), n.end(), 0) != n.end()) {
    const std::size_t half = n.size() / 2;
    for (std::size_t k = 0; k < half; ++k) {
      si[k] = si[2 * k] + si[2 * k + 1];
      sv[k] = sv[2 * k] + sv[2 * k + 1];
      n[k] = n[2 * k] + n[2 * k + 1];
    }
    si.resize(half);
    sv.resize(half);
    n.resize(half);
  }
  const std::size_t bins = n.size();
  for (std::size_t k = 0; k < bins; ++k) {
    p.phase.push_back((static_cast<double>(k) + 0.5) / static_cast<double>(bins));
    const double c = static_cast<double>(n[k]);
    p.current_a.push_back(n[k] > 0 ? si[k] / c : nan);
    if (voltage_channel_) p.voltage_v.push_back(n[k] > 0 ? sv[k] / c : nan);
  }

  // The strip: the latest cycles whose samples are all still in the ring, in time order.
  std::vector<const CycleRecord*> shown;
  for (auto it = last_.rbegin(); it != last_.rend(); ++it) {
    std::uint64_t first = 0, last = 0;
    if (!frames_of(it->start_s, it->start_s + it->period_s, first, last)) break;
    shown.insert(shown.begin(), &*it);
  }
  if (shown.empty()) return p;
  constexpr std::size_t mask = kRingFrames - 1;
  p.strip_start_s = shown.front()->start_s;
  p.strip_first_cycle = shown.front()->index;
  p.strip_cycles = shown.size();
  const CycleRecord* previous = nullptr;
  for (const CycleRecord* r : shown) {
    if (previous && r->index != previous->index + 1) {
      // Not consecutive (cycles left out between them): a break in the line.
      p.strip_time_s.push_back(nan);
      p.strip_current_a.push_back(nan);
      if (voltage_channel_) p.strip_voltage_v.push_back(nan);
    }
    if (!previous || r->index != previous->index + 1)
      p.strip_boundaries_s.push_back(r->start_s - p.strip_start_s);
    p.strip_boundaries_s.push_back(r->start_s + r->period_s - p.strip_start_s);
    std::uint64_t first = 0, last = 0;
    frames_of(r->start_s, r->start_s + r->period_s, first, last);
    for (std::uint64_t m = first; m <= last; ++m) {
      const std::size_t slot = static_cast<std::size_t>(m) & mask;
      p.strip_time_s.push_back(start_s_ + static_cast<double>(m) * dt_ - p.strip_start_s);
      p.strip_current_a.push_back(std::isfinite(ring_i_[slot]) ? ring_i_[slot] : nan);
      if (voltage_channel_)
        p.strip_voltage_v.push_back(std::isfinite(ring_v_[slot]) ? ring_v_[slot] : nan);
    }
    previous = r;
  }
  return p;
}

}  // namespace lopside
