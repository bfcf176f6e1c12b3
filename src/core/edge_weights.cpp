// The kernel is a Kaiser-windowed sinc, β = 9, 32 taps (Oppenheim & Schafer, Discrete-Time
// Signal Processing, 3rd ed., 7.6): pass band flat to about 0.8 of Nyquist, so a signal of six
// samples per cycle and its square (content at a third of the sampling rate, 0.67 of Nyquist)
// are both reconstructed; the same kernel family resamples the harmonic blocks.
//
// C is tabulated once at kPhases steps per sample by Simpson's rule on each step, normalised so
// that C(K) = 1; between tabulated phases the weights are interpolated linearly (C is smooth:
// the error is below 1e-7 of a sample's weight).
#include "lopside/edge_weights.hpp"

#include <algorithm>
#include <cmath>
#include <vector>

namespace lopside {
namespace {

constexpr int kPhases = 1024;
constexpr double kBeta = 9.0;

struct Table {
  std::vector<std::array<double, kEdgeTaps>> rows;  // kPhases + 1 rows, p = q / kPhases
  explicit Table(int half) : rows(kPhases + 1) {
    const auto kernel = [half](double u) { return kaiser_sinc(u, half); };
    // C on the grid u = −K + k/kPhases, k = 0 … 2·K·kPhases.
    const int n = 2 * half * kPhases;
    std::vector<double> c(static_cast<std::size_t>(n) + 1, 0.0);
    const double h = 1.0 / kPhases;
    for (int k = 0; k < n; ++k) {
      const double u = -half + k * h;
      c[static_cast<std::size_t>(k) + 1] =
          c[static_cast<std::size_t>(k)] +
          h / 6 * (kernel(u) + 4 * kernel(u + h / 2) + kernel(u + h));
    }
    const double total = c.back();
    for (double& v : c) v /= total;
    for (int q = 0; q <= kPhases; ++q) {
      const double p = static_cast<double>(q) / kPhases;
      auto& row = rows[static_cast<std::size_t>(q)];
      double sum = 0, phi_sum = 0;
      std::array<double, kEdgeTaps> phi{};
      for (int j = -half + 1; j <= half; ++j) {
        // p − j = −K + k/kPhases  ⇒  k = q + (K − j)·kPhases
        const auto k = static_cast<std::size_t>(q + (half - j) * kPhases);
        const auto idx = static_cast<std::size_t>(j + half - 1);
        row[idx] = c[k] - (j <= 0 ? 1.0 : 0.0);
        phi[idx] = kaiser_sinc(p - j, half);
        sum += row[idx];
        phi_sum += phi[idx];
      }
      // The window makes Σ φ(p − j) differ from 1 by ~1e-5; the residual of Σ c_j(p) = p − ½ is
      // spread as φ spreads a sample, so a constant integrates exactly.
      const double residual = sum - (p - 0.5);
      for (std::size_t j = 0; j < 2 * static_cast<std::size_t>(half); ++j)
        row[j] -= residual * phi[j] / phi_sum;
    }
  }
};

const Table& table(int half) {
  static const Table t2(2), t4(4), t8(8), t16(16);
  switch (half) {
    case 2:
      return t2;
    case 4:
      return t4;
    case 8:
      return t8;
    default:
      return t16;
  }
}

// Modified Bessel function I0 by its power series (Abramowitz & Stegun 9.6.12).
double bessel_i0(double x) {
  double sum = 1.0, term = 1.0;
  for (int k = 1; k < 60; ++k) {
    term *= (x / (2.0 * k)) * (x / (2.0 * k));
    sum += term;
    if (term < 1e-17 * sum) break;
  }
  return sum;
}

}  // namespace

double kaiser_sinc(double u, int half_taps) {
  static const double i0_beta = bessel_i0(kBeta);
  const double r = u / half_taps;
  if (std::fabs(r) >= 1) return 0.0;
  const double sinc = u == 0.0 ? 1.0 : std::sin(M_PI * u) / (M_PI * u);
  return sinc * bessel_i0(kBeta * std::sqrt(1 - r * r)) / i0_beta;
}

namespace {

// φ tabulated at kPhases + 1 phases, each row normalised to unit sum, with each row's step to
// the next (the linear interpolation's slope): |φ''| ≤ π²/3, so the interpolated weights are
// off by at most (1/kPhases)²/8 · π²/3 ≈ 4e-7 of a sample's weight, and each row still sums
// to 1. Evaluating the Bessel series at every call cost more than the rest of the measurement
// (32 series per reconstructed value, ~10 values per cycle at few samples per cycle).
struct InterpolationTable {
  std::vector<std::array<double, kEdgeTaps>> rows, steps;
  InterpolationTable() : rows(kPhases + 1), steps(kPhases) {
    for (int q = 0; q <= kPhases; ++q) {
      const double ph = static_cast<double>(q) / kPhases;
      auto& w = rows[static_cast<std::size_t>(q)];
      double sum = 0;
      for (int j = -kEdgeHalfTaps + 1; j <= kEdgeHalfTaps; ++j) {
        const auto idx = static_cast<std::size_t>(j + kEdgeHalfTaps - 1);
        w[idx] = kaiser_sinc(ph - j, kEdgeHalfTaps);
        sum += w[idx];
      }
      for (double& v : w) v /= sum;
    }
    for (std::size_t q = 0; q < static_cast<std::size_t>(kPhases); ++q)
      for (std::size_t j = 0; j < kEdgeTaps; ++j) steps[q][j] = rows[q + 1][j] - rows[q][j];
  }
};

const InterpolationTable& interpolation_table() {
  static const InterpolationTable t;
  return t;
}

}  // namespace

InterpolationTableView interpolation_table_view() {
  const InterpolationTable& t = interpolation_table();
  return {t.rows.data(), t.steps.data(), kPhases};
}

InterpolationRows interpolation_rows(double p) {
  return interpolation_table_view().rows_at(p);
}

std::array<double, kEdgeTaps> interpolation_weights(double p) {
  const InterpolationRows r = interpolation_rows(p);
  std::array<double, kEdgeTaps> w{};
  for (std::size_t j = 0; j < kEdgeTaps; ++j) w[j] = r.row[j] + r.share * r.step[j];
  return w;
}

EdgeTableView edge_table_view(int half_taps) {
  return {table(half_taps).rows.data(), kPhases};
}

std::array<double, kEdgeTaps> edge_weights(double p, int half_taps) {
  const EdgeTableView view = edge_table_view(half_taps);
  const EdgeTableView::Position at = view.at(p);
  std::array<double, kEdgeTaps> w{};
  for (std::size_t j = 0; j < kEdgeTaps; ++j) w[j] = EdgeTableView::weight(at, j);
  return w;
}

}  // namespace lopside
