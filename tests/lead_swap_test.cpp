// The lead-swap split on hand-made summaries: the decomposition (DOMAIN.md, lead-swap test),
// the GUM propagation of each capture's scatter and of the shared probe's tolerances, the
// verdict rule and the confidence rule (README.md "lopside swap").
#include "lopside/lead_swap.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <optional>
#include <string>

namespace lopside {
namespace {

constexpr double kMa = 1e-3;
constexpr double kUa = 1e-6;

// A 32 kHz capture of 17 mA AC RMS (25 mA peak sine: 25/√2 ≈ 17.7 mA) with the given DC offset
// and per-capture standard uncertainty u_dc [A] of infinite degrees of freedom (so every
// combination below has k = 2, GUM 6.3.3). The charge asymmetry follows from the DC unless
// given: Q+ − Q− = DC·T per cycle, so A = DC·T/(Q+ + Q−), and likewise its uncertainty.
SwapCapture capture(double dc_a, double u_dc_a, std::optional<double> asymmetry = std::nullopt,
                    std::optional<double> u_asym = std::nullopt, double frequency_hz = 32000,
                    double ac_rms_a = 0.017) {
  SwapCapture c;
  CycleSummary& s = c.summary;
  // Q+ + Q− of a 25 mA sine: 2·(2A/π)·(T/2) = 2A·T/π ≈ 0.497 µC per cycle at 32 kHz.
  const double period_s = 1 / frequency_hz;
  const double q = 2 * 0.025 / M_PI * period_s;
  const double a = asymmetry.value_or(dc_a * period_s / q);
  const double u_a = u_asym.value_or(u_dc_a * period_s / q);
  s.cycles = 160;
  s.fundamental_hz = {frequency_hz, 0.1, 2};
  s.dc_offset_a = {dc_a, 2 * u_dc_a, 2};
  s.charge_asymmetry = {a, 2 * u_a, 2};
  s.ac_rms_a = {ac_rms_a, 1e-5, 2};
  s.charge_positive_c = {q / 2 * (1 + a), 0, 2};
  s.charge_negative_c = {q / 2 * (1 - a), 0, 2};
  c.dc_type_a = {u_dc_a, 1e300};
  c.asymmetry_type_a = {u_a, 1e300};
  return c;
}

SwapProbe probe_on(ProbeOn on, double offset_a = 0, double gain_pct = 0) {
  SwapProbe p;
  p.on = on;
  p.offset_a = offset_a;
  p.gain_pct = gain_pct;
  return p;
}

bool has_warning(const LeadSwapResult& r, const std::string& part) {
  for (const auto& w : r.warnings) {
    if (w.find(part) != std::string::npos) return true;
  }
  return false;
}

const Evidence* evidence(const LeadSwapResult& r, const std::string& code) {
  for (const auto& e : r.evidence) {
    if (e.code == code) return &e;
  }
  return nullptr;
}

// --- decomposition ------------------------------------------------------------------------

TEST(LeadSwap, ProbeOnElectrodeSplitsIntoHalfDifferenceAndHalfSum) {
  // DOMAIN.md: N = D + E, S = −D + E, so D = (N − S)/2 and E = (N + S)/2.
  // N = +3 mA, S = −1 mA → D = 2 mA, E = 1 mA; asymmetry 0.10 and −0.02 → 0.06 and 0.04.
  const auto r = analyse_lead_swap(capture(3 * kMa, 1 * kUa, 0.10),
                                   capture(-1 * kMa, 1 * kUa, -0.02), probe_on(ProbeOn::electrode));
  EXPECT_NEAR(r.driver_bias_a.value, 2 * kMa, 1e-15);
  EXPECT_NEAR(r.electrode_bias_a.value, 1 * kMa, 1e-15);
  EXPECT_NEAR(r.driver_asymmetry.value, 0.06, 1e-15);
  EXPECT_NEAR(r.electrode_asymmetry.value, 0.04, 1e-15);
  EXPECT_EQ(r.probe_on, ProbeOn::electrode);
}

TEST(LeadSwap, ProbeOnSupplySplitsTheOtherWayRound) {
  // The supply's part stays with the probed terminal, the electrodes' part reverses:
  // N = D + E, S = D − E, so D = (N + S)/2 = 1 mA and E = (N − S)/2 = 2 mA.
  const auto r = analyse_lead_swap(capture(3 * kMa, 1 * kUa, 0.10),
                                   capture(-1 * kMa, 1 * kUa, -0.02), probe_on(ProbeOn::supply));
  EXPECT_NEAR(r.driver_bias_a.value, 1 * kMa, 1e-15);
  EXPECT_NEAR(r.electrode_bias_a.value, 2 * kMa, 1e-15);
  EXPECT_NEAR(r.driver_asymmetry.value, 0.04, 1e-15);
  EXPECT_NEAR(r.electrode_asymmetry.value, 0.06, 1e-15);
  EXPECT_STREQ(to_string(r.probe_on), "supply");
}

// --- uncertainty --------------------------------------------------------------------------

TEST(LeadSwap, ScatterOfTwoIndependentCapturesCombinesAsHalfTheQuadratureSum) {
  // GUM 5.1.2, sensitivities ±½: u = ½·√(uN² + uS²); k = 2 (infinite ν, GUM 6.3.3).
  const double u_n = 10 * kUa, u_s = 20 * kUa;
  const auto r = analyse_lead_swap(capture(3 * kMa, u_n), capture(-1 * kMa, u_s),
                                   probe_on(ProbeOn::electrode));
  const double u = 0.5 * std::hypot(u_n, u_s);
  EXPECT_NEAR(r.driver_bias_a.u95, 2 * u, 1e-12);
  EXPECT_NEAR(r.electrode_bias_a.u95, 2 * u, 1e-12);
  EXPECT_DOUBLE_EQ(r.driver_bias_a.coverage_k, 2.0);
}

TEST(LeadSwap, ProbeOffsetCancelsInTheDifferenceAndAddsFullyToTheSum) {
  // One probe in both captures: its offset δ (±0.3 mA rectangular, u = a/√3, GUM 4.3.7) moves
  // N and S alike (correlation +1, GUM 5.2.2), so (N − S)/2 has sensitivity 0 to it and
  // (N + S)/2 sensitivity 1. The gain tolerance ±1 % (u = 0.01/√3, relative) scales each part.
  const double u_n = 10 * kUa, u_s = 20 * kUa;
  const double offset = 0.3 * kMa, gain_pct = 1.0;
  const double u_off = offset / std::sqrt(3.0), g = 0.01 / std::sqrt(3.0);
  const double stat2 = 0.25 * (u_n * u_n + u_s * u_s);
  const SwapCapture n = capture(3 * kMa, u_n), s = capture(-1 * kMa, u_s);

  const auto electrode = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode, offset, gain_pct));
  const double d = 2 * kMa, e = 1 * kMa;
  EXPECT_NEAR(electrode.driver_bias_a.u95, 2 * std::sqrt(stat2 + g * g * d * d), 1e-12);
  EXPECT_NEAR(electrode.electrode_bias_a.u95, 2 * std::sqrt(stat2 + u_off * u_off + g * g * e * e),
              1e-12);
  // Without the gain tolerance the offset leaves the difference exactly as the scatter made it.
  const auto offset_only = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode, offset, 0));
  const auto plain = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode));
  EXPECT_DOUBLE_EQ(offset_only.driver_bias_a.u95, plain.driver_bias_a.u95);
  EXPECT_GT(offset_only.electrode_bias_a.u95, plain.electrode_bias_a.u95);

  // Probe on the supply terminal: the sum is now D (1 mA) and carries the offset.
  const auto supply = analyse_lead_swap(n, s, probe_on(ProbeOn::supply, offset, gain_pct));
  EXPECT_NEAR(supply.driver_bias_a.u95, 2 * std::sqrt(stat2 + u_off * u_off + g * g * 1e-6), 1e-12);
  EXPECT_NEAR(supply.electrode_bias_a.u95, 2 * std::sqrt(stat2 + g * g * 4e-6), 1e-12);

  // Each capture alone carries the whole offset and its own gain part, as `measure` states it.
  EXPECT_NEAR(electrode.normal_dc_a.u95, 2 * std::sqrt(u_n * u_n + u_off * u_off + g * g * 9e-6),
              1e-12);
  EXPECT_NEAR(electrode.swapped_dc_a.u95, 2 * std::sqrt(u_s * u_s + u_off * u_off + g * g * 1e-6),
              1e-12);
}

