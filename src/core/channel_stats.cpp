// ChannelStats: extremes, mean, and the clipping rule of clipping.cpp applied per channel to
// the flat runs at the record's extremes, in one pass with a fixed amount of state per channel.
#include "lopside/channel_stats.hpp"

#include <algorithm>
#include <cmath>
#include <stdexcept>
#include <string>

namespace lopside {
namespace {

// The hysteresis band around the running mean, as a share of the running half swing: the cycle
// engine's kBandShare (cycle_engine.cpp gives the reasons: clear of white noise up to 3 % of
// peak rms and of a DC offset up to 30 % of peak).
constexpr double kBandShare = 0.25;

// Crossings before the samples per cycle count as known: the median of the last three
// intervals then outvotes one interval spoiled by the running mean and swing still settling
// over the first cycle.
constexpr std::uint64_t kCrossingsKnown = 4;

double median_of_three(const std::array<std::uint64_t, 3>& v) {
  const auto a = static_cast<double>(v[0]), b = static_cast<double>(v[1]),
             c = static_cast<double>(v[2]);
  return std::max(std::min(a, b), std::min(std::max(a, b), c));
}

}  // namespace

ChannelStats::ChannelStats(std::size_t channels) : per_channel_(channels) {
  if (channels == 0) throw std::invalid_argument("ChannelStats: a capture needs a channel");
}

void ChannelStats::set_full_scale(std::size_t channel, std::optional<double> low,
                                  std::optional<double> high) {
  Accumulator& acc = per_channel_.at(channel);
  acc.full_scale_low = low;
  acc.full_scale_high = high;
}

ChannelStats::Context ChannelStats::context(const Accumulator& acc, bool at_end) const {
  Context ctx;
  ctx.half_swing = 0.5 * (acc.max - acc.min);
  ctx.step = acc.min_step;
  if (acc.crossings >= kCrossingsKnown) {
    ctx.samples_per_cycle = median_of_three(acc.intervals);
    ctx.cycle_known = true;
  } else if (at_end) {
    // Fewer than four crossings: the record is about three cycles or less (or not periodic).
    // Its length then stands for the cycle; a longer N only raises the quantisation allowance,
    // so a record of one or two cycles errs towards "not clipped".
    ctx.samples_per_cycle = static_cast<double>(frames_);
  }
  return ctx;
}

// A run is judged on both its flanks, averaged (merge_flank), as measure judges the crests of
// whole cycles. A run cut by the record's start or end has one flank only, and one flank alone
// misjudges a level the signal settles onto: a first-order edge bends onto its level just as a
// clipped sine's flank bends towards its lost crest (an 8-bit edge of τ = 2 samples at 100
// samples a cycle, measured), and only the flank leaving the level, which falls away from it,
// tells them apart. Like measure's partial cycles, such runs are not judged.
bool ChannelStats::judge(const Run& run, double level, const Context& ctx) {
  const std::uint64_t h = flank_spacing(ctx.samples_per_cycle);
  const std::size_t need = static_cast<std::size_t>(2 * h + 1);
  if (run.before_count < need || run.after_count < need) return false;
  const std::size_t last = kFlankSamples - 1;  // the sample just before the run
  CrestFlank f;
  f.valid = true;
  f.p2 = run.before[last];
  f.p1 = run.before[last - h];
  f.p0 = run.before[last - 2 * h];
  CrestFlank leaving;
  leaving.valid = true;
  leaving.p2 = run.after[0];
  leaving.p1 = run.after[h];
  leaving.p0 = run.after[2 * h];
  merge_flank(f, leaving);
  return crest_clipped(
      Crest{run.length, f, level, ctx.half_swing, ctx.step, ctx.samples_per_cycle});
}

// Judges the waiting runs that can be judged: all of them at the end of the record, otherwise
// those whose leaving flank is complete once N is known.
void ChannelStats::settle(Side& side, const Context& ctx, bool at_end) {
  if (!at_end && !ctx.cycle_known) return;
  const std::size_t need = static_cast<std::size_t>(2 * flank_spacing(ctx.samples_per_cycle) + 1);
  auto keep = side.pending.begin();
  for (auto it = side.pending.begin(); it != side.pending.end(); ++it) {
    if (!at_end && it->after_count < need) {
      if (keep != it) *keep = std::move(*it);
      ++keep;
      continue;
    }
    if (judge(*it, side.extreme, ctx)) {
      ++side.clipped_runs;
      side.clipped_samples += it->length;
    }
  }
  side.pending.erase(keep, side.pending.end());
}

// One sample `x`, turned by `sign` (−1 on the low side), at index `n`, to one side. The ring of
// `acc` holds the samples before n, not yet x.
void ChannelStats::feed(Side& side, double x, double sign, std::uint64_t n, const Accumulator& acc,
                        const Context& ctx) {
  if (n == 0 || x > side.extreme) {
    // A new extreme: samples on the old one are no longer on the extreme.
    side.extreme = x;
    side.at_extreme = 1;
    side.runs_at_extreme = 1;
    side.clipped_runs = 0;
    side.clipped_samples = 0;
    side.pending.clear();
    side.in_run = true;
    side.run_length = 1;
  } else if (x == side.extreme) {
    ++side.at_extreme;
    if (side.in_run) {
      if (++side.run_length == 3) {
        // Three long, the run can be clipped: keep the samples before its first one, n − 2.
        const std::uint64_t start = n - 2;
        side.run.before_count = static_cast<std::size_t>(
            std::min<std::uint64_t>(start, static_cast<std::uint64_t>(kFlankSamples)));
        for (std::size_t k = 0; k < side.run.before_count; ++k) {
          const std::uint64_t at = start - 1 - k;  // ring index of before[kFlankSamples − 1 − k]
          side.run.before[kFlankSamples - 1 - k] = sign * acc.ring[at & (kRing - 1)];
        }
      }
    } else {
      side.in_run = true;
      side.run_length = 1;
      ++side.runs_at_extreme;
    }
  } else if (side.in_run) {
    side.in_run = false;
    if (side.run_length >= 3) {
      side.run.length = side.run_length;
      side.run.after_count = 0;
      if (side.pending.size() >= kMaxPendingRuns) {
        // Full (the samples per cycle still unknown after many runs): the oldest is judged
        // now, with what is known, to keep memory bounded.
        Context now = ctx;
        if (!now.cycle_known) now.samples_per_cycle = static_cast<double>(n);
        if (judge(side.pending.front(), side.extreme, now)) {
          ++side.clipped_runs;
          side.clipped_samples += side.pending.front().length;
        }
        side.pending.erase(side.pending.begin());
      }
      side.pending.push_back(side.run);
    }
  }
  for (Run& r : side.pending) {
    if (r.after_count < kFlankSamples) r.after[r.after_count++] = x;
  }
  if (!side.pending.empty()) settle(side, ctx, false);
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
    const std::uint64_t n = frames_;
    for (std::size_t c = 0; c < n_channels; ++c) {
      const double x = block.data[f * n_channels + c];
      if (!std::isfinite(x)) {
        throw std::invalid_argument("ChannelStats::add: non-finite value in channel " +
                                    std::to_string(c + 1) + " at frame " + std::to_string(n + 1) +
                                    " (the reader should have rejected it)");
      }
      Accumulator& acc = per_channel_[c];
      if (n == 0) {
        acc.min = acc.max = x;
      } else {
        acc.min = std::min(acc.min, x);
        acc.max = std::max(acc.max, x);
        const double step = std::fabs(x - acc.ring[(n - 1) & (kRing - 1)]);
        if (step > 0 && (acc.min_step == 0 || step < acc.min_step)) acc.min_step = step;
      }
      // Neumaier's variant of Kahan summation: the compensation also catches the case where
      // the new term is larger than the running sum.
      const double t = acc.sum + x;
      if (std::fabs(acc.sum) >= std::fabs(x)) {
        acc.compensation += (acc.sum - t) + x;
      } else {
        acc.compensation += (x - t) + acc.sum;
      }
      acc.sum = t;
      // Rising crossings of the running mean, armed below and triggered above the band.
      const double level = (acc.sum + acc.compensation) / static_cast<double>(n + 1);
      const double band = kBandShare * 0.5 * (acc.max - acc.min);
      if (x < level - band) acc.armed = true;
      if (acc.armed && x > level + band) {
        acc.armed = false;
        if (acc.crossings > 0) {
          acc.intervals[0] = acc.intervals[1];
          acc.intervals[1] = acc.intervals[2];
          acc.intervals[2] = n - acc.last_crossing;
        }
        ++acc.crossings;
        acc.last_crossing = n;
      }
      const Context ctx = context(acc, false);
      feed(acc.high, x, +1.0, n, acc, ctx);
      feed(acc.low, -x, -1.0, n, acc, ctx);
      acc.ring[n & (kRing - 1)] = x;
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
  s.min = acc.min;
  s.max = acc.max;
  s.mean = (acc.sum + acc.compensation) / n;
  // Rounding can put the mean a hair outside [min, max] only for a constant record; clamp so
  // the printed figures stay consistent.
  if (s.mean < s.min) s.mean = s.min;
  if (s.mean > s.max) s.mean = s.max;

  // The runs still waiting are judged on copies, so that adding more samples later goes on
  // from the state before this call.
  const Context ctx = context(acc, true);
  s.samples_per_cycle = ctx.samples_per_cycle;
  Side high = acc.high;
  Side low = acc.low;
  settle(high, ctx, true);
  settle(low, ctx, true);
  // A sample on the integer full scale is the recorder's range reached, whatever its run: it
  // cannot lie beyond that code, so it sits on the extreme, and every sample there counts.
  if (acc.full_scale_high && acc.max >= *acc.full_scale_high) {
    s.full_scale_high = true;
    s.clipped_high_crests = high.runs_at_extreme;
    s.clipped_high_samples = high.at_extreme;
  } else {
    s.clipped_high_crests = high.clipped_runs;
    s.clipped_high_samples = high.clipped_samples;
  }
  if (acc.full_scale_low && acc.min <= *acc.full_scale_low) {
    s.full_scale_low = true;
    s.clipped_low_crests = low.runs_at_extreme;
    s.clipped_low_samples = low.at_extreme;
  } else {
    s.clipped_low_crests = low.clipped_runs;
    s.clipped_low_samples = low.clipped_samples;
  }
  s.clipped_high_share = static_cast<double>(s.clipped_high_samples) / n;
  s.clipped_low_share = static_cast<double>(s.clipped_low_samples) / n;
  // With min == max every sample sits on both extremes; count it once.
  const std::uint64_t either = s.min == s.max
                                   ? std::max(s.clipped_high_samples, s.clipped_low_samples)
                                   : s.clipped_high_samples + s.clipped_low_samples;
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
