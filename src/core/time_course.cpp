#include "lopside/time_course.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <limits>

namespace lopside {
namespace {

double median(std::vector<double> v) {
  if (v.empty()) return 0.0;
  auto mid = v.begin() + static_cast<std::ptrdiff_t>(v.size() / 2);
  std::nth_element(v.begin(), mid, v.end());
  return *mid;
}

// Noise of a series with steps and trends in it: the median absolute first difference over
// 0.6745·√2 estimates σ of white noise and ignores the few large differences at change points
// (the MAD estimator of Hampel; used for change-point penalties by e.g. Fryzlewicz, Ann. Stat.
// 42, 2014).
double robust_sigma(const std::vector<double>& y) {
  std::vector<double> d;
  for (std::size_t i = 1; i < y.size(); ++i) d.push_back(std::fabs(y[i] - y[i - 1]));
  return median(d) / (0.6745 * std::sqrt(2.0));
}

// PELT (Killick, Fearnhead & Eckley, JASA 107, 2012) for changes in the mean: the cost of a
// segment is its sum of squared deviations, each change costs β. Returns the segment starts.
std::vector<std::size_t> pelt(const std::vector<double>& y, double beta, std::size_t min_len) {
  const std::size_t n = y.size();
  std::vector<double> c1(n + 1, 0.0), c2(n + 1, 0.0);
  for (std::size_t i = 0; i < n; ++i) {
    c1[i + 1] = c1[i] + y[i];
    c2[i + 1] = c2[i] + y[i] * y[i];
  }
  const auto cost = [&](std::size_t s, std::size_t t) {
    const double m = static_cast<double>(t - s);
    const double sum = c1[t] - c1[s];
    return (c2[t] - c2[s]) - sum * sum / m;
  };
  std::vector<double> f(n + 1, std::numeric_limits<double>::infinity());
  std::vector<std::size_t> last(n + 1, 0);
  f[0] = -beta;
  std::vector<std::size_t> candidates{0};
  for (std::size_t t = min_len; t <= n; ++t) {
    double best = std::numeric_limits<double>::infinity();
    std::size_t arg = 0;
    for (std::size_t s : candidates) {
      if (t - s < min_len) continue;
      const double v = f[s] + cost(s, t) + beta;
      if (v < best) {
        best = v;
        arg = s;
      }
    }
    f[t] = best;
    last[t] = arg;
    // Pruning: a start that cannot beat f[t] now never will (the PELT condition with K = 0).
    std::vector<std::size_t> kept;
    for (std::size_t s : candidates) {
      if (t - s < min_len || f[s] + cost(s, t) <= f[t]) kept.push_back(s);
    }
    if (t + min_len <= n) kept.push_back(t);
    candidates.swap(kept);
  }
  std::vector<std::size_t> starts;
  for (std::size_t t = n; t > 0; t = last[t]) starts.push_back(last[t]);
  std::reverse(starts.begin(), starts.end());
  return starts;
}

struct Line {
  double slope = 0, u_slope = 0, intercept = 0;
};

Line fit_line(const std::vector<double>& t, const std::vector<double>& y) {
  const double n = static_cast<double>(t.size());
  double mt = 0, my = 0;
  for (std::size_t i = 0; i < t.size(); ++i) {
    mt += t[i];
    my += y[i];
  }
  mt /= n;
  my /= n;
  double stt = 0, sty = 0;
  for (std::size_t i = 0; i < t.size(); ++i) {
    stt += (t[i] - mt) * (t[i] - mt);
    sty += (t[i] - mt) * (y[i] - my);
  }
  Line l;
  if (stt <= 0 || t.size() < 3) return l;
  l.slope = sty / stt;
  l.intercept = my - l.slope * mt;
  double sse = 0;
  for (std::size_t i = 0; i < t.size(); ++i) {
    const double r = y[i] - (l.intercept + l.slope * t[i]);
    sse += r * r;
  }
  l.u_slope = std::sqrt(sse / (n - 2) / stt);  // standard least-squares slope error
  return l;
}

// y = P + B·e^(−(t − t0)/τ): for fixed τ the model is linear in (P, B); τ is found on a
// logarithmic grid, then refined by golden-section search on log τ.
struct ExpFit {
  double tau = 0, p = 0, b = 0, sse = std::numeric_limits<double>::infinity();
};

ExpFit fit_exp_at(const std::vector<double>& t, const std::vector<double>& y, double t0,
                  double tau) {
  double s1 = 0, se = 0, see = 0, sy = 0, sey = 0;
  for (std::size_t i = 0; i < t.size(); ++i) {
    const double e = std::exp(-(t[i] - t0) / tau);
    s1 += 1;
    se += e;
    see += e * e;
    sy += y[i];
    sey += e * y[i];
  }
  const double d = s1 * see - se * se;
  ExpFit f;
  f.tau = tau;
  if (std::fabs(d) < 1e-300) return f;
  f.p = (see * sy - se * sey) / d;
  f.b = (s1 * sey - se * sy) / d;
  f.sse = 0;
  for (std::size_t i = 0; i < t.size(); ++i) {
    const double r = y[i] - (f.p + f.b * std::exp(-(t[i] - t0) / tau));
    f.sse += r * r;
  }
  return f;
}

// `bar`: the smallest |plateau − initial| that matters (the materiality bar in y's unit).
std::optional<BuildUp> fit_build_up(const std::vector<double>& t, const std::vector<double>& y,
                                    double bar) {
  const std::size_t n = t.size();
  if (n < 12) return std::nullopt;
  const double t0 = t.front();
  const double span = t.back() - t0;
  const double step = span / static_cast<double>(n - 1);
  if (!(span > 0)) return std::nullopt;
  const double lo = std::log(step), hi = std::log(2.0 * span);
  ExpFit best;
  double best_log = lo;
  constexpr int kGrid = 80;
  for (int g = 0; g <= kGrid; ++g) {
    const double lt = lo + (hi - lo) * g / kGrid;
    const ExpFit f = fit_exp_at(t, y, t0, std::exp(lt));
    if (f.sse < best.sse) {
      best = f;
      best_log = lt;
    }
  }
  double a = best_log - (hi - lo) / kGrid, b = best_log + (hi - lo) / kGrid;
  const double phi = (std::sqrt(5.0) - 1) / 2;
  for (int it = 0; it < 60; ++it) {
    const double c = b - phi * (b - a), d = a + phi * (b - a);
    if (fit_exp_at(t, y, t0, std::exp(c)).sse < fit_exp_at(t, y, t0, std::exp(d)).sse) {
      b = d;
    } else {
      a = c;
    }
  }
  const ExpFit f = fit_exp_at(t, y, t0, std::exp(0.5 * (a + b)));
  if (!std::isfinite(f.sse)) return std::nullopt;

  // Covariance of (P, B, τ) from the matrix J of partial derivatives at the optimum:
  // s²·(JᵀJ)⁻¹ (Gauss–Newton; e.g. Seber & Wild, Nonlinear Regression, 2.1).
  std::array<std::array<double, 3>, 3> jtj{};
  for (std::size_t i = 0; i < n; ++i) {
    const double e = std::exp(-(t[i] - t0) / f.tau);
    const std::array<double, 3> j{1.0, e, f.b * e * (t[i] - t0) / (f.tau * f.tau)};
    for (int r = 0; r < 3; ++r)
      for (int c = 0; c < 3; ++c)
        jtj[static_cast<std::size_t>(r)][static_cast<std::size_t>(c)] +=
            j[static_cast<std::size_t>(r)] * j[static_cast<std::size_t>(c)];
  }
  const auto& m = jtj;
  const double det = m[0][0] * (m[1][1] * m[2][2] - m[1][2] * m[2][1]) -
                     m[0][1] * (m[1][0] * m[2][2] - m[1][2] * m[2][0]) +
                     m[0][2] * (m[1][0] * m[2][1] - m[1][1] * m[2][0]);
  const double s2 = f.sse / static_cast<double>(n - 3);
  BuildUp out;
  out.start_s = t0;
  out.initial = f.p + f.b;
  out.plateau.value = f.p;
  out.tau_s.value = f.tau;
  out.amplitude.value = -f.b;  // plateau − initial = P − (P + B)
  if (std::fabs(det) > 0) {
    const double inv00 = (m[1][1] * m[2][2] - m[1][2] * m[2][1]) / det;
    const double inv11 = (m[0][0] * m[2][2] - m[0][2] * m[2][0]) / det;
    const double inv22 = (m[0][0] * m[1][1] - m[0][1] * m[1][0]) / det;
    out.plateau.u95 = 2 * std::sqrt(std::max(0.0, s2 * inv00));
    out.amplitude.u95 = 2 * std::sqrt(std::max(0.0, s2 * inv11));
    out.tau_s.u95 = 2 * std::sqrt(std::max(0.0, s2 * inv22));
  } else {
    // A singular fit resolves nothing: no amplitude can be shown.
    out.amplitude.u95 = std::numeric_limits<double>::infinity();
  }
  // Significance: the exponential must beat a constant by an F-test at the 1 % level
  // (F(2, n − 3) ≈ 4.6 for large n; 10 is used, stricter, since neighbouring points are not
  // quite independent), τ must lie inside the record and be resolved, and the level must move
  // away from zero: a DC that builds up, not one that decays. Its amplitude must also be real
  // (issue 9, item 4): beyond its own u95 and above the materiality bar, so that a fit to a
  // wander of a few ppm of the AC RMS, however well resolved, is not a build-up.
  double mean = 0;
  for (double v : y) mean += v;
  mean /= static_cast<double>(n);
  double sse0 = 0;
  for (double v : y) sse0 += (v - mean) * (v - mean);
  const double fstat = ((sse0 - f.sse) / 2.0) / s2;
  out.significant =
      fstat > 10.0 && f.tau > 1.5 * step && f.tau < 0.5 * span && out.tau_s.u95 < f.tau &&
      std::fabs(out.plateau.value) > std::fabs(out.initial) &&
      std::fabs(out.amplitude.value) > out.amplitude.u95 && std::fabs(out.amplitude.value) > bar;
  return out;
}

}  // namespace

void TimeCourse::add(const CycleRecord& c) {
  sum_t_ += c.start_s + 0.5 * c.period_s;
  sum_dc_w_ += c.mean_a * c.period_s;
  sum_w_ += c.period_s;
  const double q = c.charge_positive_c + c.charge_negative_c;
  sum_asym_w_ += c.charge_asymmetry * q;
  sum_q_ += q;
  total_ac2_t_ += c.ac_rms_a * c.ac_rms_a * c.period_s;
  total_t_ += c.period_s;
  total_q_ += q;
  if (open_.cycles == 0) {
    open_.dc_min_a = open_.dc_max_a = c.mean_a;
    open_.asymmetry_min = open_.asymmetry_max = c.charge_asymmetry;
  } else {
    open_.dc_min_a = std::min(open_.dc_min_a, c.mean_a);
    open_.dc_max_a = std::max(open_.dc_max_a, c.mean_a);
    open_.asymmetry_min = std::min(open_.asymmetry_min, c.charge_asymmetry);
    open_.asymmetry_max = std::max(open_.asymmetry_max, c.charge_asymmetry);
  }
  ++open_.cycles;
  if (open_.cycles < per_point_) return;
  open_.time_s = sum_t_ / static_cast<double>(open_.cycles);
  open_.dc_offset_a = sum_dc_w_ / sum_w_;
  open_.charge_asymmetry = sum_q_ > 0 ? sum_asym_w_ / sum_q_ : 0.0;
  points_.push_back(open_);
  open_ = CoursePoint{};
  sum_t_ = sum_dc_w_ = sum_w_ = sum_asym_w_ = sum_q_ = 0;
  if (points_.size() == kMaxPoints) {
    // Halve the resolution: neighbours merge, each point now stands for twice the cycles.
    for (std::size_t i = 0; i < kMaxPoints / 2; ++i) {
      const CoursePoint& a = points_[2 * i];
      const CoursePoint& b = points_[2 * i + 1];
      const double w = static_cast<double>(a.cycles + b.cycles);
      points_[i] = CoursePoint{
          (a.time_s * static_cast<double>(a.cycles) + b.time_s * static_cast<double>(b.cycles)) / w,
          (a.dc_offset_a * static_cast<double>(a.cycles) +
           b.dc_offset_a * static_cast<double>(b.cycles)) /
              w,
          (a.charge_asymmetry * static_cast<double>(a.cycles) +
           b.charge_asymmetry * static_cast<double>(b.cycles)) /
              w,
          a.cycles + b.cycles,
          std::min(a.dc_min_a, b.dc_min_a),
          std::max(a.dc_max_a, b.dc_max_a),
          std::min(a.asymmetry_min, b.asymmetry_min),
          std::max(a.asymmetry_max, b.asymmetry_max)};
    }
    points_.resize(kMaxPoints / 2);
    per_point_ *= 2;
  }
}

TimeCourseResult TimeCourse::finish() const {
  TimeCourseResult r;
  r.points = points_;
  if (open_.cycles > 0) {
    CoursePoint p = open_;
    p.time_s = sum_t_ / static_cast<double>(p.cycles);
    p.dc_offset_a = sum_w_ > 0 ? sum_dc_w_ / sum_w_ : 0.0;
    p.charge_asymmetry = sum_q_ > 0 ? sum_asym_w_ / sum_q_ : 0.0;
    r.points.push_back(p);
  }
  r.cycles_per_point = per_point_;
  // The materiality bar (kNegligibleDcShare): the AC RMS of the whole capture is the mean of
  // the per-cycle squares weighted by duration. Without an AC RMS (records that carry none)
  // the bar is 0 and only the uncertainty bars apply.
  r.ac_rms_a = total_t_ > 0 ? std::sqrt(total_ac2_t_ / total_t_) : 0.0;
  r.material_dc_a = material_share_ * r.ac_rms_a;
  // The charge asymmetry (Q+ − Q−)/(Q+ + Q−) is exactly DC / mean|i|, since Q+ − Q− = ∫i dt:
  // the same bar in its unit is material_dc_a / mean|i| (≈ 0.0022 for a sine at 0.2 %).
  const double mean_abs_i = total_t_ > 0 ? total_q_ / total_t_ : 0.0;
  const double material_asym = mean_abs_i > 0 ? r.material_dc_a / mean_abs_i : 0.0;
  const std::size_t n = r.points.size();
  std::vector<double> t(n), y(n), a(n);
  for (std::size_t i = 0; i < n; ++i) {
    t[i] = r.points[i].time_s;
    y[i] = r.points[i].dc_offset_a;
    a[i] = r.points[i].charge_asymmetry;
  }
  if (n < 4) {
    r.steady = true;
    return r;
  }

  // Change points. The penalty 3σ²·ln n is a little above the BIC's 2σ²·ln n (Schwarz 1978,
  // as used with PELT by Killick et al.), so single noisy points do not open segments.
  const double sigma = std::max(robust_sigma(y), 1e-15);
  const auto starts = pelt(y, 3.0 * sigma * sigma * std::log(static_cast<double>(n)), 2);
  double pooled = 0;
  for (std::size_t k = 0; k < starts.size(); ++k) {
    const std::size_t s = starts[k], e = k + 1 < starts.size() ? starts[k + 1] : n;
    Segment seg;
    seg.start_s = t[s];
    seg.end_s = t[e - 1];
    for (std::size_t i = s; i < e; ++i) seg.mean_dc_a += y[i];
    seg.mean_dc_a /= static_cast<double>(e - s);
    seg.points = e - s;
    for (std::size_t i = s; i < e; ++i) pooled += (y[i] - seg.mean_dc_a) * (y[i] - seg.mean_dc_a);
    r.segments.push_back(seg);
  }
  const double scatter =
      std::sqrt(pooled / static_cast<double>(std::max<std::size_t>(n - starts.size(), 1)));
  r.scatter_a = scatter;
  for (std::size_t k = 0; k < r.segments.size(); ++k) {
    const std::size_t s = starts[k], e = k + 1 < starts.size() ? starts[k + 1] : n;
    Segment& seg = r.segments[k];
    seg.u95_a = 2.0 * std::max(scatter, sigma) / std::sqrt(static_cast<double>(e - s));
    // A level the discharge "prefers" must be both shown (beyond its u95) and material (above
    // the dc_negligible bar): PELT on a quiet capture splits a wander of a few ppm of the AC RMS
    // into stretches whose means are beyond their tiny u95, and those are no cathode preference
    // (issue 9, item 4).
    seg.decided =
        std::fabs(seg.mean_dc_a) > seg.u95_a && std::fabs(seg.mean_dc_a) > r.material_dc_a;
  }
  // A flip: two decided stretches of opposite sign with only undecided ones between them
  // (DOMAIN.md: neighbouring segments differ in sign, each significant). An undecided stretch
  // between them is the crossing itself (a point straddling the flip forms a short segment of
  // an in-between level), so it is stepped over rather than breaking the flip.
  std::vector<std::size_t> decided;
  for (std::size_t k = 0; k < r.segments.size(); ++k)
    if (r.segments[k].decided) decided.push_back(k);
  std::size_t first_flip_point = n, last_flip_point = 0;
  for (std::size_t d = 0; d + 1 < decided.size(); ++d) {
    const Segment& p = r.segments[decided[d]];
    const Segment& q = r.segments[decided[d + 1]];
    if (p.mean_dc_a * q.mean_dc_a >= 0) continue;
    Event ev;
    ev.kind = "flip";
    ev.time_s = 0.5 * (p.end_s + q.start_s);
    // The levels are those of the longest decided stretch of the same sign on either side,
    // not the in-between level of a stretch that straddles the flip.
    const auto level = [&](std::size_t from, int dir) {
      const double sign = r.segments[decided[from]].mean_dc_a;
      const Segment* best = &r.segments[decided[from]];
      for (std::size_t j = from;; j = static_cast<std::size_t>(static_cast<long>(j) + dir)) {
        const Segment& sj = r.segments[decided[j]];
        if (sj.mean_dc_a * sign <= 0) break;
        if (sj.points > best->points) best = &sj;
        if ((dir < 0 && j == 0) || (dir > 0 && j + 1 == decided.size())) break;
      }
      return best->mean_dc_a;
    };
    ev.level_before_a = level(d, -1);
    ev.level_after_a = level(d + 1, +1);
    r.events.push_back(ev);
    first_flip_point = std::min(first_flip_point, starts[decided[d + 1]]);
    last_flip_point = starts[decided[d + 1]];
  }

  // Build-up after ignition: on the stretch before any flip.
  const std::vector<double> tb(t.begin(),
                               t.begin() + static_cast<std::ptrdiff_t>(first_flip_point));
  const std::vector<double> yb(y.begin(),
                               y.begin() + static_cast<std::ptrdiff_t>(first_flip_point));
  const std::vector<double> ab(a.begin(),
                               a.begin() + static_cast<std::ptrdiff_t>(first_flip_point));
  r.build_up = fit_build_up(tb, yb, r.material_dc_a);
  r.asymmetry_build_up = fit_build_up(tb, ab, material_asym);
  if (r.build_up && r.build_up->significant) {
    Event ev;
    ev.kind = "build_up";
    ev.time_s = r.build_up->start_s;
    ev.level_before_a = r.build_up->initial;
    ev.level_after_a = r.build_up->plateau.value;
    ev.tau_s = r.build_up->tau_s.value;
    r.events.insert(r.events.begin(), ev);
  }

  // Slow drift: a straight line through the last stretch that is neither build-up nor flip.
  std::size_t from = first_flip_point < n ? last_flip_point : 0;
  if (r.build_up && r.build_up->significant) {
    const double settled = r.build_up->start_s + 3.0 * r.build_up->tau_s.value;
    while (from < n && t[from] < settled) ++from;
  }
  if (n - from >= 8) {
    const std::vector<double> td(t.begin() + static_cast<std::ptrdiff_t>(from), t.end());
    const std::vector<double> yd(y.begin() + static_cast<std::ptrdiff_t>(from), y.end());
    const Line l = fit_line(td, yd);
    r.drift_a_per_s = Estimate{l.slope, 2.0 * l.u_slope, 2.0};
    // Significant beyond its u95, and material: the change it makes over the stretch exceeds
    // the dc_negligible bar (a slope of a few ppm of the AC RMS is "steady", issue 9, item 4).
    const double change = std::fabs(l.slope) * (td.back() - td.front());
    r.drift_significant =
        std::fabs(l.slope) > 2.0 * l.u_slope && l.u_slope > 0 && change > r.material_dc_a;
  }
  bool flipped = false;
  for (const Event& e : r.events) flipped = flipped || e.kind == "flip";
  r.steady = !flipped && !(r.build_up && r.build_up->significant) && !r.drift_significant;
  return r;
}

}  // namespace lopside