TEST(LeadSwap, AsymmetryOffsetPartUsesEachCapturesSensitivity) {
  // ∂A/∂δ ≈ T/(Q+ + Q−) per capture (the cycle engine's rule). For a sine of peak A this is
  // π/(2A) whatever the frequency (T cancels); a swapped capture carrying 10 % less charge has
  // a sensitivity larger by 1/0.9, so the correlated offset enters (c_N − c_S)/2 and
  // (c_N + c_S)/2 (GUM 5.2.2, r = +1). The gain cancels in a ratio.
  const double u_a = 1e-4, offset = 0.2 * kMa;
  const SwapCapture n = capture(0, 1 * kUa, 0.05, u_a);
  SwapCapture s = capture(0, 1 * kUa, -0.01, u_a);
  s.summary.charge_positive_c.value *= 0.9;
  s.summary.charge_negative_c.value *= 0.9;
  const double c_n = M_PI / (2 * 0.025), c_s = c_n / 0.9, u_off = offset / std::sqrt(3.0);
  const auto r = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode, offset, 5.0));
  const double stat2 = 0.25 * (u_a * u_a + u_a * u_a);
  const double diff_off = 0.5 * (c_s - c_n) * u_off, sum_off = 0.5 * (c_n + c_s) * u_off;
  EXPECT_NEAR(r.driver_asymmetry.u95, 2 * std::sqrt(stat2 + diff_off * diff_off), 1e-9);
  EXPECT_NEAR(r.electrode_asymmetry.u95, 2 * std::sqrt(stat2 + sum_off * sum_off), 1e-9);
  EXPECT_NEAR(r.normal_asymmetry.u95, 2 * std::hypot(u_a, c_n * u_off), 1e-9);
  // Like-for-like captures: the offset cancels in the difference.
  const auto same =
      analyse_lead_swap(n, capture(0, 1 * kUa, -0.01, u_a), probe_on(ProbeOn::electrode, offset));
  EXPECT_NEAR(same.driver_asymmetry.u95, 2 * std::sqrt(stat2), 1e-9);
}

