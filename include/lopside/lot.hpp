#pragma once
/// \file
/// Judging the units of a production lot against limits, and the statistics of the lot.
///
/// Each measured figure of a unit (an RMS current [A], a DC offset [A], a THD [1], …) is held
/// against its limit, either by the value alone (simple acceptance) or with the measurement's
/// expanded uncertainty as a guard band (guarded acceptance). The unit's verdict is the worst
/// of its figures. Over the lot, every limited figure gets its capability indices and an
/// individuals / moving-range control chart.
///
/// Sources: ILAC-G8:09/2019, Guidelines on Decision Rules and Statements of Conformity;
/// ISO 14253-1:2017, Decision rules for verifying conformity or nonconformity with
/// specifications; ISO 22514-2:2017 and the AIAG Statistical Process Control reference manual
/// (2nd ed., 2005) for the capability indices; ISO 7870-2:2023 and Montgomery, Introduction to
/// Statistical Quality Control, for the control chart.
///
/// Everything here is pure computation on values already measured; the per-unit values of one
/// figure fit in memory (one number per unit), so the lot functions take whole vectors.

#include <cstddef>
#include <optional>
#include <vector>

namespace lopside {

/// How a measured value is held against its limit.
enum class DecisionRule {
  simple,   ///< the value alone (ILAC-G8 "simple acceptance", guard band w = 0)
  guarded,  ///< the value widened by its expanded uncertainty U95 (guard band w = U95)
};

/// The verdict on one figure or one unit. Named LotVerdict, not Verdict: diagnosis.hpp already
/// has lopside::Verdict (the asymmetry diagnosis), and lot code sees both headers.
enum class LotVerdict {
  pass,
  fail,
  conditional,   ///< guarded rule only: the uncertainty interval straddles a limit
  not_measured,  ///< no value (the capture was missing or unusable); never returned by decide()
};

/// "pass", "fail", "conditional", "not_measured".
const char* to_string(LotVerdict verdict) noexcept;
/// "simple", "guarded".
const char* to_string(DecisionRule rule) noexcept;

/// The limits of one figure, in the figure's unit (SI). At least one is set; with both set,
/// min ≤ max. Both are inclusive: a value exactly on a limit is inside.
struct Limit {
  std::optional<double> min, max;
};

/// True when `limit` is usable: at least one bound, every bound finite, and min ≤ max.
/// decide() and lot_statistics() throw std::invalid_argument for anything else; a limits-file
/// reader can call this first to name the offending line.
bool is_valid(const Limit& limit) noexcept;

/// One measured figure of one unit.
struct FigureValue {
  double value = 0;           ///< the measured value, in the figure's unit
  std::optional<double> u95;  ///< expanded uncertainty at 95 % coverage (≥ 0); unset: unknown
};

/// The decision on one figure.
struct FigureDecision {
  LotVerdict verdict = LotVerdict::pass;  ///< pass, fail or conditional
  /// Signed distance from the value to the nearer limit, in the figure's unit: > 0 inside,
  /// 0 on the limit, < 0 outside. The uncertainty does not enter it.
  double margin = 0;
  /// margin as a fraction of the tolerance, so that figures in different units can be ranked
  /// against each other (decide_unit): with both limits, margin / ((max − min)/2), i.e. 1 at
  /// the centre of the tolerance, 0 on a limit; with one limit L (or max = min),
  /// margin / |L|, and margin itself when L = 0 (no scale to be had).
  double relative_margin = 0;
  bool at_min = false;            ///< the nearer limit is the min (else the max)
  bool uncertainty_used = false;  ///< the rule was guarded and u95 was known
};

/// Holds one figure against its limit.
///
/// simple: pass when min ≤ value ≤ max, else fail.
/// guarded, with [value − U, value + U] the uncertainty interval (U = u95):
///   pass        when min ≤ value − U and value + U ≤ max (the interval wholly inside, its ends
///               allowed on the limits: the ISO 14253-1 conformance zone, closed);
///   fail        when value + U < min or value − U > max (the interval wholly outside, not
///               touching the limit: the non-conformance zone, open);
///   conditional otherwise (the interval holds a limit).
/// With U = 0 the guarded rule gives the simple rule's verdicts; with u95 unset it falls back
/// to the simple rule and uncertainty_used is false. A conditional decision with margin ≥ 0 (the
/// value itself within the limits) is ILAC-G8's "conditional pass", with margin < 0 its
/// "conditional fail"; they are kept as one verdict here and told apart by the margin's sign.
///
/// Throws std::invalid_argument for an invalid limit (is_valid), a value that is not finite, or
/// a u95 that is negative or not finite.
FigureDecision decide(const FigureValue& v, const Limit& l, DecisionRule rule);

/// The verdict on a unit, from the decisions on its figures.
struct UnitDecision {
  LotVerdict verdict = LotVerdict::pass;
  /// Index into the figures of the one that decided the verdict; unset for an empty list.
  std::optional<std::size_t> deciding;
};

/// The worst verdict of the figures, in the order fail > not_measured > conditional > pass
/// (a figure that was not measured keeps the unit from passing, but a measured failure says
/// more). The deciding figure is the one with that verdict and the smallest relative_margin
/// (the most negative, or the closest to its limit); on a tie, or among not_measured figures,
/// the first. An empty list passes with no deciding figure.
UnitDecision decide_unit(const std::vector<FigureDecision>& figures);

/// Individuals and moving-range (I-MR) control chart of one figure over the lot (ISO
/// 7870-2:2023; Montgomery, Introduction to Statistical Quality Control, control charts for
/// individual measurements). All values in the figure's unit.
struct ControlChart {
  double center = 0;     ///< mean of the individuals
  double ucl = 0;        ///< center + 3·MR̄/d2 (3/d2 = E2 ≈ 2.660)
  double lcl = 0;        ///< center − 3·MR̄/d2; not clipped at 0 (a DC offset may be negative)
  double mr_center = 0;  ///< MR̄, the mean moving range of neighbours
  double mr_ucl = 0;     ///< D4·MR̄ with D4 = 3.267; the MR chart's lower limit is 0 (D3 = 0)
  /// Indices of the individuals strictly outside [lcl, ucl].
  std::vector<std::size_t> beyond;
  /// Indices i ≥ 1 whose moving range |x_i − x_{i−1}| exceeds mr_ucl.
  std::vector<std::size_t> mr_beyond;
};

/// Statistics of one limited figure over the measured units of a lot.
struct FigureStats {
  std::size_t count = 0;
  double mean = 0;  ///< 0 when count = 0
  double sd = 0;    ///< sample standard deviation (n − 1); 0 when count < 2
  double min = 0, max = 0;
  double yield = 0;  ///< share of values within the limits by simple acceptance, 0…1 (0 if empty)
  double sigma_within = 0;  ///< short-term σ = MR̄/d2, d2 = 1.128; 0 when count < 2
  /// Capability (σ_within) and performance (sd) indices, dimensionless. Cp and Pp need both
  /// limits; all four are unset with fewer than 2 values or a σ of 0. With one limit, Cpk and
  /// Ppk are the one-sided indices (Cpu or Cpl, Ppu or Ppl).
  std::optional<double> cp, cpk, pp, ppk;
  std::optional<ControlChart> chart;  ///< needs ≥ 2 values
};

/// Statistics of `values` (one figure, measured units only, in lot order: the moving ranges
/// and so σ_within and the chart depend on the order) against `limit`.
/// Throws std::invalid_argument for an invalid limit or a non-finite value.
FigureStats lot_statistics(const std::vector<double>& values, const Limit& limit);

}  // namespace lopside
