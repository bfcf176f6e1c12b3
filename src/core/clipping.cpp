// The clipping rule (issue 9): the recorder's range was reached. The longest flat run at the
// crest, L samples, must be (1) too long for quantisation and (2) entered by a flank whose
// curvature says the crest would have gone on.
//
// (1) A sine of amplitude A and period T stays within q of its crest while
// A·cos(2πt/T) ≥ A − q, i.e. for |t| ≤ (T/2π)·acos(1 − q/A): a time (T/π)·acos(1 − q/A), about
// (T/π)·√(2q/A) by the series cos x = 1 − x²/2 + …. In samples, n_q = (N/π)·acos(1 − q/A) for
// N samples per cycle; a quantised crest sits on its top code for at most that (rounding keeps
// it there for the q/2 band, less). A run longer than 3·n_q + 2 is not quantisation: the factor
// 3 covers a non-sine crest up to three times as blunt, and the two samples the ends of a run
// can add. A is half the cycle's peak-to-peak (a clipped crest makes it smaller, so n_q larger:
// the test errs towards "not clipped").
//
// (2) The flank next to the run (three samples p0, p1, p2 at spacing h, p2 nearest the run) is
// fitted exactly by a parabola (Newton's divided differences, any numerical-analysis text): its
// second difference is k = p2 − 2·p1 + p0 and, when k < 0, its vertex lies at
// p1 + (p2 − p0)²/(8·|k|): where the flank's own curvature puts the crest. A run the signal
// really holds (a trapezoid, a square, a converter's level) is reached by a straight or
// steepening flank (k ≥ −2q, the most the rounding of three samples can make a second
// difference), by no flank at all (p2 ≤ p1: an edge, or samples already on a level), or by one
// that bends onto it (the vertex at the level). A clipped crest bends (k < −2q) and its vertex
// lies above the level by more than 2q and 2 % of A: cutting a sine's crest by δ·A moves the
// cycle mean by about 0.30·δ^1.5·A (the cut area (4/3)·δ·√(2δ)·A over 2π), 0.12 % of the RMS at
// δ = 2 %, below the README's 0.2 % "dc_negligible" limit; smaller cuts do not matter.
#include "lopside/clipping.hpp"

#include <algorithm>
#include <cmath>

namespace lopside {

void merge_flank(CrestFlank& into, const CrestFlank& other) noexcept {
  if (!other.valid) return;
  if (!into.valid) {
    into = other;
    return;
  }
  into.p0 = 0.5 * (into.p0 + other.p0);
  into.p1 = 0.5 * (into.p1 + other.p1);
  into.p2 = 0.5 * (into.p2 + other.p2);
}

// A twentieth of a cycle: on a sine the second difference over 2h is then large against
// quantisation and noise (≈ −A·(2πh/N)²·cos φ, −0.07·A at φ = 45° from the crest).
std::uint64_t flank_spacing(double samples_per_cycle) noexcept {
  if (!std::isfinite(samples_per_cycle)) return kMaxFlankSpacing;
  const double h = std::round(samples_per_cycle / 20);
  return static_cast<std::uint64_t>(std::clamp(h, 1.0, static_cast<double>(kMaxFlankSpacing)));
}

bool crest_clipped(const Crest& c) noexcept {
  const double a = c.half_swing, q = c.step;
  const CrestFlank& f = c.flank;
  if (c.run < 3 || !(a > 0) || !std::isfinite(q) || !(q > 0) || !f.valid || !(f.p2 > f.p1)) {
    return false;
  }
  const double n_q = c.samples_per_cycle / M_PI * std::acos(1 - std::min(q / a, 2.0));
  const double k = f.p2 - 2 * f.p1 + f.p0;
  if (!(static_cast<double>(c.run) > 3 * n_q + 2) || !(k < -2 * q)) return false;
  const double vertex = f.p1 + (f.p2 - f.p0) * (f.p2 - f.p0) / (8 * -k);
  return vertex - c.level > 2 * q + 0.02 * a;
}

}  // namespace lopside