TEST(LeadSwap, StatisticalPartRecoversStandardUncertaintyAndDegreesOfFreedom) {
  // Student t95 table: t(9) = 2.262 (any statistics handbook; GUM table G.2 for 95.45 %).
  const UncertaintyComponent few = statistical_part(Estimate{1.0, 2.262 * 3e-6, 2.262});
  EXPECT_NEAR(few.standard, 3e-6, 1e-15);
  EXPECT_NEAR(few.dof, 9.0, 1e-6);
  // k = 2 is what combine() gives for ν ≥ 30 (GUM 6.3.3); 30 is the conservative reading.
  const UncertaintyComponent many = statistical_part(Estimate{1.0, 4e-6, 2.0});
  EXPECT_NEAR(many.standard, 2e-6, 1e-18);
  EXPECT_DOUBLE_EQ(many.dof, 30.0);
}

TEST(LeadSwap, FewDegreesOfFreedomWidenTheCoverageFactor) {
  // Two captures of ν = 9 each, equal u: Welch–Satterthwaite (GUM G.4.1) gives ν_eff = 18,
  // t95(18) = 2.101.
  SwapCapture n = capture(1 * kMa, 5 * kUa), s = capture(-1 * kMa, 5 * kUa);
  n.dc_type_a.dof = 9;
  s.dc_type_a.dof = 9;
  const auto r = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode));
  EXPECT_NEAR(r.driver_bias_a.coverage_k, 2.101, 1e-9);
  EXPECT_NEAR(r.driver_bias_a.u95, 2.101 * 0.5 * std::sqrt(2.0) * 5 * kUa, 1e-12);
}

TEST(LeadSwap, NegativeToleranceIsAProgrammingError) {
  EXPECT_THROW(
      analyse_lead_swap(capture(0, 1e-6), capture(0, 1e-6), probe_on(ProbeOn::electrode, -1e-3)),
      std::invalid_argument);
}

// --- verdicts -----------------------------------------------------------------------------

TEST(LeadSwap, BiasThatReversesWithTheLeadsIsDriverImbalance) {
  const auto r = analyse_lead_swap(capture(1 * kMa, 2 * kUa), capture(-1 * kMa, 2 * kUa),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::driver_imbalance);
  ASSERT_EQ(r.deciding.size(), 1u);
  EXPECT_EQ(r.deciding[0], "driver_bias");
  EXPECT_TRUE(r.warnings.empty());
}

TEST(LeadSwap, BiasThatStaysIsSelfRectification) {
  const auto r = analyse_lead_swap(capture(1 * kMa, 2 * kUa, 0.03), capture(1 * kMa, 2 * kUa, 0.03),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::self_rectification);
  // E > 0: net current into the probed electrode A, so B is the preferred cathode.
  ASSERT_FALSE(r.next_steps.empty());
  EXPECT_NE(r.next_steps[0].find("electrode B is the preferred cathode"), std::string::npos)
      << r.next_steps[0];
  // E < 0: net current out of A, so A is the preferred cathode.
  const auto reversed = analyse_lead_swap(capture(-1 * kMa, 2 * kUa), capture(-1 * kMa, 2 * kUa),
                                          probe_on(ProbeOn::electrode));
  EXPECT_EQ(reversed.verdict, Verdict::self_rectification);
  EXPECT_NE(reversed.next_steps[0].find("so A is the preferred cathode"), std::string::npos)
      << reversed.next_steps[0];
  // The same pair seen from a supply terminal is a pure supply part.
  const auto supply = analyse_lead_swap(capture(1 * kMa, 2 * kUa, 0.03),
                                        capture(1 * kMa, 2 * kUa, 0.03), probe_on(ProbeOn::supply));
  EXPECT_EQ(supply.verdict, Verdict::driver_imbalance);
}

TEST(LeadSwap, BothPartsAreMixed) {
  const auto r = analyse_lead_swap(capture(3 * kMa, 2 * kUa), capture(-1 * kMa, 2 * kUa),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::mixed);
  EXPECT_EQ(r.next_steps.size(), 2u);
}

TEST(LeadSwap, APartUnderTenPercentOfTheWholeDoesNotCount) {
  // E = 0.08 mA against D = 1 mA: significant (u95 ≈ 3 µA) but 7.4 % of |D| + |E|.
  const auto small = analyse_lead_swap(capture(1.08 * kMa, 2 * kUa), capture(-0.92 * kMa, 2 * kUa),
                                       probe_on(ProbeOn::electrode));
  EXPECT_EQ(small.verdict, Verdict::driver_imbalance);
  EXPECT_NE(evidence(small, "electrode_bias")->text.find("does not count"), std::string::npos);
  // E = 0.15 mA: 13 % of the whole, it counts.
  const auto large = analyse_lead_swap(capture(1.15 * kMa, 2 * kUa), capture(-0.85 * kMa, 2 * kUa),
                                       probe_on(ProbeOn::electrode));
  EXPECT_EQ(large.verdict, Verdict::mixed);
}

