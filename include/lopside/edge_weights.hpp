#pragma once
/// \file
/// Integrals of a sampled, band-limited signal over intervals whose ends fall between samples.
///
/// The integral of the band-limited reconstruction g(t) = Σₙ gₙ·φ(t − n) over [a, b] (t in
/// samples) is Σₙ gₙ·[C(b − n) − C(a − n)], C the running integral of the kernel φ. Samples far
/// from both ends have weight exactly 1, so the integral is the plain sum of the samples inside
/// plus a correction at each end that involves only the 2·kEdgeHalfTaps samples around it:
///
///   ∫ₐᵇ g dt = Σ_{⌊a⌋ < n ≤ ⌊b⌋} gₙ + δ(b) − δ(a),   δ(x) = Σₙ gₙ·(C(x − n) − [n ≤ ⌊x⌋]).
///
/// Straight lines between samples instead (the trapezoid rule with interpolated ends) square a
/// straight line where the signal curves: at 8 samples per cycle that made the RMS 0.6 % low.

#include <array>
#include <cstddef>

namespace lopside {

/// Half the kernel's length in samples: δ(x) uses samples ⌊x⌋ − kEdgeHalfTaps + 1 … ⌊x⌋ +
/// kEdgeHalfTaps.
inline constexpr int kEdgeHalfTaps = 16;
inline constexpr std::size_t kEdgeTaps = 2 * static_cast<std::size_t>(kEdgeHalfTaps);

/// The correction weights c_j(p) = C(p − j) − [j ≤ 0] for j = −kEdgeHalfTaps + 1 … kEdgeHalfTaps
/// (array index j + kEdgeHalfTaps − 1), at the fractional position p = x − ⌊x⌋ ∈ [0, 1).
/// Σⱼ c_j(p) = p − ½ exactly, so a constant integrates exactly over any interval.
///
/// `half_taps` (2, 4, 8 or 16) shortens the kernel where fewer samples exist on one side (the
/// ends of a capture); the weights then fill the first 2·half_taps entries, for
/// j = −half_taps + 1 … half_taps. A shorter kernel keeps the same convention (interior samples
/// weigh 1, with nothing of the trapezoid rule's g′/12 end term), so a cycle may be measured
/// with two lengths at its two ends; only its pass band is narrower.
std::array<double, kEdgeTaps> edge_weights(double p, int half_taps = kEdgeHalfTaps);

/// The table edge_weights() interpolates, for callers that fold the weights into their own
/// sums: edge_weights(p, half)[j] == view.weight(view.at(p), j) for view = edge_table_view(half).
struct EdgeTableView {
  const std::array<double, kEdgeTaps>* rows;  ///< kPhases + 1 rows
  int phases;
  struct Position {
    const double* a;  ///< the row at or below p
    const double* b;  ///< the row above
    double f;         ///< p's share of the way from a to b
  };
  Position at(double p) const {
    const double x = (p < 0 ? 0.0 : (p > 1 ? 1.0 : p)) * phases;
    const int xi = static_cast<int>(x);
    const int q = xi < phases - 1 ? xi : phases - 1;
    const auto row = static_cast<std::size_t>(q);
    return {rows[row].data(), rows[row + 1].data(), x - q};
  }
  static double weight(const Position& at, std::size_t j) {
    return at.a[j] + at.f * (at.b[j] - at.a[j]);
  }
};
EdgeTableView edge_table_view(int half_taps);

/// The Kaiser-windowed sinc of half-length `half_taps` at u samples (0 for |u| ≥ half_taps),
/// β = 9: sin(πu)/(πu) · I₀(β√(1 − (u/K)²))/I₀(β) (Oppenheim & Schafer, 7.6). The harmonic
/// analysis resamples its blocks with the same kernel.
double kaiser_sinc(double u, int half_taps);

/// The kernel itself, φ(p − j) for j = −kEdgeHalfTaps + 1 … kEdgeHalfTaps (index j +
/// kEdgeHalfTaps − 1), normalised to unit sum: Σⱼ φ(p − j)·g_{⌊x⌋+j} is the band-limited value
/// at x = ⌊x⌋ + p. Tabulated at 1024 phases per sample and interpolated linearly: each weight
/// within 4e-7 of the exact normalised kernel.
std::array<double, kEdgeTaps> interpolation_weights(double p);

/// The same weights as two tabulated rows, row[j] + share·step[j], for callers that fold the
/// interpolation into their own sums (Σ row·y + share·Σ step·y) instead of forming the weights.
struct InterpolationRows {
  const double* row;
  const double* step;
  double share;
};
InterpolationRows interpolation_rows(double p);

/// The tables interpolation_rows() reads, for callers that look them up many times in a row:
/// interpolation_rows(p) == view.rows_at(p).
struct InterpolationTableView {
  const std::array<double, kEdgeTaps>* rows;   ///< kPhases + 1 rows
  const std::array<double, kEdgeTaps>* steps;  ///< kPhases rows
  int phases;
  InterpolationRows rows_at(double p) const {
    const double x = (p < 0 ? 0.0 : (p > 1 ? 1.0 : p)) * phases;
    const int xi = static_cast<int>(x);
    const auto q = static_cast<std::size_t>(xi < phases - 1 ? xi : phases - 1);
    return {rows[q].data(), steps[q].data(), x - static_cast<double>(q)};
  }
};
InterpolationTableView interpolation_table_view();

}  // namespace lopside
