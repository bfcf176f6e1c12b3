// Batch means and the GUM combination rules.
#include "lopside/uncertainty.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <random>

namespace lopside {
namespace {

TEST(BatchMeans, IndependentValuesGiveSigmaOverRootN) {
  std::mt19937_64 rng(4);
  std::normal_distribution<double> n01(0.0, 1.0);
  BatchMeans b;
  const int n = 100000;
  for (int i = 0; i < n; ++i) b.add(3.0 + n01(rng));
  // σ/√n = 0.00316; with 32–64 batches the estimate scatters by ~1/√(2·31) ≈ 13 %.
  EXPECT_NEAR(b.standard_error(), 1.0 / std::sqrt(n), 0.4 / std::sqrt(n));
  EXPECT_NEAR(b.mean(), 3.0, 5.0 / std::sqrt(n));
  EXPECT_GE(b.degrees_of_freedom(), 31.0);
  EXPECT_LE(b.degrees_of_freedom(), 63.0);
}

TEST(BatchMeans, CorrelatedValuesWidenTheError) {
  // AR(1) with coefficient ρ: var(mean) ≈ σ²/n · (1 + ρ)/(1 − ρ) (e.g. Box & Jenkins, Time
  // Series Analysis, the variance of the mean of an AR(1) process), σ² the process variance.
  std::mt19937_64 rng(9);
  std::normal_distribution<double> n01(0.0, 1.0);
  const double rho = 0.9;
  const double sigma = 1.0 / std::sqrt(1 - rho * rho);  // innovations of unit variance
  BatchMeans b;
  double x = 0;
  const int n = 400000;
  for (int i = 0; i < n; ++i) {
    x = rho * x + n01(rng);
    b.add(x);
  }
  const double expected = sigma / std::sqrt(n) * std::sqrt((1 + rho) / (1 - rho));
  EXPECT_NEAR(b.standard_error(), expected, 0.35 * expected);
}

TEST(BatchMeans, WeightsGiveTheMeanOverTime) {
  BatchMeans b;
  b.add(1.0, 3.0);
  b.add(2.0, 1.0);
  EXPECT_DOUBLE_EQ(b.mean(), (3.0 + 2.0) / 4.0);
}

TEST(Uncertainty, StudentTable) {
  // t_{0.975}(ν) from the standard table (e.g. NIST/SEMATECH e-Handbook 1.3.6.7.2).
  EXPECT_NEAR(student_t95(1), 12.706, 1e-3);
  EXPECT_NEAR(student_t95(10), 2.228, 1e-3);
  EXPECT_NEAR(student_t95(30), 2.042, 3e-3);
  EXPECT_NEAR(student_t95(120), 1.980, 2e-3);
}

TEST(Uncertainty, CombineInQuadratureWithWelchSatterthwaite) {
  // GUM 5.1.2 and G.4.1: u = √(0.4² + 0.3²) = 0.5; ν_eff = u⁴ / (0.4⁴/4 + 0.3⁴/∞) = 9.77,
  // below 30, so k is the t-quantile (GUM G.4.1); with many degrees of freedom k = 2 (6.3.3).
  const CombinedUncertainty c = combine({{0.4, 4.0}, {0.3, 1e300}});
  EXPECT_NEAR(c.standard, 0.5, 1e-12);
  EXPECT_NEAR(c.dof, std::pow(0.5, 4) / (std::pow(0.4, 4) / 4.0), 1e-9);
  EXPECT_NEAR(c.coverage_factor, student_t95(c.dof), 1e-12);
  EXPECT_GT(c.coverage_factor, 2.2);
  EXPECT_DOUBLE_EQ(combine({{0.3, 40.0}, {0.4, 1e300}}).coverage_factor, 2.0);
  EXPECT_NEAR(rectangular(1.0), 1.0 / std::sqrt(3.0), 1e-15);  // GUM 4.3.7
}

}  // namespace
}  // namespace lopside