TEST(LeadSwap, NoPartWithFineResolutionIsSymmetric) {
  // Parts of +1.5 µA and +0.5 µA within u95 = 2·½√2·5 µA = 7.1 µA, far below 1 % of 17 mA.
  const auto r = analyse_lead_swap(capture(2 * kUa, 5 * kUa), capture(-1 * kUa, 5 * kUa),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::symmetric);
  // Rule: 1 − u95/(1 % of the AC RMS) = 1 − 7.07 µA / 170 µA.
  EXPECT_NEAR(r.confidence, 1 - std::sqrt(2.0) * 5 * kUa / (0.01 * 0.017), 1e-9);
}

TEST(LeadSwap, NoPartWithCoarseResolutionIsInconclusive) {
  // u95 of the parts = √2·1 mA, 8 % of the AC RMS: a part could hide in it.
  const auto r = analyse_lead_swap(capture(0.2 * kMa, 1 * kMa), capture(0.1 * kMa, 1 * kMa),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::inconclusive);
  EXPECT_DOUBLE_EQ(r.confidence, 0.0);
  ASSERT_EQ(r.deciding.size(), 1u);
  EXPECT_EQ(r.deciding[0], "resolution");
}

TEST(LeadSwap, ClippingInEitherCaptureIsInconclusiveWhateverTheParts) {
  SwapCapture s = capture(-1 * kMa, 2 * kUa);
  s.summary.clipped_negative = 40;
  const auto r = analyse_lead_swap(capture(1 * kMa, 2 * kUa), s, probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::inconclusive);
  EXPECT_DOUBLE_EQ(r.confidence, 0.0);
  ASSERT_EQ(r.deciding.size(), 1u);
  EXPECT_EQ(r.deciding[0], "clipped_swapped");
  EXPECT_DOUBLE_EQ(evidence(r, "clipped_swapped")->value, 40.0);
  EXPECT_NE(r.next_steps[0].find("range"), std::string::npos);
}

// --- confidence and mismatch --------------------------------------------------------------

TEST(LeadSwap, ConfidenceFollowsTheStatedRule) {
  // D = 1 mA, u95(D) = 2·½√2·u. u = 17.68 µA gives u95 = 50 µA: z = 20, 1 − 1/z = 0.95, and
  // E = 0 with u95 50 µA cannot reach 10 % of 1 mA, so nothing halves it.
  const double u_fine = 0.05 * kMa / std::sqrt(2.0);
  const auto fine = analyse_lead_swap(capture(1 * kMa, u_fine), capture(-1 * kMa, u_fine),
                                      probe_on(ProbeOn::electrode));
  EXPECT_EQ(fine.verdict, Verdict::driver_imbalance);
  EXPECT_NEAR(fine.confidence, 0.95, 1e-9);
  // u95 = 200 µA: z = 5 gives 0.8, and E's 0 + 200 µA reaches 100 µA, so E could still count:
  // halved to 0.4.
  const double u_coarse = 0.2 * kMa / std::sqrt(2.0);
  const auto coarse = analyse_lead_swap(capture(1 * kMa, u_coarse), capture(-1 * kMa, u_coarse),
                                        probe_on(ProbeOn::electrode));
  EXPECT_EQ(coarse.verdict, Verdict::driver_imbalance);
  EXPECT_NEAR(coarse.confidence, 0.4, 1e-9);
}

TEST(LeadSwap, DifferentFundamentalIsInconclusive) {
  // Issue 9, item 8: fundamentals apart by more than max(2 %, combined relative u95) cannot be
  // one unit on one load, so no cause is drawn however clear the parts.
  const double u = 0.05 * kMa / std::sqrt(2.0);
  const auto same =
      analyse_lead_swap(capture(1 * kMa, u), capture(-1 * kMa, u), probe_on(ProbeOn::electrode));
  EXPECT_EQ(same.verdict, Verdict::driver_imbalance);
  EXPECT_FALSE(has_warning(same, "same unit"));
  // 32 against 33 kHz: |Δf| / mean = 1/32.5 = 3.1 % > 2 % (u95 of 0.1 Hz each is far below).
  const auto other = analyse_lead_swap(capture(1 * kMa, u),
                                       capture(-1 * kMa, u, std::nullopt, std::nullopt, 33000),
                                       probe_on(ProbeOn::electrode));
  EXPECT_EQ(other.verdict, Verdict::inconclusive);
  EXPECT_DOUBLE_EQ(other.confidence, 0.0);
  ASSERT_EQ(other.deciding.size(), 1u);
  EXPECT_EQ(other.deciding[0], "fundamental_mismatch");
  EXPECT_TRUE(has_warning(other, "may not be the same unit on the same load"));
  ASSERT_NE(evidence(other, "fundamental_mismatch"), nullptr);
  EXPECT_NEAR(evidence(other, "fundamental_mismatch")->value, 1000.0 / 32500.0, 1e-12);
  EXPECT_DOUBLE_EQ(evidence(other, "fundamental_mismatch")->threshold, 0.02);
  EXPECT_NE(other.next_steps[0].find("same unit and load"), std::string::npos);
  // 615/32307.5 = 1.9 % is within the limit: the cause stands, unchanged.
  const auto close = analyse_lead_swap(capture(1 * kMa, u),
                                       capture(-1 * kMa, u, std::nullopt, std::nullopt, 32615),
                                       probe_on(ProbeOn::electrode));
  EXPECT_EQ(close.verdict, Verdict::driver_imbalance);
  EXPECT_NEAR(close.confidence, same.confidence, 1e-12);
  EXPECT_FALSE(has_warning(close, "same unit"));
}

