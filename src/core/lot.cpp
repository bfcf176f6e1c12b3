#include "lopside/lot.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <stdexcept>
#include <string>

namespace lopside {
namespace {

// Control-chart constants for moving ranges of two neighbours (subgroup size n = 2), as
// tabulated in Montgomery, Introduction to Statistical Quality Control (appendix table of
// factors for control charts), and in ISO 7870-2:2023:
// d2 = E[range of 2 normal values]/σ = 2/√π = 1.12838, tabulated 1.128;
// D4 = 1 + 3·d3/d2 = 3.267. The tabulated values are used so that figures agree with the
// tables a QA engineer checks against.
constexpr double kD2 = 1.128;
constexpr double kD4 = 3.267;
constexpr double kInf = std::numeric_limits<double>::infinity();

void require_valid(const Limit& limit, const char* who) {
  if (!is_valid(limit)) {
    throw std::invalid_argument(std::string(who) +
                                ": a limit needs a finite min or max (or both, min <= max)");
  }
}

// Capability-type index from a centre and a σ (ISO 22514-2:2017; AIAG SPC manual, 2nd ed.):
// the two-sided ratio (USL − LSL)/(6σ) and the one nearer the centre,
// min(USL − μ, μ − LSL)/(3σ), which with a single limit is Cpu = (USL − μ)/(3σ) or
// Cpl = (μ − LSL)/(3σ). Unset for σ ≤ 0: the index would be infinite or meaningless.
void capability(const Limit& l, double centre, double sigma, std::optional<double>& spread,
                std::optional<double>& centred) {
  if (!(sigma > 0)) return;
  if (l.min && l.max) spread = (*l.max - *l.min) / (6 * sigma);
  double nearest = kInf;
  if (l.max) nearest = std::min(nearest, *l.max - centre);
  if (l.min) nearest = std::min(nearest, centre - *l.min);
  centred = nearest / (3 * sigma);
}

}  // namespace

const char* to_string(LotVerdict verdict) noexcept {
  switch (verdict) {
    case LotVerdict::pass:
      return "pass";
    case LotVerdict::fail:
      return "fail";
    case LotVerdict::conditional:
      return "conditional";
    case LotVerdict::not_measured:
      return "not_measured";
  }
  return "?";
}

const char* to_string(DecisionRule rule) noexcept {
  switch (rule) {
    case DecisionRule::simple:
      return "simple";
    case DecisionRule::guarded:
      return "guarded";
  }
  return "?";
}

bool is_valid(const Limit& limit) noexcept {
  if (!limit.min && !limit.max) return false;
  if (limit.min && !std::isfinite(*limit.min)) return false;
  if (limit.max && !std::isfinite(*limit.max)) return false;
  return !(limit.min && limit.max && *limit.min > *limit.max);
}

FigureDecision decide(const FigureValue& v, const Limit& l, DecisionRule rule) {
  require_valid(l, "decide");
  if (!std::isfinite(v.value)) throw std::invalid_argument("decide: the value is not finite");
  if (v.u95 && !(std::isfinite(*v.u95) && *v.u95 >= 0)) {
    throw std::invalid_argument("decide: u95 must be finite and >= 0");
  }

  FigureDecision d;
  // Distance to each set limit, positive inside; the nearer limit is the one with the smaller
  // distance (outside below the min, value − min is the negative one). A tie (the value at the
  // centre) names the min.
  const double to_min = l.min ? v.value - *l.min : kInf;
  const double to_max = l.max ? *l.max - v.value : kInf;
  d.at_min = to_min <= to_max;
  d.margin = d.at_min ? to_min : to_max;

  double scale = 0;
  if (l.min && l.max && *l.max > *l.min) {
    scale = (*l.max - *l.min) / 2;
  } else {
    scale = std::abs(d.at_min ? *l.min : *l.max);
  }
  d.relative_margin = scale > 0 ? d.margin / scale : d.margin;

  // Guard band w: 0 for simple acceptance (ILAC-G8:09/2019, simple acceptance: the measured
  // value alone against the limit), U95 for guarded acceptance (ILAC-G8 guarded acceptance with
  // w = U; ISO 14253-1:2017 conformance zone = specification zone reduced by U on each side,
  // non-conformance zone = outside the specification zone widened by U). With w = U at 95 %
  // coverage, a pass carries at most about 2.5 % risk of a false accept (one-sided tail of a
  // normal distribution at k ≈ 2), which is why the guard band is U and not u.
  d.uncertainty_used = rule == DecisionRule::guarded && v.u95.has_value();
  const double w = d.uncertainty_used ? *v.u95 : 0.0;
  const double lo = v.value - w;  // ends of the uncertainty interval
  const double hi = v.value + w;

  // Closed conformance zone: an interval end exactly on a limit still conforms, matching the
  // simple rule's "a value on the limit passes" (and with w = 0 the two rules agree). Open
  // non-conformance zone: an interval that touches the limit holds a conforming true value, so
  // it is not proven outside. Ties are decided on the computed ends value ± w in double
  // precision; a real measurement lands on one only by construction.
  const bool inside = (!l.min || lo >= *l.min) && (!l.max || hi <= *l.max);
  const bool outside = (l.min && hi < *l.min) || (l.max && lo > *l.max);
  if (inside) {
    d.verdict = LotVerdict::pass;
  } else if (outside) {
    d.verdict = LotVerdict::fail;
  } else {
    d.verdict = LotVerdict::conditional;
  }
  return d;
}

UnitDecision decide_unit(const std::vector<FigureDecision>& figures) {
  // Severity of a figure's verdict for the unit: the highest present decides.
  const auto severity = [](LotVerdict v) {
    switch (v) {
      case LotVerdict::pass:
        return 0;
      case LotVerdict::conditional:
        return 1;
      case LotVerdict::not_measured:
        return 2;
      case LotVerdict::fail:
        return 3;
    }
    return 3;
  };

  UnitDecision u;
  for (std::size_t i = 0; i < figures.size(); ++i) {
    const FigureDecision& f = figures[i];
    if (!u.deciding) {
      u = {f.verdict, i};
      continue;
    }
    const FigureDecision& best = figures[*u.deciding];
    const int s = severity(f.verdict);
    const int best_s = severity(best.verdict);
    // Among not_measured figures the margin means nothing: the first one stays.
    const bool closer =
        f.verdict != LotVerdict::not_measured && f.relative_margin < best.relative_margin;
    if (s > best_s || (s == best_s && closer)) u = {f.verdict, i};
  }
  return u;
}

FigureStats lot_statistics(const std::vector<double>& values, const Limit& limit) {
  require_valid(limit, "lot_statistics");
  for (const double x : values) {
    if (!std::isfinite(x)) throw std::invalid_argument("lot_statistics: a value is not finite");
  }

  FigureStats s;
  s.count = values.size();
  if (values.empty()) return s;
  const double n = static_cast<double>(values.size());

  const auto [lo, hi] = std::minmax_element(values.begin(), values.end());
  s.min = *lo;
  s.max = *hi;
  std::size_t within = 0;
  double sum = 0;
  for (const double x : values) {
    sum += x;
    if ((!limit.min || x >= *limit.min) && (!limit.max || x <= *limit.max)) ++within;
  }
  s.yield = static_cast<double>(within) / n;
  // Equal values: take the mean exactly, so that the sum's rounding cannot make a σ of 1e-17
  // and a capability index of 1e16 out of a constant lot.
  s.mean = s.min == s.max ? s.min : std::clamp(sum / n, s.min, s.max);
  if (values.size() < 2) return s;

  // Sample standard deviation, two-pass (the second pass around the mean avoids the
  // cancellation of Σx² − n·x̄²): s = √(Σ(x − x̄)²/(n − 1)) — the overall σ of Pp and Ppk
  // (AIAG SPC manual, 2nd ed.: σ̂ = s for performance indices; ISO 22514-2:2017).
  double ss = 0;
  double mr_sum = 0;
  for (std::size_t i = 0; i < values.size(); ++i) {
    const double d = values[i] - s.mean;
    ss += d * d;
    if (i > 0) mr_sum += std::abs(values[i] - values[i - 1]);
  }
  s.sd = s.min == s.max ? 0.0 : std::sqrt(ss / (n - 1));

  // Within (short-term) σ from the mean moving range of neighbours: σ̂ = MR̄/d2 (AIAG SPC
  // manual, 2nd ed., for individuals; Montgomery, control charts for individual
  // measurements). It leaves out a slow drift across the lot, which the overall sd keeps, so
  // Cpk > Ppk points at a drifting lot.
  const double mr_bar = mr_sum / (n - 1);
  s.sigma_within = mr_bar / kD2;

  capability(limit, s.mean, s.sigma_within, s.cp, s.cpk);
  capability(limit, s.mean, s.sd, s.pp, s.ppk);

  // I-MR chart (ISO 7870-2:2023; Montgomery): individuals at x̄ ± 3·MR̄/d2 (E2 = 3/d2 = 2.660
  // as tabulated), moving ranges at MR̄ with UCL = D4·MR̄ and LCL = D3·MR̄ = 0.
  ControlChart c;
  c.center = s.mean;
  c.ucl = s.mean + 3 * s.sigma_within;
  c.lcl = s.mean - 3 * s.sigma_within;
  c.mr_center = mr_bar;
  c.mr_ucl = kD4 * mr_bar;
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (values[i] > c.ucl || values[i] < c.lcl) c.beyond.push_back(i);
    if (i > 0 && std::abs(values[i] - values[i - 1]) > c.mr_ucl) c.mr_beyond.push_back(i);
  }
  s.chart = std::move(c);
  return s;
}

}  // namespace lopside
