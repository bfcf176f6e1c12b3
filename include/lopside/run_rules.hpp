#pragma once
/// \file
/// Run rules on a control chart: patterns in a series (lot means, or units in sequence) that
/// point to drift or a shift well before a single point leaves the 3σ limits.
///
/// Sources (cited from memory, not checked against the printed pages): Western Electric
/// Company, Statistical Quality Control Handbook (1956), the four zone tests; L. S. Nelson,
/// "The Shewhart Control Chart — Tests for Special Causes", Journal of Quality Technology
/// 16(4), 1984, whose tests 1, 5 and 6 are rules 1, 2 and 3 here. Nelson's test 2 is rule 4
/// with nine points in a row instead of eight; this file keeps the handbook's eight.
///
/// Pure computation; the series of one figure holds one number per lot or unit, so it is taken
/// as a whole vector.

#include <cstddef>
#include <vector>

namespace lopside {

/// One flagged point: its index in the series and the rule that flagged it (1–4).
struct RunRuleHit {
  std::size_t index;  ///< index into the series
  int rule;           ///< 1…4, as numbered at run_rule_hits()
};

/// The Western Electric zone rules, with d_i = x_i − center:
///  1. one point beyond 3σ: |d_i| > 3σ;
///  2. two of three consecutive points beyond 2σ on the same side;
///  3. four of five consecutive points beyond 1σ on the same side;
///  4. eight consecutive points on the same side of the center.
///
/// Conventions:
/// - "beyond kσ" is strict: d > kσ above, d < −kσ below. A point exactly on a zone line is
///   not beyond it (as ControlChart::beyond counts only points strictly outside the limits).
/// - A point with d = 0 is on neither side: it breaks rule 4's run and never counts for 2 or 3.
/// - A hit is reported at the point that completes the pattern, i.e. the last point of the
///   window of 3 (rule 2), 5 (rule 3) or 8 (rule 4) consecutive points ending there; a pattern
///   needs its whole window, so rule 2 cannot fire before index 2, rule 3 before index 4,
///   rule 4 before index 7.
/// - For rules 2 and 3 the completing point itself must be beyond the zone on that side. So
///   {+2.5σ, +2.5σ, 0} gives no rule-2 hit: index 1 has no full window, and index 2 is not
///   beyond.
/// - Each rule is reported at most once per point, and at every point that completes it: a run
///   of ten points on one side gives rule-4 hits at its 8th, 9th and 10th points.
/// - Hits are ordered by index, then by rule.
///
/// center : the chart's centre line, in the series' unit
/// sigma  : the process σ the zones are built from (> 0), in the series' unit
///
/// Throws std::invalid_argument when sigma is not > 0, or sigma, center or a value is not
/// finite. An empty series gives no hits.
std::vector<RunRuleHit> run_rule_hits(const std::vector<double>& series, double center,
                                      double sigma);

/// "beyond 3 sigma", "2 of 3 beyond 2 sigma", "4 of 5 beyond 1 sigma", "8 on one side" for
/// rules 1…4 (plain ASCII); "?" for any other number.
const char* run_rule_text(int rule) noexcept;

}  // namespace lopside
