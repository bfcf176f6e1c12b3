#include "lopside/uncertainty.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace lopside {

void BatchMeans::add(double value, double weight) {
  if (count_ == 0) {
    min_ = max_ = value;
  } else {
    min_ = std::min(min_, value);
    max_ = std::max(max_, value);
  }
  ++count_;
  sum_wx_ += weight * value;
  sum_w_ += weight;
  open_.sum_wx += weight * value;
  open_.sum_w += weight;
  ++open_.n;
  if (open_.n == batch_size_) close_batch();
}

void BatchMeans::close_batch() {
  batches_.push_back(open_);
  open_ = Batch{};
  if (batches_.size() == 2 * kMinBatches) {
    // Merge neighbours: kMinBatches batches of twice the length.
    for (std::size_t i = 0; i < kMinBatches; ++i) {
      const Batch& a = batches_[2 * i];
      const Batch& b = batches_[2 * i + 1];
      batches_[i] = Batch{a.sum_wx + b.sum_wx, a.sum_w + b.sum_w, a.n + b.n};
    }
    batches_.resize(kMinBatches);
    batch_size_ *= 2;
  }
}

double BatchMeans::mean() const {
  return sum_w_ > 0 ? sum_wx_ / sum_w_ : std::numeric_limits<double>::quiet_NaN();
}

double BatchMeans::standard_error() const {
  // Complete batches only: the open one is shorter and would weigh its scatter wrongly.
  const std::size_t nb = batches_.size();
  if (nb < 2) return std::numeric_limits<double>::quiet_NaN();
  double mean_of_batches = 0;
  for (const Batch& b : batches_) mean_of_batches += b.sum_wx / b.sum_w;
  mean_of_batches /= static_cast<double>(nb);
  double ss = 0;
  for (const Batch& b : batches_) {
    const double d = b.sum_wx / b.sum_w - mean_of_batches;
    ss += d * d;
  }
  const double var_batch = ss / static_cast<double>(nb - 1);
  return std::sqrt(var_batch / static_cast<double>(nb));
}

double BatchMeans::degrees_of_freedom() const {
  return batches_.size() < 2 ? 0.0 : static_cast<double>(batches_.size() - 1);
}

double student_t95(double dof) {
  // t_{0.975}(ν), standard table (e.g. GUM table G.2 gives ν = 1…10, 20, 30, 50, 100, ∞ for
  // 95.45 %; these are the 95.00 % values of any statistics handbook).
  static constexpr std::array<double, 31> kT{
      0,     12.706, 4.303, 3.182, 2.776, 2.571, 2.447, 2.365, 2.306, 2.262, 2.228,
      2.201, 2.179,  2.160, 2.145, 2.131, 2.120, 2.110, 2.101, 2.093, 2.086, 2.080,
      2.074, 2.069,  2.064, 2.060, 2.056, 2.052, 2.048, 2.045, 2.042};
  if (!(dof >= 1.0)) return kT[1];
  if (dof >= 30.0) {
    // Beyond 30, t95 ≈ 1.96 + 2.4/ν (a close fit to the table: 40 → 2.021, 120 → 1.980).
    return 1.96 + 2.4 / dof;
  }
  const auto lo = static_cast<std::size_t>(std::floor(dof));
  const double frac = dof - static_cast<double>(lo);
  return kT[lo] + frac * (kT[std::min<std::size_t>(lo + 1, 30)] - kT[lo]);
}

CombinedUncertainty combine(const std::vector<UncertaintyComponent>& components) {
  CombinedUncertainty out;
  double var = 0, denom = 0;
  for (const auto& c : components) {
    if (!std::isfinite(c.standard)) continue;
    var += c.standard * c.standard;
    if (c.dof < 1e299 && c.dof > 0) denom += std::pow(c.standard, 4) / c.dof;
  }
  out.standard = std::sqrt(var);
  out.dof = denom > 0 ? std::pow(out.standard, 4) / denom : 1e300;
  // GUM 6.3.3: k = 2 gives about 95 % when ν_eff is large; for few degrees of freedom the
  // t-quantile keeps the coverage (GUM G.4.1, G.6.4).
  out.coverage_factor = out.dof >= 30 ? 2.0 : student_t95(out.dof);
  return out;
}

double rectangular(double half_width) {
  return std::fabs(half_width) / std::sqrt(3.0);
}

}  // namespace lopside
