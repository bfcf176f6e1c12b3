// Western Electric run rules (run_rules.hpp): each rule alone on a hand-made series, the zone
// lines themselves (strictly beyond), the same-side requirement, the first points of a series
// (no pattern before its window is full), a series with no hits, bad input, and the rates of
// rules 1 and 4 on standard normal noise.
//
// Hand-made series use center 10 and sigma 0.5 and deviations z·σ with z in quarters or halves,
// so every value and every x − center is exact in binary: a point put on a zone line lies on
// it exactly, and the expectations are exact (EXPECT_EQ on the list of hits).

#include "lopside/run_rules.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstddef>
#include <initializer_list>
#include <limits>
#include <random>
#include <stdexcept>
#include <utility>
#include <vector>

namespace lopside {
namespace {

constexpr double kCenter = 10.0;
constexpr double kSigma = 0.5;

// A series of center + z·σ for the given z (deviations in units of σ).
std::vector<double> series_of(std::initializer_list<double> z) {
  std::vector<double> x;
  for (double zi : z) x.push_back(kCenter + zi * kSigma);
  return x;
}

// `count` copies of center + z·σ.
std::vector<double> repeated(double z, std::size_t count) {
  return std::vector<double>(count, kCenter + z * kSigma);
}

using Hits = std::vector<std::pair<std::size_t, int>>;  // (index, rule)

Hits hits_of(const std::vector<double>& x, double center = kCenter, double sigma = kSigma) {
  Hits out;
  for (const RunRuleHit& h : run_rule_hits(x, center, sigma)) out.emplace_back(h.index, h.rule);
  return out;
}

TEST(RunRules, Text) {
  EXPECT_STREQ(run_rule_text(1), "beyond 3 sigma");
  EXPECT_STREQ(run_rule_text(2), "2 of 3 beyond 2 sigma");
  EXPECT_STREQ(run_rule_text(3), "4 of 5 beyond 1 sigma");
  EXPECT_STREQ(run_rule_text(4), "8 on one side");
  EXPECT_STREQ(run_rule_text(0), "?");
  EXPECT_STREQ(run_rule_text(5), "?");
}

// Rule 1 alone: the neighbours sit on the centre line, so no other rule can see anything.
TEST(RunRules, Rule1BeyondThreeSigma) {
  EXPECT_EQ(hits_of(series_of({0, 0, 0, 3.1, 0, 0})), (Hits{{3, 1}}));
  EXPECT_EQ(hits_of(series_of({0, 0, 0, -3.1, 0, 0})), (Hits{{3, 1}}));
  // Exactly on the 3σ line (x − c = 1.5 = 3σ, exact): not beyond.
  EXPECT_EQ(hits_of(series_of({0, 0, 0, 3.0, 0, 0})), Hits{});
  EXPECT_EQ(hits_of(series_of({0, 0, 0, -3.0, 0, 0})), Hits{});
  // Rule 1 needs no window: the very first point can fire it.
  EXPECT_EQ(hits_of(series_of({3.5})), (Hits{{0, 1}}));
}

// Rule 2 alone: two of three at +2.5σ, the third at −0.5σ (so neither rule 3 nor 4 can fire).
TEST(RunRules, Rule2TwoOfThreeBeyondTwoSigma) {
  EXPECT_EQ(hits_of(series_of({2.5, -0.5, 2.5})), (Hits{{2, 2}}));
  EXPECT_EQ(hits_of(series_of({-0.5, 2.5, 2.5})), (Hits{{2, 2}}));
  EXPECT_EQ(hits_of(series_of({-2.5, 0.5, -2.5})), (Hits{{2, 2}}));
  // The completing point must itself be beyond: the window {2.5, 2.5, −0.5} ending at index 3
  // holds two beyond, but the hit was already reported at index 2 and is not repeated at 3.
  EXPECT_EQ(hits_of(series_of({0, 2.5, 2.5, -0.5})), (Hits{{2, 2}}));
  // Only one beyond in every window of three.
  EXPECT_EQ(hits_of(series_of({2.5, -0.5, 0, 2.5, -0.5})), Hits{});
  // On the 2σ line (x − c = 1.0 = 2σ, exact) is not beyond.
  EXPECT_EQ(hits_of(series_of({2.0, -0.5, 2.5})), Hits{});
  EXPECT_EQ(hits_of(series_of({2.5, -0.5, 2.0})), Hits{});
}

// Rule 3 alone: four of five at +1.5σ, one at 0 (which breaks rule 4's run; none beyond 2σ).
TEST(RunRules, Rule3FourOfFiveBeyondOneSigma) {
  EXPECT_EQ(hits_of(series_of({1.5, 1.5, 0, 1.5, 1.5})), (Hits{{4, 3}}));
  EXPECT_EQ(hits_of(series_of({-1.5, 0, -1.5, -1.5, -1.5})), (Hits{{4, 3}}));
  // The next point keeps 4 of the last 5 beyond and is beyond itself: a second hit.
  EXPECT_EQ(hits_of(series_of({1.5, 1.5, 0, 1.5, 1.5, 1.5})), (Hits{{4, 3}, {5, 3}}));
  // Three of five are not enough.
  EXPECT_EQ(hits_of(series_of({1.5, 0, 0, 1.5, 1.5})), Hits{});
  // On the 1σ line (x − c = 0.5 = σ) is not beyond.
  EXPECT_EQ(hits_of(series_of({1.5, 1.5, 0, 1.0, 1.5})), Hits{});
  // Four of five beyond, but the completing point is not.
  EXPECT_EQ(hits_of(series_of({1.5, 1.5, 1.5, 1.5, 0})), Hits{});
}

// Rule 4 alone: points at +0.5σ are beyond no zone.
TEST(RunRules, Rule4EightOnOneSide) {
  EXPECT_EQ(hits_of(repeated(0.5, 7)), Hits{});
  EXPECT_EQ(hits_of(repeated(0.5, 8)), (Hits{{7, 4}}));
  EXPECT_EQ(hits_of(repeated(-0.5, 8)), (Hits{{7, 4}}));
  // Every point that ends a run of eight or more is reported.
  EXPECT_EQ(hits_of(repeated(0.5, 10)), (Hits{{7, 4}, {8, 4}, {9, 4}}));
  // A point on the centre line is on neither side and breaks the run.
  EXPECT_EQ(hits_of(series_of({0.5, 0.5, 0.5, 0.5, 0, 0.5, 0.5, 0.5, 0.5})), Hits{});
  // A change of side starts a new run: 7 above, then 8 below.
  std::vector<double> x = repeated(0.5, 7);
  const std::vector<double> below = repeated(-0.5, 8);
  x.insert(x.end(), below.begin(), below.end());
  EXPECT_EQ(hits_of(x), (Hits{{14, 4}}));
  // A tiny deviation is still a side (no dead band around the centre).
  EXPECT_EQ(hits_of(std::vector<double>(8, kCenter + 1e-9)), (Hits{{7, 4}}));
}

// Two beyond 2σ on opposite sides are not "2 of 3 on the same side"; likewise for rule 3.
TEST(RunRules, SameSideRequired) {
  EXPECT_EQ(hits_of(series_of({2.5, 0, -2.5})), Hits{});
  EXPECT_EQ(hits_of(series_of({0, 2.5, -2.5})), Hits{});
  EXPECT_EQ(hits_of(series_of({2.5, -2.5, 2.5})), (Hits{{2, 2}}));  // the outer two match
  EXPECT_EQ(hits_of(series_of({1.5, 1.5, -1.5, -1.5, 1.5})), Hits{});
  EXPECT_EQ(hits_of(series_of({-1.5, 1.5, 1.5, -1.5, 1.5, -1.5})), Hits{});
}

// No pattern is complete before its window of 3, 5 or 8 points exists.
TEST(RunRules, FirstPoints) {
  EXPECT_EQ(hits_of(series_of({2.5, 2.5})), Hits{});
  EXPECT_EQ(hits_of(series_of({2.5, 2.5, 2.5})), (Hits{{2, 2}}));
  // Two beyond at the very start, then a third point not beyond: index 1 has no full window
  // and index 2 does not complete the pattern, so rule 2 never fires (documented convention).
  EXPECT_EQ(hits_of(series_of({2.5, 2.5, 0})), Hits{});
  EXPECT_EQ(hits_of(repeated(1.5, 4)), Hits{});
  EXPECT_EQ(hits_of(repeated(1.5, 5)), (Hits{{4, 3}}));
  EXPECT_EQ(hits_of(repeated(0.5, 7)), Hits{});
  EXPECT_EQ(hits_of(std::vector<double>{}), Hits{});
}

// Several rules on one point: reported once each, ordered by index, then rule.
TEST(RunRules, SeveralRulesOrdered) {
  EXPECT_EQ(
      hits_of(repeated(2.5, 8)),
      (Hits{
          {2, 2}, {3, 2}, {4, 2}, {4, 3}, {5, 2}, {5, 3}, {6, 2}, {6, 3}, {7, 2}, {7, 3}, {7, 4}}));
  EXPECT_EQ(hits_of(series_of({3.5, 3.5, 3.5})), (Hits{{0, 1}, {1, 1}, {2, 1}, {2, 2}}));
}

// A bounded alternating series: never beyond 1σ, never two in a row on one side.
TEST(RunRules, NoHits) {
  std::vector<double> x;
  for (int i = 0; i < 100; ++i) x.push_back(kCenter + (i % 2 == 0 ? 0.9 : -0.9) * kSigma);
  EXPECT_EQ(hits_of(x), Hits{});
  EXPECT_EQ(hits_of(std::vector<double>(20, kCenter)), Hits{});  // all on the centre line
}

TEST(RunRules, InvalidInput) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  const double inf = std::numeric_limits<double>::infinity();
  const std::vector<double> ok = series_of({0, 1, 2});
  EXPECT_THROW(run_rule_hits(ok, kCenter, 0.0), std::invalid_argument);
  EXPECT_THROW(run_rule_hits(ok, kCenter, -0.5), std::invalid_argument);
  EXPECT_THROW(run_rule_hits(ok, kCenter, nan), std::invalid_argument);
  EXPECT_THROW(run_rule_hits(ok, kCenter, inf), std::invalid_argument);
  EXPECT_THROW(run_rule_hits(ok, nan, kSigma), std::invalid_argument);
  EXPECT_THROW(run_rule_hits(ok, -inf, kSigma), std::invalid_argument);
  EXPECT_THROW(run_rule_hits({kCenter, nan, kCenter}, kCenter, kSigma), std::invalid_argument);
  EXPECT_THROW(run_rule_hits({kCenter, inf}, kCenter, kSigma), std::invalid_argument);
  EXPECT_THROW(run_rule_hits({-inf}, kCenter, kSigma), std::invalid_argument);
  // sigma is checked even when there is nothing to judge.
  EXPECT_THROW(run_rule_hits({}, kCenter, 0.0), std::invalid_argument);
}

// The false-alarm rates of rules 1 and 4 on an in-control process: n = 10 000 standard normal
// values (center 0, sigma 1). std::mt19937_64 is fully specified by the standard, but
// std::normal_distribution is not (libstdc++ and libc++ draw differently), so the counts are
// held to their statistical expectation with a tolerance, not to fixed numbers. The seed was
// chosen before the first run and not tuned.
TEST(RunRules, RatesOnNormalNoise) {
  constexpr std::size_t n = 10000;
  std::mt19937_64 rng(20240611);
  std::normal_distribution<double> normal(0.0, 1.0);
  std::vector<double> x(n);
  for (double& v : x) v = normal(rng);

  std::size_t rule1 = 0, rule4 = 0;
  for (const RunRuleHit& h : run_rule_hits(x, 0.0, 1.0)) {
    if (h.rule == 1) ++rule1;
    if (h.rule == 4) ++rule4;
  }
  const double nd = static_cast<double>(n);

  // Rule 1: each point independently beyond 3σ with the two-sided normal tail probability
  // p1 = erfc(3/√2) = 0.0026998. The count is binomial(n, p1); the share's sd is
  // sqrt(p1(1 − p1)/n) = 0.00052, and 4 sd are allowed (a spurious failure about 1 in 16 000).
  const double p1 = std::erfc(3.0 / std::sqrt(2.0));
  const double sd1 = std::sqrt(p1 * (1 - p1) / nd);
  EXPECT_NEAR(static_cast<double>(rule1) / nd, p1, 4 * sd1)
      << rule1 << " rule-1 hits in " << n << " points";

  // Rule 4, counting every point i ≥ 7 whose last eight points (i−7 … i) lie on one side, as
  // run_rule_hits reports them. Signs of continuous noise are fair coin flips, so each such
  // point is a hit with p4 = 2·(1/2)^8 = 1/128 = 0.0078125, over m = n − 7 candidates:
  // expected share m·p4/n = 0.0078070.
  // The hits are not independent: a run of 10 gives three in a row. For lag k = 1…7 two
  // windows overlap and both are hits when all 8 + k points share a side:
  // P = 2·(1/2)^(8+k) = 2^−(7+k); windows 8 or more apart share no point and are independent.
  // So Var(count) = m·p4(1 − p4) + 2·Σ_{k=1..7} (m − k)(2^−(7+k) − p4²) ≈ 224, about 2.9 times
  // the binomial m·p4(1 − p4) ≈ 77.5. The share's sd is sqrt(224)/n ≈ 0.0015 (a plain binomial
  // sd, 0.00088, would understate it), and 4 of these sd are allowed.
  const double p4 = 1.0 / 128.0;
  const double m = nd - 7;
  double var4 = m * p4 * (1 - p4);
  for (int k = 1; k <= 7; ++k) var4 += 2 * (m - k) * (std::ldexp(1.0, -(7 + k)) - p4 * p4);
  const double sd4 = std::sqrt(var4) / nd;
  EXPECT_NEAR(static_cast<double>(rule4) / nd, m * p4 / nd, 4 * sd4)
      << rule4 << " rule-4 hits in " << n << " points";
}

}  // namespace
}  // namespace lopside
