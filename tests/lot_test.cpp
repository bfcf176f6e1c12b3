// Lot decisions and statistics (issue 11): simple and guarded acceptance at every zone boundary
// (ILAC-G8:09/2019, ISO 14253-1:2017), the unit verdict, and Cp/Cpk/Pp/Ppk with the I-MR
// chart on small data sets worked out by hand beside each check.
//
// Every hand-computed figure was cross-checked while writing with /usr/bin/python3 and
// numpy 1.24.2 (np.mean, np.std(x, ddof=1), np.abs(np.diff(x)).mean()); the test itself needs
// no Python.
//
// Tolerances: decision boundaries use binary-exact numbers (1.0, 1.5, 0.5, …) so a tie is a
// tie in double precision and is asserted exactly. Statistics of decimal data (0.1 is not
// exact in binary) carry a few ulp of rounding per operation; kTol = 1e-12 bounds that with
// room and is still ten orders of magnitude below the smallest difference the tests tell apart.

#include "lopside/lot.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>
#include <vector>

namespace lopside {
namespace {

constexpr double kTol = 1e-12;

// A two-sided limit [1 V, 5 V]: all boundary arithmetic below is exact in binary.
const Limit kBand{1.0, 5.0};

FigureDecision guarded(double value, double u95, const Limit& l = kBand) {
  return decide({value, u95}, l, DecisionRule::guarded);
}
FigureDecision simple(double value, const Limit& l = kBand) {
  return decide({value, std::nullopt}, l, DecisionRule::simple);
}

TEST(LotNames, ToString) {
  EXPECT_STREQ(to_string(LotVerdict::pass), "pass");
  EXPECT_STREQ(to_string(LotVerdict::fail), "fail");
  EXPECT_STREQ(to_string(LotVerdict::conditional), "conditional");
  EXPECT_STREQ(to_string(LotVerdict::not_measured), "not_measured");
  EXPECT_STREQ(to_string(DecisionRule::simple), "simple");
  EXPECT_STREQ(to_string(DecisionRule::guarded), "guarded");
}

TEST(LotLimit, Validity) {
  EXPECT_TRUE(is_valid(Limit{1.0, 5.0}));
  EXPECT_TRUE(is_valid(Limit{std::nullopt, 5.0}));
  EXPECT_TRUE(is_valid(Limit{1.0, std::nullopt}));
  EXPECT_TRUE(is_valid(Limit{2.0, 2.0}));  // min = max is allowed
  EXPECT_FALSE(is_valid(Limit{}));
  EXPECT_FALSE(is_valid(Limit{5.0, 1.0}));
  EXPECT_FALSE(is_valid(Limit{std::nan(""), 1.0}));
  EXPECT_FALSE(is_valid(Limit{std::nullopt, std::numeric_limits<double>::infinity()}));
}

TEST(LotDecide, RejectsBadInput) {
  EXPECT_THROW(decide({1.0, {}}, Limit{}, DecisionRule::simple), std::invalid_argument);
  EXPECT_THROW(decide({1.0, {}}, Limit{5.0, 1.0}, DecisionRule::simple), std::invalid_argument);
  EXPECT_THROW(decide({std::nan(""), {}}, kBand, DecisionRule::simple), std::invalid_argument);
  EXPECT_THROW(guarded(3.0, -0.1), std::invalid_argument);
  EXPECT_THROW(guarded(3.0, std::nan("")), std::invalid_argument);
}

TEST(LotDecide, SimpleAcceptanceOnAndAroundTheLimits) {
  // ILAC-G8 simple acceptance: the value alone, a value on the limit passes.
  const FigureDecision on_min = simple(1.0);
  EXPECT_EQ(on_min.verdict, LotVerdict::pass);
  EXPECT_EQ(on_min.margin, 0.0);
  EXPECT_TRUE(on_min.at_min);
  EXPECT_FALSE(on_min.uncertainty_used);

  const FigureDecision on_max = simple(5.0);
  EXPECT_EQ(on_max.verdict, LotVerdict::pass);
  EXPECT_EQ(on_max.margin, 0.0);
  EXPECT_FALSE(on_max.at_min);

  // One ulp outside either limit fails; the margin is that ulp, negative.
  const double below = std::nextafter(1.0, 0.0);
  EXPECT_EQ(simple(below).verdict, LotVerdict::fail);
  EXPECT_EQ(simple(below).margin, below - 1.0);
  EXPECT_LT(simple(below).margin, 0.0);
  EXPECT_EQ(simple(std::nextafter(5.0, 10.0)).verdict, LotVerdict::fail);
  EXPECT_EQ(simple(1.0 - 1e-9).verdict, LotVerdict::fail);
  EXPECT_EQ(simple(5.0 + 1e-9).verdict, LotVerdict::fail);
  EXPECT_EQ(simple(1.0 + 1e-9).verdict, LotVerdict::pass);

  // Far outside: margin = 7 − 5 = −2 V at the max.
  const FigureDecision far = simple(7.0);
  EXPECT_EQ(far.verdict, LotVerdict::fail);
  EXPECT_EQ(far.margin, -2.0);
  EXPECT_FALSE(far.at_min);
  EXPECT_EQ(far.relative_margin, -1.0);  // −2 V over the half tolerance (5 − 1)/2 = 2 V
}

TEST(LotDecide, GuardedPassZoneIsClosed) {
  // value − U exactly on the min: 1.5 − 0.5 = 1.0, inside (closed conformance zone).
  const FigureDecision at_min = guarded(1.5, 0.5);
  EXPECT_EQ(at_min.verdict, LotVerdict::pass);
  EXPECT_TRUE(at_min.uncertainty_used);
  EXPECT_TRUE(at_min.at_min);
  EXPECT_EQ(at_min.margin, 0.5);            // the margin is the value's, without U
  EXPECT_EQ(at_min.relative_margin, 0.25);  // 0.5 V / 2 V

  // value + U exactly on the max: 4.5 + 0.5 = 5.0, inside.
  const FigureDecision at_max = guarded(4.5, 0.5);
  EXPECT_EQ(at_max.verdict, LotVerdict::pass);
  EXPECT_FALSE(at_max.at_min);
  EXPECT_EQ(at_max.margin, 0.5);

  // One ulp further out: 1.5 − 2⁻⁵² − 0.5 = 1 − 2⁻⁵², exact in binary and below the min.
  EXPECT_EQ(guarded(std::nextafter(1.5, 0.0), 0.5).verdict, LotVerdict::conditional);
  EXPECT_EQ(guarded(std::nextafter(4.5, 10.0), 0.5).verdict, LotVerdict::conditional);
  // A small ε either side.
  EXPECT_EQ(guarded(1.5 - 1e-9, 0.5).verdict, LotVerdict::conditional);
  EXPECT_EQ(guarded(1.5 + 1e-9, 0.5).verdict, LotVerdict::pass);
  EXPECT_EQ(guarded(4.5 + 1e-9, 0.5).verdict, LotVerdict::conditional);
  EXPECT_EQ(guarded(4.5 - 1e-9, 0.5).verdict, LotVerdict::pass);
}

TEST(LotDecide, GuardedFailZoneIsOpen) {
  // value + U exactly on the min: 0.5 + 0.5 = 1.0. The interval touches the limit, so a
  // conforming true value is not ruled out: conditional, not fail.
  const FigureDecision touch_min = guarded(0.5, 0.5);
  EXPECT_EQ(touch_min.verdict, LotVerdict::conditional);
  EXPECT_EQ(touch_min.margin, -0.5);
  EXPECT_TRUE(touch_min.at_min);
  // value − U exactly on the max: 5.5 − 0.5 = 5.0.
  EXPECT_EQ(guarded(5.5, 0.5).verdict, LotVerdict::conditional);

  // Beyond by one ulp or a small ε: wholly outside, fail.
  // One ulp of 0.5 is lost in the sum (0.5 − 2⁻⁵⁴ + 0.5 rounds back to 1.0, a tie), so step
  // the upper end itself down one ulp: value = (1 − 2⁻⁵³) − 0.5, exact, and so is its sum.
  EXPECT_EQ(guarded(std::nextafter(0.5, 0.0), 0.5).verdict, LotVerdict::conditional);
  EXPECT_EQ(guarded(std::nextafter(1.0, 0.0) - 0.5, 0.5).verdict, LotVerdict::fail);
  EXPECT_EQ(guarded(std::nextafter(5.5, 10.0), 0.5).verdict, LotVerdict::fail);
  EXPECT_EQ(guarded(0.5 - 1e-9, 0.5).verdict, LotVerdict::fail);
  EXPECT_EQ(guarded(5.5 + 1e-9, 0.5).verdict, LotVerdict::fail);
  EXPECT_EQ(guarded(0.5 + 1e-9, 0.5).verdict, LotVerdict::conditional);

  // Far outside.
  const FigureDecision far = guarded(-1.0, 0.5);
  EXPECT_EQ(far.verdict, LotVerdict::fail);
  EXPECT_EQ(far.margin, -2.0);
  EXPECT_TRUE(far.at_min);
  EXPECT_EQ(guarded(7.0, 0.5).verdict, LotVerdict::fail);
}

TEST(LotDecide, GuardedConditionalStraddles) {
  // A value exactly on a limit with U > 0: [0.5, 1.5] holds the min. Conditional, and the
  // margin 0 (≥ 0) makes it ILAC-G8's "conditional pass".
  const FigureDecision on_limit = guarded(1.0, 0.5);
  EXPECT_EQ(on_limit.verdict, LotVerdict::conditional);
  EXPECT_EQ(on_limit.margin, 0.0);
  // Inside but too close (conditional pass) and outside but too close (conditional fail).
  EXPECT_EQ(guarded(1.2, 0.5).verdict, LotVerdict::conditional);
  EXPECT_GT(guarded(1.2, 0.5).margin, 0.0);
  EXPECT_EQ(guarded(0.8, 0.5).verdict, LotVerdict::conditional);
  EXPECT_LT(guarded(0.8, 0.5).margin, 0.0);
  // An uncertainty wider than the tolerance: [0.5, 5.5] straddles both limits.
  EXPECT_EQ(guarded(3.0, 2.5).verdict, LotVerdict::conditional);
}

TEST(LotDecide, SimpleAndGuardedOnTheSameValue) {
  // 1.2 V ± 0.5 V against [1 V, 5 V]: the value is inside (simple: pass), the interval
  // [0.7, 1.7] is not (guarded: conditional); 0.8 V: simple fail, guarded conditional.
  const FigureValue near_min{1.2, 0.5};
  EXPECT_EQ(decide(near_min, kBand, DecisionRule::simple).verdict, LotVerdict::pass);
  EXPECT_FALSE(decide(near_min, kBand, DecisionRule::simple).uncertainty_used);
  EXPECT_EQ(decide(near_min, kBand, DecisionRule::guarded).verdict, LotVerdict::conditional);
  const FigureValue just_out{0.8, 0.5};
  EXPECT_EQ(decide(just_out, kBand, DecisionRule::simple).verdict, LotVerdict::fail);
  EXPECT_EQ(decide(just_out, kBand, DecisionRule::guarded).verdict, LotVerdict::conditional);
  // Margins do not depend on the rule.
  EXPECT_EQ(decide(near_min, kBand, DecisionRule::simple).margin,
            decide(near_min, kBand, DecisionRule::guarded).margin);
}

TEST(LotDecide, GuardedWithoutUncertaintyFallsBackToSimple) {
  for (const double v : {0.8, 1.0, 1.2, 3.0, 5.0, 5.2}) {
    const FigureDecision g = decide({v, std::nullopt}, kBand, DecisionRule::guarded);
    const FigureDecision s = simple(v);
    EXPECT_EQ(g.verdict, s.verdict) << v;
    EXPECT_EQ(g.margin, s.margin) << v;
    EXPECT_FALSE(g.uncertainty_used) << v;
    // U = 0 is a known uncertainty: used, but the same verdicts.
    const FigureDecision zero = guarded(v, 0.0);
    EXPECT_EQ(zero.verdict, s.verdict) << v;
    EXPECT_TRUE(zero.uncertainty_used) << v;
  }
}

TEST(LotDecide, OneSidedLimits) {
  // THD ≤ 0.05 (fraction): 0.04 ± 0.02 straddles; margin 0.01, relative 0.01/0.05 = 0.2.
  const Limit thd{std::nullopt, 0.05};
  const FigureDecision d = guarded(0.04, 0.02, thd);
  EXPECT_EQ(d.verdict, LotVerdict::conditional);
  EXPECT_FALSE(d.at_min);
  EXPECT_NEAR(d.margin, 0.01, kTol);
  EXPECT_NEAR(d.relative_margin, 0.2, kTol);
  EXPECT_EQ(guarded(0.02, 0.02, thd).verdict, LotVerdict::pass);
  EXPECT_EQ(guarded(0.08, 0.02, thd).verdict, LotVerdict::fail);

  // RMS current ≥ 10 mA: 9 mA fails by 1 mA at the min, relative −0.1.
  const Limit rms{0.010, std::nullopt};
  const FigureDecision r = simple(0.009, rms);
  EXPECT_EQ(r.verdict, LotVerdict::fail);
  EXPECT_TRUE(r.at_min);
  EXPECT_NEAR(r.margin, -0.001, kTol);
  EXPECT_NEAR(r.relative_margin, -0.1, kTol);

  // A one-sided limit of 0 gives no scale: the relative margin is the margin itself.
  const FigureDecision zero = simple(-0.25, Limit{std::nullopt, 0.0});
  EXPECT_EQ(zero.verdict, LotVerdict::pass);
  EXPECT_EQ(zero.relative_margin, 0.25);
}

FigureDecision figure(LotVerdict v, double relative_margin) {
  FigureDecision f;
  f.verdict = v;
  f.margin = relative_margin;
  f.relative_margin = relative_margin;
  return f;
}

TEST(LotUnit, EmptyPassesWithoutDecidingFigure) {
  const UnitDecision u = decide_unit({});
  EXPECT_EQ(u.verdict, LotVerdict::pass);
  EXPECT_FALSE(u.deciding.has_value());
}

TEST(LotUnit, WorstVerdictAndClosestFigureDecide) {
  using V = LotVerdict;
  // All pass: the one closest to its limit (0.1) decides.
  UnitDecision u = decide_unit({figure(V::pass, 0.5), figure(V::pass, 0.1), figure(V::pass, 0.3)});
  EXPECT_EQ(u.verdict, V::pass);
  EXPECT_EQ(u.deciding, 1u);

  // A conditional beats any pass, however close the pass.
  u = decide_unit({figure(V::pass, 0.01), figure(V::conditional, 0.2), figure(V::pass, 0.5)});
  EXPECT_EQ(u.verdict, V::conditional);
  EXPECT_EQ(u.deciding, 1u);

  // Among conditionals, the smallest margin (negative before positive).
  u = decide_unit({figure(V::conditional, 0.05), figure(V::conditional, -0.02)});
  EXPECT_EQ(u.verdict, V::conditional);
  EXPECT_EQ(u.deciding, 1u);

  // One fail beats conditionals; of two fails the most negative decides.
  u = decide_unit({figure(V::conditional, -0.3), figure(V::fail, -0.1), figure(V::pass, 0.4),
                   figure(V::fail, -0.6), figure(V::conditional, 0.0)});
  EXPECT_EQ(u.verdict, V::fail);
  EXPECT_EQ(u.deciding, 3u);

  // A tie keeps the first.
  u = decide_unit({figure(V::fail, -0.2), figure(V::fail, -0.2)});
  EXPECT_EQ(u.deciding, 0u);
}

TEST(LotUnit, NotMeasuredRanksBetweenFailAndConditional) {
  using V = LotVerdict;
  UnitDecision u = decide_unit(
      {figure(V::conditional, -0.1), figure(V::not_measured, 0.0), figure(V::not_measured, -5.0)});
  EXPECT_EQ(u.verdict, V::not_measured);
  EXPECT_EQ(u.deciding, 1u);  // the margin of an unmeasured figure means nothing: the first
  u = decide_unit({figure(V::not_measured, 0.0), figure(V::fail, 0.0)});
  EXPECT_EQ(u.verdict, V::fail);
  EXPECT_EQ(u.deciding, 1u);
}

TEST(LotUnit, FiguresInDifferentUnitsRankByRelativeMargin) {
  // RMS current 12.2 mA against [10 mA, 12 mA]: margin −0.2 mA = −0.0002 A, relative
  // −0.2 mA / 1 mA = −0.2. Burning voltage 1210 V against [1000 V, 1200 V]: margin −10 V,
  // relative −10 V / 100 V = −0.1. The raw margins (−0.0002 vs −10) would name the voltage;
  // as a share of its tolerance the current is the worse miss.
  const FigureDecision current = simple(0.0122, Limit{0.010, 0.012});
  const FigureDecision voltage = simple(1210.0, Limit{1000.0, 1200.0});
  EXPECT_NEAR(current.margin, -0.0002, kTol);
  EXPECT_NEAR(current.relative_margin, -0.2, kTol);
  EXPECT_EQ(voltage.margin, -10.0);
  EXPECT_EQ(voltage.relative_margin, -0.1);
  const UnitDecision u = decide_unit({voltage, current});
  EXPECT_EQ(u.verdict, LotVerdict::fail);
  EXPECT_EQ(u.deciding, 1u);
}

// Hand-worked lot: six values [mA] in lot order, limits [9.4, 10.25] mA.
//   x       = 10.2, 9.8, 10.1, 10.3, 9.9, 9.7
//   mean    = 60.0 / 6 = 10.0
//   x − x̄   = 0.2, −0.2, 0.1, 0.3, −0.1, −0.3; squares 0.04, 0.04, 0.01, 0.09, 0.01, 0.09
//   Σ = 0.28; s² = 0.28 / 5 = 0.056; sd = √0.056 = 0.2366432
//   MR      = 0.4, 0.3, 0.2, 0.4, 0.2; Σ = 1.5; MR̄ = 1.5 / 5 = 0.3
//   σ_within = 0.3 / 1.128 = 0.2659574
//   Cp  = (10.25 − 9.4) / (6 · 0.2659574) = 0.85 · 1.128 / 1.8 = 0.5326667
//   Cpk = min(10.25 − 10, 10 − 9.4) / (3 σw) = 0.25 · 1.128 / 0.9 = 0.3133333 (upper side)
//   Pp  = 0.85 / (6 · 0.2366432) = 0.85 / 1.4198592 = 0.5986509
//   Ppk = 0.25 / (3 · 0.2366432) = 0.25 / 0.7099296 = 0.3521476
//   yield: 10.3 > 10.25, the other five inside: 5/6
//   chart: UCL = 10 + 3 · 0.2659574 = 10.7978723, LCL = 9.2021277; MR̄ = 0.3,
//          MR UCL = 3.267 · 0.3 = 0.9801; nothing beyond.
// numpy 1.24.2: np.std(x, ddof=1) = 0.2366431913239847, np.abs(np.diff(x)).mean() = 0.3.
const std::vector<double> kLot{10.2, 9.8, 10.1, 10.3, 9.9, 9.7};

TEST(LotStatistics, HandWorkedTwoSided) {
  const FigureStats s = lot_statistics(kLot, Limit{9.4, 10.25});
  EXPECT_EQ(s.count, 6u);
  EXPECT_NEAR(s.mean, 10.0, kTol);
  EXPECT_NEAR(s.sd, std::sqrt(0.056), kTol);
  EXPECT_NEAR(s.sd, 0.2366431913239847, kTol);
  EXPECT_EQ(s.min, 9.7);
  EXPECT_EQ(s.max, 10.3);
  EXPECT_NEAR(s.yield, 5.0 / 6.0, kTol);
  EXPECT_NEAR(s.sigma_within, 0.3 / 1.128, kTol);
  ASSERT_TRUE(s.cp && s.cpk && s.pp && s.ppk);
  EXPECT_NEAR(*s.cp, 0.5326666666666667, kTol);
  EXPECT_NEAR(*s.cpk, 0.3133333333333333, kTol);
  EXPECT_NEAR(*s.pp, 0.5986509304326988, kTol);
  EXPECT_NEAR(*s.ppk, 0.3521476061368818, kTol);

  ASSERT_TRUE(s.chart);
  EXPECT_NEAR(s.chart->center, 10.0, kTol);
  EXPECT_NEAR(s.chart->ucl, 10.797872340425531, kTol);
  EXPECT_NEAR(s.chart->lcl, 9.202127659574469, kTol);
  EXPECT_NEAR(s.chart->mr_center, 0.3, kTol);
  EXPECT_NEAR(s.chart->mr_ucl, 0.9801, kTol);
  EXPECT_TRUE(s.chart->beyond.empty());
  EXPECT_TRUE(s.chart->mr_beyond.empty());
  // 3/d2 = 2.6596, the tabulated E2 = 2.660 to its printed precision.
  EXPECT_NEAR((s.chart->ucl - s.chart->center) / s.chart->mr_center, 2.660, 5e-4);
}

TEST(LotStatistics, HandWorkedLowerLimitOnly) {
  // The same lot against min 9.4 mA only: Cp and Pp need two limits; Cpk = Cpl =
  // (10 − 9.4) / (3 · 0.2659574) = 0.6 · 1.128 / 0.9 = 0.752; Ppk = 0.6 / 0.7099296 = 0.8451543.
  // numpy: 0.6 / (3 * np.std(x, ddof=1)) = 0.8451542547285164.
  const FigureStats s = lot_statistics(kLot, Limit{9.4, std::nullopt});
  EXPECT_FALSE(s.cp);
  EXPECT_FALSE(s.pp);
  ASSERT_TRUE(s.cpk && s.ppk);
  EXPECT_NEAR(*s.cpk, 0.752, kTol);
  EXPECT_NEAR(*s.ppk, 0.8451542547285164, kTol);
  EXPECT_EQ(s.yield, 1.0);
}

TEST(LotStatistics, OrderMattersForWithinSigmaOnly) {
  // Sorted, the same values have moving ranges 0.1, 0.1, 0.2, 0.1, 0.1: MR̄ = 0.6 / 5 = 0.12,
  // σ_within = 0.12 / 1.128 = 0.1063830; the sd (0.2366432) does not change.
  const FigureStats s = lot_statistics({9.7, 9.8, 9.9, 10.1, 10.2, 10.3}, Limit{9.4, 10.25});
  EXPECT_NEAR(s.sigma_within, 0.12 / 1.128, kTol);
  EXPECT_NEAR(s.sd, std::sqrt(0.056), kTol);
}

TEST(LotStatistics, ShiftedUnitBeyondBothCharts) {
  // Nine units at 10 mA, the tenth at 12 mA; upper limit 11 mA only.
  //   mean = (9 · 10 + 12) / 10 = 10.2
  //   x − x̄ = −0.2 (×9), 1.8; Σ² = 9 · 0.04 + 3.24 = 3.6; s² = 3.6 / 9 = 0.4; sd = 0.6324555
  //   MR = 0 (×8), 2; MR̄ = 2 / 9 = 0.2222222; σ_within = 0.2222222 / 1.128 = 0.1970055
  //   Cpk = Cpu = (11 − 10.2) / (3 · 0.1970055) = 0.8 · 1.128 · 9 / 6 = 1.3536
  //   Ppk = Ppu = 0.8 / (3 · 0.6324555) = 0.4216370
  //   UCL = 10.2 + 3 · 0.1970055 = 10.7910165, LCL = 9.6089835: unit 9 beyond
  //   MR UCL = 3.267 · 2 / 9 = 0.726; MR of unit 9 = 2 beyond
  // Cpk ≫ Ppk: the within σ does not see the step that the overall sd holds.
  // numpy 1.24.2: np.std(y, ddof=1) = 0.6324555320336759, ppk = 0.4216370213557843.
  std::vector<double> y(9, 10.0);
  y.push_back(12.0);
  const FigureStats s = lot_statistics(y, Limit{std::nullopt, 11.0});
  EXPECT_NEAR(s.mean, 10.2, kTol);
  EXPECT_NEAR(s.sd, std::sqrt(0.4), kTol);
  EXPECT_NEAR(s.sigma_within, 2.0 / 9.0 / 1.128, kTol);
  EXPECT_NEAR(s.yield, 0.9, kTol);
  EXPECT_FALSE(s.cp);
  ASSERT_TRUE(s.cpk && s.ppk);
  EXPECT_NEAR(*s.cpk, 1.3536, kTol);
  EXPECT_NEAR(*s.ppk, 0.4216370213557843, kTol);
  ASSERT_TRUE(s.chart);
  EXPECT_NEAR(s.chart->ucl, 10.791016548463356, kTol);
  EXPECT_NEAR(s.chart->lcl, 9.608983451536643, kTol);
  EXPECT_NEAR(s.chart->mr_ucl, 0.726, kTol);
  EXPECT_EQ(s.chart->beyond, std::vector<std::size_t>{9});
  EXPECT_EQ(s.chart->mr_beyond, std::vector<std::size_t>{9});

  // Against max 10 mA the nine units on the limit count as within (closed limit): yield 0.9;
  // the mean 10.2 lies outside, so Cpk = (10 − 10.2) / (3 · 0.1970055) = −0.3384.
  const FigureStats at = lot_statistics(y, Limit{std::nullopt, 10.0});
  EXPECT_NEAR(at.yield, 0.9, kTol);
  ASSERT_TRUE(at.cpk);
  EXPECT_NEAR(*at.cpk, -0.2 * 1.128 * 9.0 / 6.0, kTol);
}

TEST(LotStatistics, TextbookCapabilityFigures) {
  // From memory, NIST/SEMATECH e-Handbook of Statistical Methods, process capability
  // (section 6.1.6): USL = 20, LSL = 8, μ = 16, σ = 2 give Cp = 12/12 = 1.00 and
  // Cpk = min(4, 8)/6 = 0.667. The three values 14, 16, 18 (my own) have mean 16 and
  // sd √((4 + 0 + 4)/2) = 2, so the performance indices must reproduce those figures:
  // Pp = 1.00, Ppk = 0.6667. Their within σ is MR̄/d2 = 2/1.128 = 1.7730, so
  // Cp = 12 · 1.128 / 12 = 1.128 and Cpk = 4 · 1.128 / 6 = 0.752.
  const FigureStats s = lot_statistics({14.0, 16.0, 18.0}, Limit{8.0, 20.0});
  ASSERT_TRUE(s.cp && s.cpk && s.pp && s.ppk);
  EXPECT_NEAR(*s.pp, 1.0, kTol);
  EXPECT_NEAR(*s.ppk, 2.0 / 3.0, kTol);
  EXPECT_NEAR(*s.cp, 1.128, kTol);
  EXPECT_NEAR(*s.cpk, 0.752, kTol);
}

TEST(LotStatistics, EmptyAndSingleValue) {
  const FigureStats none = lot_statistics({}, kBand);
  EXPECT_EQ(none.count, 0u);
  EXPECT_EQ(none.yield, 0.0);
  EXPECT_FALSE(none.cpk);
  EXPECT_FALSE(none.chart);

  // One value: mean, min and max are it; no sd, no moving range, no index, no chart.
  const FigureStats one = lot_statistics({3.5}, kBand);
  EXPECT_EQ(one.count, 1u);
  EXPECT_EQ(one.mean, 3.5);
  EXPECT_EQ(one.min, 3.5);
  EXPECT_EQ(one.max, 3.5);
  EXPECT_EQ(one.sd, 0.0);
  EXPECT_EQ(one.sigma_within, 0.0);
  EXPECT_EQ(one.yield, 1.0);
  EXPECT_FALSE(one.cp || one.cpk || one.pp || one.ppk);
  EXPECT_FALSE(one.chart);
  EXPECT_EQ(lot_statistics({7.0}, kBand).yield, 0.0);
}

TEST(LotStatistics, AllEqualValuesLeaveIndicesUnset) {
  // Seven times 0.1: the running sum over 7 gives 0.09999999999999999, not 0.1, in double
  // precision, so the mean and sd are taken exactly for equal values; σ = 0 leaves every index
  // unset.
  const std::vector<double> same(7, 0.1);
  const FigureStats s = lot_statistics(same, Limit{0.0, 1.0});
  EXPECT_EQ(s.mean, 0.1);
  EXPECT_EQ(s.sd, 0.0);
  EXPECT_EQ(s.sigma_within, 0.0);
  EXPECT_EQ(s.yield, 1.0);
  EXPECT_FALSE(s.cp || s.cpk || s.pp || s.ppk);
  ASSERT_TRUE(s.chart);  // a chart still exists, collapsed onto the value
  EXPECT_EQ(s.chart->ucl, 0.1);
  EXPECT_EQ(s.chart->lcl, 0.1);
  EXPECT_EQ(s.chart->mr_ucl, 0.0);
  EXPECT_TRUE(s.chart->beyond.empty());
  EXPECT_TRUE(s.chart->mr_beyond.empty());
}

TEST(LotStatistics, RejectsBadInput) {
  EXPECT_THROW(lot_statistics({1.0, 2.0}, Limit{}), std::invalid_argument);
  EXPECT_THROW(lot_statistics({1.0, std::nan("")}, kBand), std::invalid_argument);
}

}  // namespace
}  // namespace lopside
