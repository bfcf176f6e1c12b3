#pragma once
/// \file
/// Clipping means the recorder's range was reached: a flat run at a crest, too long for
/// quantisation, entered by a flank whose curvature says the crest would have gone further; or
/// a crest on the integer full scale of the recording. The rule is shared by `measure` (per
/// cycle) and `inspect` (per channel); README.md states it.

#include <cstdint>

namespace lopside {

/// Three samples of the flank next to a flat run, `h` samples apart, p2 nearest the run,
/// turned so that the run is at the top (negate the samples for a run at a minimum). Where
/// both flanks are known, the mean of the two.
struct CrestFlank {
  bool valid = false;
  double p0 = 0, p1 = 0, p2 = 0;
};

/// Averages `other` into `into` (both flanks of a clipped crest bend the same way, and their
/// mean halves the noise of the curvature).
void merge_flank(CrestFlank& into, const CrestFlank& other) noexcept;

/// The spacing of the flank samples for a signal of `samples_per_cycle` samples per cycle: a
/// twentieth of a cycle, at least 1 and at most kMaxFlankSpacing.
inline constexpr std::uint64_t kMaxFlankSpacing = 34;
std::uint64_t flank_spacing(double samples_per_cycle) noexcept;

/// What the clipping rule looks at for one crest.
struct Crest {
  std::uint64_t run = 0;         ///< length of the longest flat run at the crest [samples]
  CrestFlank flank;              ///< the flank next to that run
  double level = 0;              ///< the run's value, turned up as the flank is
  double half_swing = 0;         ///< half the peak-to-peak of the cycle (> 0)
  double step = 0;               ///< smallest non-zero step between samples (quantisation)
  double samples_per_cycle = 0;  ///< N
};

/// True when the crest is clipped by the rule in clipping.cpp (too long for quantisation and
/// bent towards a vertex beyond the level).
bool crest_clipped(const Crest& crest) noexcept;

}  // namespace lopside
