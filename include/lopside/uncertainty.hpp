#pragma once
/// \file
/// Uncertainty of a mean of per-cycle values, and its expansion to 95 % coverage.
///
/// Neighbouring cycles are correlated (thermal drift, a boundary error shared by two cycles),
/// so the plain s/√n misstates the standard error. BatchMeans uses the method of batch means
/// (Law & Kelton, Simulation Modeling and Analysis, ch. 9; Schmeiser, Oper. Res. 30, 1982):
/// consecutive cycles are pooled into batches long enough to be nearly independent, and the
/// scatter of batch means gives the standard error. Batches double in length as the series
/// grows, so memory stays bounded (at most 2·kMaxBatches batch sums) for any capture length.

#include <cstddef>
#include <cstdint>
#include <vector>

namespace lopside {

class BatchMeans {
 public:
  /// Between kMinBatches and 2·kMinBatches batches are kept once the series is long enough.
  static constexpr std::size_t kMinBatches = 32;

  /// Adds one cycle's value with a weight (its duration [s]: the overall mean is then the mean
  /// over time, e.g. total charge over total time for the DC offset).
  void add(double value, double weight = 1.0);

  std::uint64_t count() const { return count_; }
  /// Weighted mean of all values added.
  double mean() const;
  /// Standard uncertainty of mean() (type A, GUM 4.2.3), from the scatter of batch means.
  double standard_error() const;
  /// Degrees of freedom of standard_error(): batches − 1.
  double degrees_of_freedom() const;
  /// Smallest and largest value added.
  double min() const { return min_; }
  double max() const { return max_; }

 private:
  struct Batch {
    double sum_wx = 0;
    double sum_w = 0;
    std::uint64_t n = 0;
  };
  void close_batch();

  std::vector<Batch> batches_;  // completed batches of batch_size_ values each
  Batch open_;                  // the batch being filled
  std::uint64_t batch_size_ = 1;
  std::uint64_t count_ = 0;
  double sum_wx_ = 0, sum_w_ = 0;
  double min_ = 0, max_ = 0;
};

/// Two-sided 95 % quantile of Student's t for ν degrees of freedom (ν → ∞ gives 1.96);
/// GUM (JCGM 100:2008) G.3 and table G.2. Non-integer ν (Welch–Satterthwaite) is interpolated.
double student_t95(double dof);

/// A standard uncertainty with its degrees of freedom (infinite for a stated probe spec).
struct UncertaintyComponent {
  double standard = 0.0;
  double dof = 1e300;
};

/// Combined standard uncertainty in quadrature (GUM 5.1.2, uncorrelated inputs) and the
/// effective degrees of freedom by Welch–Satterthwaite (GUM G.4.1).
struct CombinedUncertainty {
  double standard = 0.0;
  double dof = 1e300;
  double coverage_factor = 2.0;  ///< k for 95 % coverage: 2 for ν ≥ 30 (GUM 6.3.3), else t95(ν)
  double expanded() const { return coverage_factor * standard; }
};
CombinedUncertainty combine(const std::vector<UncertaintyComponent>& components);

/// Standard uncertainty of a rectangular distribution of half-width a: a/√3 (GUM 4.3.7), the
/// reading of a data-sheet tolerance "±a" when nothing more is known.
double rectangular(double half_width);

}  // namespace lopside
