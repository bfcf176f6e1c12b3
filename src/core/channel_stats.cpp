#include "lopside/channel_stats.hpp"

#include <cmath>
#include <stdexcept>
#include <string>

namespace lopside {
namespace {

/// Feeds one sample to one side. `beyond(x, e)` says x is a new extreme (x > e for the high
/// side, x < e for the low side).
template <typename Beyond, typename Run>
void feed_side(Run& side, double x, bool first, Beyond beyond) {
  if (first || beyond(x, side.extreme)) {
    side.extreme = x;
    side.run = 1;
    side.clipped = 0;
  } else if (x == side.extreme) {
    ++side.run;
    if (side.run == kClipRunMin) {
      side.clipped += kClipRunMin;  // the whole run now qualifies, its first samples included
    } else if (side.run > kClipRunMin) {
      ++side.clipped;
    }
  } else {
    side.run = 0;
  }
}

}  // namespace

ChannelStats::ChannelStats(std::size_t channels) : per_channel_(channels) {
  if (channels == 0) throw std::invalid_argument("ChannelStats: a capture needs a channel");
}

void ChannelStats::add(const SampleBlock& block) {
  const std::size_t n_channels = per_channel_.size();
  if (block.frames == 0) return;
  if (block.channels != n_channels || block.data.size() < block.frames * n_channels) {
    throw std::invalid_argument("ChannelStats::add: block has " + std::to_string(block.channels) +
                                " channels and " + std::to_string(block.data.size()) +
                                " values, expected " + std::to_string(n_channels) +
                                " channels of " + std::to_string(block.frames) + " frames");
  }
  for (std::size_t f = 0; f < block.frames; ++f) {
    const bool first = frames_ == 0;
    for (std::size_t c = 0; c < n_channels; ++c) {
      const double x = block.data[f * n_channels + c];
      if (!std::isfinite(x)) {
        throw std::invalid_argument(
            "ChannelStats::add: non-finite value in channel " + std::to_string(c + 1) +
            " at frame " + std::to_string(frames_ + 1) + " (the reader should have rejected it)");
      }
      Accumulator& acc = per_channel_[c];
      feed_side(acc.high, x, first, [](double v, double e) { return v > e; });
      feed_side(acc.low, x, first, [](double v, double e) { return v < e; });
      // Neumaier's variant of Kahan summation: the compensation also catches the case where
      // the new term is larger than the running sum.
      const double t = acc.sum + x;
      if (std::fabs(acc.sum) >= std::fabs(x)) {
        acc.compensation += (acc.sum - t) + x;
      } else {
        acc.compensation += (x - t) + acc.sum;
      }
      acc.sum = t;
    }
    ++frames_;
  }
}

ChannelSummary ChannelStats::summary(std::size_t channel) const {
  const Accumulator& acc = per_channel_.at(channel);
  ChannelSummary s;
  s.count = frames_;
  if (frames_ == 0) return s;
  const double n = static_cast<double>(frames_);
  s.min = acc.low.extreme;
  s.max = acc.high.extreme;
  s.mean = (acc.sum + acc.compensation) / n;
  // Rounding can put the mean a hair outside [min, max] only for a constant record; clamp so
  // the printed figures stay consistent.
  if (s.mean < s.min) s.mean = s.min;
  if (s.mean > s.max) s.mean = s.max;
  s.clipped_high_samples = acc.high.clipped;
  s.clipped_low_samples = acc.low.clipped;
  s.clipped_high_share = static_cast<double>(acc.high.clipped) / n;
  s.clipped_low_share = static_cast<double>(acc.low.clipped) / n;
  // With min == max every sample sits on both extremes; count it once.
  const std::uint64_t either =
      s.min == s.max ? acc.high.clipped : acc.high.clipped + acc.low.clipped;
  s.clipped_share = static_cast<double>(either) / n;
  return s;
}

std::vector<ChannelSummary> ChannelStats::summaries() const {
  std::vector<ChannelSummary> out;
  out.reserve(per_channel_.size());
  for (std::size_t c = 0; c < per_channel_.size(); ++c) out.push_back(summary(c));
  return out;
}

}  // namespace lopside