TEST(LeadSwap, FrequencyBarIsTheCombinedU95WhenLarger) {
  // Fundamentals known to ±1 kHz each (u95): combined √2 kHz over a mean of 32.5 kHz is 4.35 %,
  // larger than 2 %, so 32 against 33 kHz (3.1 %) is not shown to differ.
  const double u = 0.05 * kMa / std::sqrt(2.0);
  SwapCapture n = capture(1 * kMa, u);
  SwapCapture s = capture(-1 * kMa, u, std::nullopt, std::nullopt, 33000);
  n.summary.fundamental_hz.u95 = 1000;
  s.summary.fundamental_hz.u95 = 1000;
  const auto r = analyse_lead_swap(n, s, probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::driver_imbalance);
  ASSERT_NE(evidence(r, "fundamental_mismatch"), nullptr);
  EXPECT_NEAR(evidence(r, "fundamental_mismatch")->threshold, std::sqrt(2.0) * 1000 / 32500, 1e-12);
}

TEST(LeadSwap, DifferentAcRmsIsInconclusive) {
  // 17 against 22 mA: 5/19.5 = 25.6 % > 20 %: no cause. 17 against 20 mA: 3/18.5 = 16.2 %,
  // within 20 %: the cause stands with its confidence (z = 20 gives 0.95, as above).
  const double u = 0.05 * kMa / std::sqrt(2.0);
  const auto far = analyse_lead_swap(capture(1 * kMa, u),
                                     capture(-1 * kMa, u, std::nullopt, std::nullopt, 32000, 0.022),
                                     probe_on(ProbeOn::electrode));
  EXPECT_EQ(far.verdict, Verdict::inconclusive);
  EXPECT_DOUBLE_EQ(far.confidence, 0.0);
  ASSERT_EQ(far.deciding.size(), 1u);
  EXPECT_EQ(far.deciding[0], "ac_rms_mismatch");
  EXPECT_TRUE(has_warning(far, "AC RMS"));
  ASSERT_NE(evidence(far, "ac_rms_mismatch"), nullptr);
  EXPECT_NEAR(evidence(far, "ac_rms_mismatch")->value, 5.0 / 19.5, 1e-12);
  EXPECT_DOUBLE_EQ(evidence(far, "ac_rms_mismatch")->threshold, 0.20);
  const auto near = analyse_lead_swap(
      capture(1 * kMa, u), capture(-1 * kMa, u, std::nullopt, std::nullopt, 32000, 0.020),
      probe_on(ProbeOn::electrode));
  EXPECT_EQ(near.verdict, Verdict::driver_imbalance);
  EXPECT_NEAR(near.confidence, 0.95, 1e-9);
  EXPECT_FALSE(has_warning(near, "AC RMS"));
}

TEST(LeadSwap, ClippingAndMismatchBothDecide) {
  const double u = 0.05 * kMa / std::sqrt(2.0);
  SwapCapture s = capture(-1 * kMa, u, std::nullopt, std::nullopt, 20000, 0.034);
  s.summary.clipped_positive = 3;
  const auto r = analyse_lead_swap(capture(1 * kMa, u), s, probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::inconclusive);
  ASSERT_EQ(r.deciding.size(), 3u);
  EXPECT_EQ(r.deciding[0], "clipped_swapped");
  EXPECT_EQ(r.deciding[1], "fundamental_mismatch");
  EXPECT_EQ(r.deciding[2], "ac_rms_mismatch");
  ASSERT_EQ(r.next_steps.size(), 2u);  // the range, then the same unit and load
  EXPECT_NE(r.next_steps[0].find("range"), std::string::npos);
  EXPECT_NE(r.next_steps[1].find("same unit and load"), std::string::npos);
}

TEST(LeadSwap, AsymmetryDisagreeingWithTheDcLowersTheConfidence) {
  // DC parts say supply only; equal asymmetries say electrodes only.
  const double u = 0.05 * kMa / std::sqrt(2.0);
  const auto r = analyse_lead_swap(capture(1 * kMa, u, 0.02), capture(-1 * kMa, u, 0.02),
                                   probe_on(ProbeOn::electrode));
  EXPECT_EQ(r.verdict, Verdict::driver_imbalance);
  EXPECT_TRUE(has_warning(r, "disagree"));
  EXPECT_NEAR(r.confidence, 0.75 * 0.95, 1e-9);
}

// --- repeat of the normal capture (N, S, N') ------------------------------------------------

bool has_step(const LeadSwapResult& r, const std::string& part) {
  for (const auto& s : r.next_steps) {
    if (s.find(part) != std::string::npos) return true;
  }
  return false;
}

TEST(LeadSwapRepeat, RepeatWithinItsUncertaintyIsBiasReturnedAndTheSplitUsesTheMean) {
  // N = +1.000 mA, S = −1.000 mA, N' = +1.002 mA, each with u = 2 µA (ν = ∞).
  // N' − N = 2 µA; its u95 = 2·√(2² + 2²) µA = 5.66 µA (GUM 5.1.2, independent captures): within.
  // The normal used is (N + N')/2 = 1.001 mA with u = ½·√(2² + 2²) = 1.41 µA (GUM 4.2.1, 5.1.2),
  // so D = (1.001 + 1.000)/2 = 1.0005 mA and E = (1.001 − 1.000)/2 = 0.0005 mA, each with
  // u = ½·√(1.41² + 2²) = ½·√6 µA (against ½·√8 µA from N alone: the mean is the better normal).
  const double u = 2 * kUa;
  const auto r = analyse_lead_swap(capture(1.000 * kMa, u), capture(-1.000 * kMa, u),
                                   capture(1.002 * kMa, u), probe_on(ProbeOn::electrode));
  ASSERT_TRUE(r.repeat.has_value());
  EXPECT_EQ(r.repeat->outcome, RepeatOutcome::bias_returned);
  EXPECT_STREQ(to_string(r.repeat->outcome), "bias_returned");
  EXPECT_TRUE(r.repeat->mean_used);
  EXPECT_NEAR(r.repeat->difference_dc_a.value, 2 * kUa, 1e-12);
  EXPECT_NEAR(r.repeat->difference_dc_a.u95, 2 * std::sqrt(8.0) * kUa, 1e-12);
  EXPECT_NEAR(r.repeat->normal_used_dc_a.value, 1.001 * kMa, 1e-12);
  EXPECT_NEAR(r.repeat->normal_used_dc_a.u95, 2 * 0.5 * std::sqrt(8.0) * kUa, 1e-12);
  EXPECT_NEAR(r.driver_bias_a.value, 1.0005 * kMa, 1e-12);
  EXPECT_NEAR(r.electrode_bias_a.value, 0.0005 * kMa, 1e-12);
  EXPECT_NEAR(r.driver_bias_a.u95, 2 * 0.5 * std::sqrt(6.0) * kUa, 1e-12);
  EXPECT_NEAR(r.electrode_bias_a.u95, 2 * 0.5 * std::sqrt(6.0) * kUa, 1e-12);
  // The pair alone would have had ½·√8 µA: the repeat narrows the parts.
  const auto pair_only = analyse_lead_swap(capture(1.000 * kMa, u), capture(-1.000 * kMa, u),
                                           probe_on(ProbeOn::electrode));
  EXPECT_NEAR(pair_only.driver_bias_a.u95, 2 * 0.5 * std::sqrt(8.0) * kUa, 1e-12);
  EXPECT_FALSE(pair_only.repeat.has_value());
  // The cause stands; with the bias shown to come back, no step asks for a repeat.
  EXPECT_EQ(r.verdict, Verdict::driver_imbalance);
  EXPECT_FALSE(has_step(r, "NORMAL_AGAIN"));
  EXPECT_TRUE(has_step(pair_only, "NORMAL_AGAIN"));
  const Evidence* e = evidence(r, "repeat_changed");
  ASSERT_NE(e, nullptr);
  EXPECT_NE(e->text.find("came back"), std::string::npos) << e->text;
  // The materiality bar: kNegligibleDcShare (0.2 %) of the 17 mA AC RMS = 34 µA.
  EXPECT_NEAR(r.repeat->material_dc_a, 0.002 * 0.017, 1e-15);
  EXPECT_NEAR(e->threshold, 0.002 * 0.017, 1e-15);
  EXPECT_TRUE(r.warnings.empty()) << r.warnings.front();
}

TEST(LeadSwapRepeat, ProbeOffsetCancelsInTheRepeatDifference) {
  // One probe took N and N': its offset (±0.3 mA, u = a/√3, GUM 4.3.7) moves both alike
  // (GUM 5.2.2, r = +1), so N' − N carries none of it; its gain (±1 %) scales the difference.
  const double u = 2 * kUa, g = 0.01 / std::sqrt(3.0);
  const auto plain = analyse_lead_swap(capture(1.000 * kMa, u), capture(-1.000 * kMa, u),
                                       capture(1.004 * kMa, u), probe_on(ProbeOn::electrode));
  const auto probed =
      analyse_lead_swap(capture(1.000 * kMa, u), capture(-1.000 * kMa, u), capture(1.004 * kMa, u),
                        probe_on(ProbeOn::electrode, 0.3 * kMa, 1.0));
  ASSERT_TRUE(plain.repeat && probed.repeat);
  EXPECT_NEAR(probed.repeat->difference_dc_a.u95,
              2 * std::sqrt(2 * u * u + g * g * 4 * kUa * 4 * kUa), 1e-12);
  EXPECT_NEAR(plain.repeat->difference_dc_a.u95, 2 * std::sqrt(2.0) * u, 1e-12);
  // The repeat alone carries the whole offset, as `measure` would state it.
  EXPECT_NEAR(probed.repeat->again_dc_a.u95,
              2 * std::sqrt(u * u + 0.09 * kMa * kMa / 3 + g * g * 1.004 * 1.004 * kMa * kMa),
              1e-12);
}

TEST(LeadSwapRepeat, OppositeElectrodeBiasInTheRepeatIsInconclusive) {
  // A self-rectifying discharge whose preferred cathode flipped after N: E = +1 mA in N, then
  // −1 mA in S and in N'. N = +1 mA, S = −1 mA reads as a pure supply part (D = 1 mA), the
  // trap DOMAIN.md names; N' = −1 mA shows it: N' − N = −2 mA, far beyond its u95 (5.66 µA) and
  // the materiality bar (34 µA).
  const double u = 2 * kUa;
  const auto pair_only =
      analyse_lead_swap(capture(1 * kMa, u), capture(-1 * kMa, u), probe_on(ProbeOn::electrode));
  EXPECT_EQ(pair_only.verdict, Verdict::driver_imbalance);
  const auto r = analyse_lead_swap(capture(1 * kMa, u), capture(-1 * kMa, u), capture(-1 * kMa, u),
                                   probe_on(ProbeOn::electrode));
  ASSERT_TRUE(r.repeat.has_value());
  EXPECT_EQ(r.repeat->outcome, RepeatOutcome::bias_changed);
  EXPECT_FALSE(r.repeat->mean_used);
  EXPECT_EQ(r.verdict, Verdict::inconclusive);
  EXPECT_DOUBLE_EQ(r.confidence, 0.0);
  ASSERT_EQ(r.deciding.size(), 1u);
  EXPECT_EQ(r.deciding[0], "repeat_changed");
  const Evidence* e = evidence(r, "repeat_changed");
  ASSERT_NE(e, nullptr);
  EXPECT_NEAR(e->value, -2 * kMa, 1e-12);
  EXPECT_NEAR(e->threshold, 0.002 * 0.017, 1e-15);  // the bar, larger than the u95 here
  EXPECT_NE(e->text.find("did not come back"), std::string::npos) << e->text;
  EXPECT_NE(e->text.find("cannot be trusted"), std::string::npos) << e->text;
  EXPECT_TRUE(has_warning(r, "cannot be trusted"));
  EXPECT_TRUE(has_step(r, "settles"));
  // Without the mean, the split is the pair's own: shown, not trusted.
  EXPECT_NEAR(r.driver_bias_a.value, 1 * kMa, 1e-12);
  // The asymmetry follows the DC here (capture() derives it from the DC): it changed too.
  const Evidence* a = evidence(r, "repeat_asymmetry_changed");
  ASSERT_NE(a, nullptr);
  EXPECT_NE(a->text.find("did not come back"), std::string::npos) << a->text;
  EXPECT_FALSE(has_warning(r, "disagree about whether"));
}

TEST(LeadSwapRepeat, TheMaterialityBarSeparatesDriftFromChange) {
  // u = 2 µA: u95 of N' − N = 5.66 µA; the bar is 0.2 % of 17 mA = 34 µA (kNegligibleDcShare).
  const double u = 2 * kUa;
  const auto run = [&](double again_a) {
    return analyse_lead_swap(capture(1 * kMa, u), capture(-1 * kMa, u),
                             capture(1 * kMa + again_a, u), probe_on(ProbeOn::electrode));
  };
  // 30 µA: significant, under the bar: drifted. The normal used is the mean, its u widened by
  // the rectangular half-width 15 µA (u = 15/√3 µA, GUM 4.3.7): u(N̄) = √(1² + 1² + 75) µA.
  const auto drift = run(30 * kUa);
  ASSERT_TRUE(drift.repeat.has_value());
  EXPECT_EQ(drift.repeat->outcome, RepeatOutcome::bias_drifted);
  EXPECT_TRUE(drift.repeat->mean_used);
  EXPECT_NEAR(drift.repeat->normal_used_dc_a.value, 1.015 * kMa, 1e-12);
  EXPECT_NEAR(drift.repeat->normal_used_dc_a.u95, 2 * std::sqrt(2.0 + 75.0) * kUa, 1e-12);
  // D = (N̄ − S)/2 with u = ½·√(u(N̄)² + u(S)²) = ½·√(77 + 4) µA.
  EXPECT_NEAR(drift.driver_bias_a.value, 1.0075 * kMa, 1e-12);
  EXPECT_NEAR(drift.driver_bias_a.u95, 2 * 0.5 * std::sqrt(81.0) * kUa, 1e-12);
  EXPECT_EQ(drift.verdict, Verdict::driver_imbalance);
  EXPECT_TRUE(has_warning(drift, "materiality bar"));
  // 40 µA: significant and over the bar: changed, no cause.
  const auto change = run(40 * kUa);
  EXPECT_EQ(change.repeat->outcome, RepeatOutcome::bias_changed);
  EXPECT_EQ(change.verdict, Verdict::inconclusive);
  // 5 µA: within the u95 of 5.66 µA: returned.
  EXPECT_EQ(run(5 * kUa).repeat->outcome, RepeatOutcome::bias_returned);
  EXPECT_EQ(run(-6 * kUa).repeat->outcome, RepeatOutcome::bias_drifted);
}

TEST(LeadSwapRepeat, ARepeatThatIsNotTheSameSetUpIsInconclusive) {
  const double u = 2 * kUa;
  const SwapCapture n = capture(1 * kMa, u), s = capture(-1 * kMa, u);
  // 32 against 33 kHz: 1/32.5 = 3.1 % > 2 %, the pair's own bar.
  const auto freq = analyse_lead_swap(n, s, capture(1 * kMa, u, std::nullopt, std::nullopt, 33000),
                                      probe_on(ProbeOn::electrode));
  EXPECT_EQ(freq.repeat->outcome, RepeatOutcome::inconclusive);
  EXPECT_EQ(freq.verdict, Verdict::inconclusive);
  ASSERT_EQ(freq.deciding.size(), 1u);
  EXPECT_EQ(freq.deciding[0], "repeat_fundamental_mismatch");
  EXPECT_NEAR(evidence(freq, "repeat_fundamental_mismatch")->value, 1000.0 / 32500.0, 1e-12);
  EXPECT_TRUE(has_warning(freq, "the repeat and the first normal capture differ in fundamental"));
  EXPECT_TRUE(has_step(freq, "same unit and load as the first normal capture"));
  // 17 against 22 mA AC RMS: 5/19.5 = 25.6 % > 20 %.
  const auto rms =
      analyse_lead_swap(n, s, capture(1 * kMa, u, std::nullopt, std::nullopt, 32000, 0.022),
                        probe_on(ProbeOn::electrode));
  EXPECT_EQ(rms.verdict, Verdict::inconclusive);
  ASSERT_EQ(rms.deciding.size(), 1u);
  EXPECT_EQ(rms.deciding[0], "repeat_ac_rms_mismatch");
  EXPECT_NEAR(evidence(rms, "repeat_ac_rms_mismatch")->value, 5.0 / 19.5, 1e-12);
  // A clipped repeat fakes an asymmetry like any clipped capture.
  SwapCapture clipped = capture(1 * kMa, u);
  clipped.summary.clipped_positive = 7;
  const auto clip = analyse_lead_swap(n, s, clipped, probe_on(ProbeOn::electrode));
  EXPECT_EQ(clip.verdict, Verdict::inconclusive);
  ASSERT_EQ(clip.deciding.size(), 1u);
  EXPECT_EQ(clip.deciding[0], "clipped_repeat");
  EXPECT_DOUBLE_EQ(evidence(clip, "clipped_repeat")->value, 7.0);
  EXPECT_TRUE(has_step(clip, "all three captures"));
}

TEST(LeadSwapRepeat, AsymmetryDifferenceCarriesTheOffsetThroughEachSensitivity) {
  // ∂A/∂δ = T/(Q+ + Q−) per capture: a repeat carrying 10 % less charge has c larger by 1/0.9,
  // so the shared offset leaves (c_N' − c_N)·u(δ) in A' − A (GUM 5.2.2, r = +1).
  const double u_a = 1e-4, offset = 0.2 * kMa;
  SwapCapture again = capture(0, 1 * kUa, 0.05, u_a);
  again.summary.charge_positive_c.value *= 0.9;
  again.summary.charge_negative_c.value *= 0.9;
  const auto r = analyse_lead_swap(capture(0, 1 * kUa, 0.05, u_a), capture(0, 1 * kUa, -0.01, u_a),
                                   again, probe_on(ProbeOn::electrode, offset));
  const double c_n = M_PI / (2 * 0.025), c_a = c_n / 0.9, u_off = offset / std::sqrt(3.0);
  ASSERT_TRUE(r.repeat.has_value());
  EXPECT_NEAR(r.repeat->difference_asymmetry.value, 0.0, 1e-15);
  EXPECT_NEAR(r.repeat->difference_asymmetry.u95,
              2 * std::sqrt(2 * u_a * u_a + std::pow((c_a - c_n) * u_off, 2)), 1e-9);
}

TEST(LeadSwapRepeat, ProbeOnSupplyUsesTheMeanToo) {
  // Probe on a supply terminal: D = (N̄ + S)/2, E = (N̄ − S)/2 with N̄ = (N + N')/2.
  // N = 3 mA, N' = 3.002 mA, S = −1 mA: N̄ = 3.001 mA, D = 1.0005 mA, E = 2.0005 mA.
  const double u = 2 * kUa;
  const auto r = analyse_lead_swap(capture(3 * kMa, u), capture(-1 * kMa, u),
                                   capture(3.002 * kMa, u), probe_on(ProbeOn::supply));
  EXPECT_EQ(r.repeat->outcome, RepeatOutcome::bias_returned);
  EXPECT_NEAR(r.driver_bias_a.value, 1.0005 * kMa, 1e-12);
  EXPECT_NEAR(r.electrode_bias_a.value, 2.0005 * kMa, 1e-12);
}

}  // namespace
}  // namespace lopside
