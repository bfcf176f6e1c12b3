#include "lopside/lead_swap.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <limits>
#include <stdexcept>

#include "lopside/units.hpp"

namespace lopside {
namespace {

constexpr double kInfiniteDof = 1e300;

// Half the difference and half the sum of the two captures' values, each with its combined
// uncertainty. The statistical parts of the two captures are independent: sensitivities ±½,
// so ½·√(uN² + uS²) (GUM 5.1.2). The probe's offset δ is the same in both captures (GUM 5.2,
// correlation +1): it enters with sensitivities c_N and c_S, which add in the sum,
// (c_N + c_S)/2, and subtract in the difference, (c_N − c_S)/2 (zero for the DC, where
// c_N = c_S = 1). A gain error scales both captures alike, hence each half alike: a relative
// part (zero for the charge asymmetry, a ratio in which the gain cancels).
struct Halves {
  Estimate difference;  // (N − S)/2
  Estimate sum;         // (N + S)/2
};

Estimate expand(double value, const std::vector<UncertaintyComponent>& parts) {
  const CombinedUncertainty u = combine(parts);
  return Estimate{value, u.expanded(), u.coverage_factor};
}

// `stat_n` and `stat_s` are the independent statistical parts of N and S (one each for a single
// capture; two, each already halved, for the mean of a capture and its repeat).
Halves halves(double n, const std::vector<UncertaintyComponent>& stat_n, double s,
              const std::vector<UncertaintyComponent>& stat_s, double offset_sensitivity_n,
              double offset_sensitivity_s, double u_offset, double u_gain_rel) {
  std::vector<UncertaintyComponent> stat;
  for (const auto& c : stat_n) stat.push_back({0.5 * c.standard, c.dof});
  for (const auto& c : stat_s) stat.push_back({0.5 * c.standard, c.dof});
  const double diff = 0.5 * (n - s);
  const double sum = 0.5 * (n + s);
  const auto with = [&stat](UncertaintyComponent offset, UncertaintyComponent gain) {
    std::vector<UncertaintyComponent> parts = stat;
    parts.push_back(offset);
    parts.push_back(gain);
    return parts;
  };
  Halves h;
  h.difference = expand(
      diff,
      with({0.5 * std::fabs(offset_sensitivity_n - offset_sensitivity_s) * u_offset, kInfiniteDof},
           {u_gain_rel * std::fabs(diff), kInfiniteDof}));
  h.sum = expand(sum, with({0.5 * std::fabs(offset_sensitivity_n + offset_sensitivity_s) * u_offset,
                            kInfiniteDof},
                           {u_gain_rel * std::fabs(sum), kInfiniteDof}));
  return h;
}

// ∂A/∂δ for the charge asymmetry A = (Q+ − Q−)/(Q+ + Q−): an offset δ moves Q+ − Q− by δ·T and
// Q+ + Q− by far less, so ≈ T/(Q+ + Q−) (as in the cycle engine).
double asymmetry_offset_sensitivity(const CycleSummary& s) {
  const double q_sum = s.charge_positive_c.value + s.charge_negative_c.value;
  const double f = s.fundamental_hz.value;
  if (!(q_sum > 0) || !(f > 0)) return 0.0;
  return (1.0 / f) / q_sum;
}

std::string percent_text(double share) {
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), "%.1f %%", 100.0 * share);
  return buf.data();
}

std::string hertz_text(double hz) {
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), "%.6g Hz", hz);
  return buf.data();
}

double relative_difference(double a, double b) {
  const double mean = 0.5 * (std::fabs(a) + std::fabs(b));
  return mean > 0 ? std::fabs(a - b) / mean : 0.0;
}

// A part counts when it is significant (|value| > u95) and at least `share` of |D| + |E|.
bool counts(const Estimate& part, double total, double share) {
  return std::fabs(part.value) > part.u95 && std::fabs(part.value) >= share * total;
}

// Evidence for one part: its value, held against the larger of its u95 and its share of the
// total (the bar it must clear to count).
Evidence part_evidence(const std::string& code, const Estimate& part, double total, double share,
                       const std::string& what) {
  Evidence e;
  e.code = code;
  e.value = part.value;
  e.threshold = std::max(part.u95, share * total);
  if (counts(part, total, share)) {
    e.text = what + " is significant and a real share of the whole: it counts";
  } else if (std::fabs(part.value) > part.u95) {
    e.text = what + " is significant but under " + percent_text(share) +
             " of the two parts together: it does not count";
  } else {
    e.text = what + " is within its uncertainty: no such part shows";
  }
  return e;
}

// Whether two captures can be one unit on one load: their fundamentals and AC RMS must repeat
// (issue 9, item 8). The frequency bar is the stated share or the difference's own relative
// u95, whichever is larger, so a pair is never refused on a difference its captures cannot
// resolve. The two captures' scatter is independent, so their u95 add in quadrature (GUM 5.1.2;
// exact for equal coverage factors, and each is k = 2 or close for any capture of many cycles).
struct Pairing {
  double df = 0, da = 0;  // |Δ|/mean of the fundamentals and of the AC RMS
  double f_bar = 0;
  bool f_mismatch = false, a_mismatch = false;
  std::string f_bar_text;
};

Pairing pairing(const CycleSummary& a, const CycleSummary& b, const SwapThresholds& th) {
  Pairing pair;
  const double f_mean =
      0.5 * (std::fabs(a.fundamental_hz.value) + std::fabs(b.fundamental_hz.value));
  const double f_u95_rel =
      f_mean > 0 ? std::hypot(a.fundamental_hz.u95, b.fundamental_hz.u95) / f_mean : 0.0;
  pair.f_bar = std::max(th.frequency_mismatch, f_u95_rel);
  pair.df = relative_difference(a.fundamental_hz.value, b.fundamental_hz.value);
  pair.da = relative_difference(a.ac_rms_a.value, b.ac_rms_a.value);
  pair.f_mismatch = !(pair.df <= pair.f_bar);  // a NaN (no fundamental) does not pass
  pair.a_mismatch = !(pair.da <= th.ac_rms_mismatch);
  pair.f_bar_text = pair.f_bar > th.frequency_mismatch
                        ? "their combined relative u95, " + percent_text(pair.f_bar) +
                              " (larger than the stated " + percent_text(th.frequency_mismatch) +
                              ")"
                        : percent_text(th.frequency_mismatch);
  return pair;
}

double clipped_cycles(const CycleSummary& s) {
  return static_cast<double>(s.clipped_positive + s.clipped_negative);
}

// "+12.3 µA ± 4.1 µA": a DC figure and its u95 for a sentence.
std::string amps_with_u95(const Estimate& e) {
  return format_si(e.value, "A", 3, true) + " \xC2\xB1 " + format_si(e.u95, "A", 2);
}

std::string ratio_with_u95(const Estimate& e) {
  std::array<char, 64> buf{};
  std::snprintf(buf.data(), buf.size(), "%+.4f \xC2\xB1 %.4f", e.value, e.u95);
  return buf.data();
}

// A change counts when it is significant (|Δ| > u95) and material (|Δ| > bar): the rule the
// time course applies to a flip's levels (time_course.hpp, Segment::decided).
bool changed(const Estimate& difference, double bar) {
  return std::fabs(difference.value) > difference.u95 && std::fabs(difference.value) > bar;
}

}  // namespace

const char* to_string(ProbeOn on) noexcept {
  switch (on) {
    case ProbeOn::electrode:
      return "electrode";
    case ProbeOn::supply:
      return "supply";
  }
  return "electrode";
}

UncertaintyComponent statistical_part(const Estimate& estimate) {
  const double k = estimate.coverage_k > 0 ? estimate.coverage_k : 2.0;
  UncertaintyComponent c;
  c.standard = estimate.u95 / k;
  // combine() uses k = 2 for ν ≥ 30 and t95(ν) below; t95 falls monotonically from 12.706
  // (ν = 1) to 2.042 (ν = 30), so a bisection inverts it.
  if (k <= 2.0 + 1e-12) {
    c.dof = 30.0;
  } else if (k >= student_t95(1.0)) {
    c.dof = 1.0;
  } else {
    double lo = 1.0, hi = 30.0;
    for (int i = 0; i < 60; ++i) {
      const double mid = 0.5 * (lo + hi);
      if (student_t95(mid) > k) {
        lo = mid;
      } else {
        hi = mid;
      }
    }
    c.dof = 0.5 * (lo + hi);
  }
  return c;
}

const char* to_string(RepeatOutcome outcome) noexcept {
  switch (outcome) {
    case RepeatOutcome::bias_returned:
      return "bias_returned";
    case RepeatOutcome::bias_drifted:
      return "bias_drifted";
    case RepeatOutcome::bias_changed:
      return "bias_changed";
    case RepeatOutcome::inconclusive:
      return "inconclusive";
  }
  return "inconclusive";
}

namespace {

LeadSwapResult analyse(const SwapCapture& normal, const SwapCapture& swapped,
                       const SwapCapture* again, const SwapProbe& probe, const SwapThresholds& th) {
  if (!(probe.offset_a >= 0) || !(probe.gain_pct >= 0)) {
    throw std::invalid_argument("SwapProbe tolerances must be non-negative");
  }
  const CycleSummary& ns = normal.summary;
  const CycleSummary& ss = swapped.summary;
  const double u_off = rectangular(probe.offset_a);               // GUM 4.3.7
  const double u_gain_rel = rectangular(probe.gain_pct / 100.0);  // relative

  LeadSwapResult r;
  r.probe_on = probe.on;

  // Each capture on its own, with the probe's tolerances as `measure` adds them.
  const double n_dc = ns.dc_offset_a.value, s_dc = ss.dc_offset_a.value;
  r.normal_dc_a = expand(
      n_dc,
      {normal.dc_type_a, {u_off, kInfiniteDof}, {u_gain_rel * std::fabs(n_dc), kInfiniteDof}});
  r.swapped_dc_a = expand(
      s_dc,
      {swapped.dc_type_a, {u_off, kInfiniteDof}, {u_gain_rel * std::fabs(s_dc), kInfiniteDof}});
  const double c_n = asymmetry_offset_sensitivity(ns), c_s = asymmetry_offset_sensitivity(ss);
  const double n_as = ns.charge_asymmetry.value, s_as = ss.charge_asymmetry.value;
  r.normal_asymmetry = expand(n_as, {normal.asymmetry_type_a, {c_n * u_off, kInfiniteDof}});
  r.swapped_asymmetry = expand(s_as, {swapped.asymmetry_type_a, {c_s * u_off, kInfiniteDof}});

  // The normal the split uses: N itself, or (N + N')/2 when the repeat shows the bias came back
  // (below). Its statistical parts, each with the sensitivity it enters with.
  double n_dc_used = n_dc, n_as_used = n_as, c_n_used = c_n;
  std::vector<UncertaintyComponent> n_dc_stat{normal.dc_type_a};
  std::vector<UncertaintyComponent> n_as_stat{normal.asymmetry_type_a};

  // The repeat of the normal capture, N' (README.md "lopside swap", repeat rule).
  Pairing rp;
  bool r_clipped = false;
  bool repeat_blocks = false;  // the repeat makes the verdict inconclusive
  if (again != nullptr) {
    const CycleSummary& rs = again->summary;
    RepeatCheck rc;
    const double a_dc = rs.dc_offset_a.value, a_as = rs.charge_asymmetry.value;
    const double c_a = asymmetry_offset_sensitivity(rs);
    rc.again_dc_a = expand(
        a_dc,
        {again->dc_type_a, {u_off, kInfiniteDof}, {u_gain_rel * std::fabs(a_dc), kInfiniteDof}});
    rc.again_asymmetry = expand(a_as, {again->asymmetry_type_a, {c_a * u_off, kInfiniteDof}});
    // N' − N: the two captures' scatter is independent (GUM 5.1.2, sensitivities ±1). The one
    // probe's offset δ enters both (GUM 5.2.2, correlation +1) with sensitivities +c_N' and
    // −c_N: it cancels in the DC (c = 1 in both) and leaves (c_N' − c_N)·u(δ) in the
    // asymmetry. The gain scales the DC difference as it scales any DC.
    const double d_dc = a_dc - n_dc, d_as = a_as - n_as;
    rc.difference_dc_a = expand(
        d_dc, {normal.dc_type_a, again->dc_type_a, {u_gain_rel * std::fabs(d_dc), kInfiniteDof}});
    rc.difference_asymmetry = expand(d_as, {normal.asymmetry_type_a,
                                            again->asymmetry_type_a,
                                            {std::fabs(c_a - c_n) * u_off, kInfiniteDof}});
    // The materiality bar, as the time course draws it: share × AC RMS; for the asymmetry the
    // same bar over the mean |i| = (Q+ + Q−)·f, since A = DC/mean |i| (Q+ − Q− = DC·T).
    rc.material_dc_a = th.repeat_material_share * 0.5 * (ns.ac_rms_a.value + rs.ac_rms_a.value);
    const double mean_abs_a =
        (ns.charge_positive_c.value + ns.charge_negative_c.value) * ns.fundamental_hz.value;
    rc.material_asymmetry = mean_abs_a > 0 ? rc.material_dc_a / mean_abs_a : 0.0;

    rp = pairing(ns, rs, th);
    r_clipped = clipped_cycles(rs) > 0;
    const Estimate& dd = rc.difference_dc_a;
    if (r_clipped || rp.f_mismatch || rp.a_mismatch) {
      rc.outcome = RepeatOutcome::inconclusive;
    } else if (std::fabs(dd.value) <= dd.u95) {
      rc.outcome = RepeatOutcome::bias_returned;
    } else if (changed(dd, rc.material_dc_a)) {
      rc.outcome = RepeatOutcome::bias_changed;
    } else if (std::isfinite(dd.value)) {
      rc.outcome = RepeatOutcome::bias_drifted;
    } else {
      rc.outcome = RepeatOutcome::inconclusive;
    }
    repeat_blocks =
        rc.outcome == RepeatOutcome::bias_changed || rc.outcome == RepeatOutcome::inconclusive;

    rc.mean_used =
        rc.outcome == RepeatOutcome::bias_returned || rc.outcome == RepeatOutcome::bias_drifted;
    if (rc.mean_used) {
      // The arithmetic mean of repeated observations is the best estimate (GUM 4.2.1); its
      // scatter propagates with sensitivities ½ each (GUM 5.1.2). Recorded N, S, N', it is also the
      // normal at the time of S under a linear drift. A drift beyond the scatter leaves the normal
      // at the time of S somewhere between N and N': a rectangular part of half-width |N' − N|/2
      // (GUM 4.3.7).
      n_dc_used = 0.5 * (n_dc + a_dc);
      n_as_used = 0.5 * (n_as + a_as);
      c_n_used = 0.5 * (c_n + c_a);
      n_dc_stat = {{0.5 * normal.dc_type_a.standard, normal.dc_type_a.dof},
                   {0.5 * again->dc_type_a.standard, again->dc_type_a.dof}};
      n_as_stat = {{0.5 * normal.asymmetry_type_a.standard, normal.asymmetry_type_a.dof},
                   {0.5 * again->asymmetry_type_a.standard, again->asymmetry_type_a.dof}};
      if (rc.outcome == RepeatOutcome::bias_drifted) {
        n_dc_stat.push_back({rectangular(0.5 * std::fabs(d_dc)), kInfiniteDof});
        n_as_stat.push_back({rectangular(0.5 * std::fabs(d_as)), kInfiniteDof});
      }
      std::vector<UncertaintyComponent> dc_parts = n_dc_stat, as_parts = n_as_stat;
      dc_parts.push_back({u_off, kInfiniteDof});
      dc_parts.push_back({u_gain_rel * std::fabs(n_dc_used), kInfiniteDof});
      as_parts.push_back({c_n_used * u_off, kInfiniteDof});
      rc.normal_used_dc_a = expand(n_dc_used, dc_parts);
      rc.normal_used_asymmetry = expand(n_as_used, as_parts);
    } else {
      rc.normal_used_dc_a = r.normal_dc_a;
      rc.normal_used_asymmetry = r.normal_asymmetry;
    }
    r.repeat = rc;
  }

  // DOMAIN.md lead-swap test. Probe on the electrode's lead: the supply's part reverses with
  // the leads (N = D + E, S = −D + E), so D is the half difference and E the half sum. Probe on
  // a supply terminal: the electrodes' part reverses (N = D + E, S = D − E), so D is the half
  // sum and E the half difference. The probe offset therefore lands in E in the first case and
  // in D in the second.
  const Halves dc =
      halves(n_dc_used, n_dc_stat, s_dc, {swapped.dc_type_a}, 1.0, 1.0, u_off, u_gain_rel);
  const Halves as =
      halves(n_as_used, n_as_stat, s_as, {swapped.asymmetry_type_a}, c_n_used, c_s, u_off, 0.0);
  const bool on_electrode = probe.on == ProbeOn::electrode;
  r.driver_bias_a = on_electrode ? dc.difference : dc.sum;
  r.electrode_bias_a = on_electrode ? dc.sum : dc.difference;
  r.driver_asymmetry = on_electrode ? as.difference : as.sum;
  r.electrode_asymmetry = on_electrode ? as.sum : as.difference;

  const Estimate& d = r.driver_bias_a;
  const Estimate& e = r.electrode_bias_a;
  const double total = std::fabs(d.value) + std::fabs(e.value);
  const double total_as =
      std::fabs(r.driver_asymmetry.value) + std::fabs(r.electrode_asymmetry.value);
  const bool d_counts = counts(d, total, th.part_share);
  const bool e_counts = counts(e, total, th.part_share);
  const bool d_as_counts = counts(r.driver_asymmetry, total_as, th.part_share);
  const bool e_as_counts = counts(r.electrode_asymmetry, total_as, th.part_share);

  r.evidence.push_back(
      part_evidence("driver_bias", d, total, th.part_share, "the supply's part of the DC offset"));
  r.evidence.push_back(part_evidence("electrode_bias", e, total, th.part_share,
                                     "the electrodes' part of the DC offset"));
  r.evidence.push_back(part_evidence("driver_asymmetry", r.driver_asymmetry, total_as,
                                     th.part_share, "the supply's part of the charge asymmetry"));
  r.evidence.push_back(part_evidence("electrode_asymmetry", r.electrode_asymmetry, total_as,
                                     th.part_share,
                                     "the electrodes' part of the charge asymmetry"));

  // Clipping of one polarity fakes an asymmetry (DOMAIN.md): either capture clipped, no cause.
  const bool n_clipped = clipped_cycles(ns) > 0, s_clipped = clipped_cycles(ss) > 0;
  r.evidence.push_back({"clipped_normal", clipped_cycles(ns), 0,
                        n_clipped
                            ? "the normal capture has cycles clipped at the recorder's range: "
                              "a clipped polarity fakes an asymmetry"
                            : "the normal capture has no clipped cycle"});
  r.evidence.push_back({"clipped_swapped", clipped_cycles(ss), 0,
                        s_clipped
                            ? "the swapped capture has cycles clipped at the recorder's range: "
                              "a clipped polarity fakes an asymmetry"
                            : "the swapped capture has no clipped cycle"});

  // The test assumes one unit on one load (DOMAIN.md, lead-swap test): the exchange reverses
  // one part of the DC and nothing else, so the fundamental and the AC RMS must repeat. A pair
  // that differs in them may be two units, two loads or two set-ups, and its half difference
  // and half sum mean nothing: the verdict is inconclusive, never a cause (issue 9, item 8).
  const Pairing pair = pairing(ns, ss, th);
  const bool f_mismatch = pair.f_mismatch, a_mismatch = pair.a_mismatch;
  r.evidence.push_back(
      {"fundamental_mismatch", pair.df, pair.f_bar,
       f_mismatch
           ? "the two captures' fundamentals (" + hertz_text(ns.fundamental_hz.value) + ", " +
                 hertz_text(ss.fundamental_hz.value) + ") differ by " + percent_text(pair.df) +
                 ", more than " + pair.f_bar_text +
                 ": they cannot be one unit on one load, so no cause is drawn"
           : "the two captures agree in fundamental frequency (within " + pair.f_bar_text + ")"});
  r.evidence.push_back(
      {"ac_rms_mismatch", pair.da, th.ac_rms_mismatch,
       a_mismatch ? "the two captures' AC RMS currents differ by " + percent_text(pair.da) +
                        ", more than " + percent_text(th.ac_rms_mismatch) +
                        ": they cannot be one unit on one load, so no cause is drawn"
                  : "the two captures agree in AC RMS current (within " +
                        percent_text(th.ac_rms_mismatch) + ")"});
  if (f_mismatch) {
    r.warnings.push_back("the two captures differ in fundamental by " + percent_text(pair.df) +
                         " (more than " + pair.f_bar_text +
                         "): they may not be the same unit on the same load; no cause is drawn");
  }
  if (a_mismatch) {
    r.warnings.push_back("the two captures differ in AC RMS by " + percent_text(pair.da) +
                         " (more than " + percent_text(th.ac_rms_mismatch) +
                         "): they may not be the same unit on the same load; no cause is drawn");
  }

  // The repeat's evidence: it must be the same unit on the same load as N (the same bars as the
  // pair), unclipped, and its bias must come back.
  const RepeatOutcome outcome = r.repeat ? r.repeat->outcome : RepeatOutcome::inconclusive;
  if (r.repeat) {
    const RepeatCheck& rc = *r.repeat;
    const CycleSummary& rs = again->summary;
    r.evidence.push_back({"clipped_repeat", clipped_cycles(rs), 0,
                          r_clipped ? "the repeat of the normal capture has cycles clipped at the "
                                      "recorder's range: a clipped polarity fakes an asymmetry"
                                    : "the repeat of the normal capture has no clipped cycle"});
    r.evidence.push_back(
        {"repeat_fundamental_mismatch", rp.df, rp.f_bar,
         rp.f_mismatch
             ? "the repeat's fundamental (" + hertz_text(rs.fundamental_hz.value) +
                   ") and the first normal capture's (" + hertz_text(ns.fundamental_hz.value) +
                   ") differ by " + percent_text(rp.df) + ", more than " + rp.f_bar_text +
                   ": not the same unit on the same load, so it cannot show whether the bias "
                   "came back"
             : "the repeat agrees with the first normal capture in fundamental frequency "
               "(within " +
                   rp.f_bar_text + ")"});
    r.evidence.push_back(
        {"repeat_ac_rms_mismatch", rp.da, th.ac_rms_mismatch,
         rp.a_mismatch
             ? "the repeat's AC RMS current and the first normal capture's differ by " +
                   percent_text(rp.da) + ", more than " + percent_text(th.ac_rms_mismatch) +
                   ": not the same unit on the same load, so it cannot show whether the bias "
                   "came back"
             : "the repeat agrees with the first normal capture in AC RMS current (within " +
                   percent_text(th.ac_rms_mismatch) + ")"});
    const Estimate& dd = rc.difference_dc_a;
    const std::string bar_text = format_si(rc.material_dc_a, "A", 2) + ", " +
                                 percent_text(th.repeat_material_share) + " of the AC RMS";
    std::string text;
    switch (outcome) {
      case RepeatOutcome::bias_returned:
        text =
            "the bias came back: the repeat's DC offset differs from the first normal "
            "capture's by " +
            amps_with_u95(dd) + ", within its u95; D and E use the mean of the two normal captures";
        break;
      case RepeatOutcome::bias_drifted:
        text =
            "the bias drifted: the repeat's DC offset differs from the first normal "
            "capture's by " +
            amps_with_u95(dd) + ", beyond its u95 but under the materiality bar (" + bar_text +
            "); D and E use the mean of the two, its uncertainty widened by half the change";
        break;
      case RepeatOutcome::bias_changed:
        text =
            "the bias did not come back: the repeat's DC offset differs from the first "
            "normal capture's by " +
            amps_with_u95(dd) + ", beyond its u95 and the materiality bar (" + bar_text +
            "): the preferred cathode, the electrodes or the supply changed between the "
            "captures, so the split cannot be trusted";
        break;
      case RepeatOutcome::inconclusive:
        text = "the repeat's DC offset differs from the first normal capture's by " +
               amps_with_u95(dd) +
               ", but the repeat is not comparable with it (clipped or not the same unit on the "
               "same load): nothing is concluded from it";
        break;
    }
    r.evidence.push_back({"repeat_changed", dd.value, std::max(dd.u95, rc.material_dc_a), text});

    // The charge asymmetry is the cross-check, as for the parts: reported, not deciding.
    const Estimate& da = rc.difference_asymmetry;
    const bool as_changed = changed(da, rc.material_asymmetry);
    r.evidence.push_back(
        {"repeat_asymmetry_changed", da.value, std::max(da.u95, rc.material_asymmetry),
         "the repeat's charge asymmetry differs from the first normal capture's by " +
             ratio_with_u95(da) +
             (as_changed ? ", beyond its u95 and the materiality bar: it did not come back"
                         : ": no material change shown")});
    if (outcome == RepeatOutcome::bias_changed) {
      r.warnings.push_back(
          "the bias of the repeat of the normal capture differs from the first by " +
          amps_with_u95(dd) + ": the split cannot be trusted; no cause is drawn");
    } else if (outcome == RepeatOutcome::bias_drifted) {
      r.warnings.push_back(
          "the repeat of the normal capture differs from the first by " + amps_with_u95(dd) +
          ", beyond its u95 but under the materiality bar (" + bar_text +
          "): the split uses their mean, its uncertainty widened by half the change");
    }
    if (rp.f_mismatch) {
      r.warnings.push_back("the repeat and the first normal capture differ in fundamental by " +
                           percent_text(rp.df) + " (more than " + rp.f_bar_text +
                           "): they may not be the same unit on the same load; no cause is "
                           "drawn");
    }
    if (rp.a_mismatch) {
      r.warnings.push_back("the repeat and the first normal capture differ in AC RMS by " +
                           percent_text(rp.da) + " (more than " + percent_text(th.ac_rms_mismatch) +
                           "): they may not be the same unit on the same load; no cause is "
                           "drawn");
    }
    const bool dc_changed = outcome == RepeatOutcome::bias_changed;
    if ((outcome == RepeatOutcome::bias_returned || dc_changed ||
         outcome == RepeatOutcome::bias_drifted) &&
        as_changed != dc_changed) {
      r.warnings.push_back(
          "the repeat's DC offset and charge asymmetry disagree about whether the bias came "
          "back; the outcome follows the DC offset");
    }
  }

  const double ac_rms = 0.5 * (ns.ac_rms_a.value + ss.ac_rms_a.value);
  const double resolution =
      ac_rms > 0 ? std::max(d.u95, e.u95) / ac_rms : std::numeric_limits<double>::infinity();
  r.evidence.push_back({"resolution", resolution, th.symmetric_u95_share,
                        resolution < th.symmetric_u95_share
                            ? "the larger u95 of the two parts is small against the AC RMS: an "
                              "absent part would have shown"
                            : "the larger u95 of the two parts is not small against the AC RMS: a "
                              "part could hide in it"});

  const bool agree = d_counts == d_as_counts && e_counts == e_as_counts;
  if (!agree) {
    r.warnings.push_back(
        "the DC offset and the charge asymmetry disagree about which part counts; "
        "the verdict follows the DC offset");
  }

  // The verdict follows the DC offset's parts; the charge asymmetry's are a cross-check.
  const bool r_mismatch = rp.f_mismatch || rp.a_mismatch;
  if (n_clipped || s_clipped || f_mismatch || a_mismatch || repeat_blocks) {
    r.verdict = Verdict::inconclusive;
    if (n_clipped) r.deciding.push_back("clipped_normal");
    if (s_clipped) r.deciding.push_back("clipped_swapped");
    if (f_mismatch) r.deciding.push_back("fundamental_mismatch");
    if (a_mismatch) r.deciding.push_back("ac_rms_mismatch");
    if (r_clipped) r.deciding.push_back("clipped_repeat");
    if (rp.f_mismatch) r.deciding.push_back("repeat_fundamental_mismatch");
    if (rp.a_mismatch) r.deciding.push_back("repeat_ac_rms_mismatch");
    if (repeat_blocks && !r_clipped && !r_mismatch) r.deciding.push_back("repeat_changed");
  } else if (d_counts && e_counts) {
    r.verdict = Verdict::mixed;
    r.deciding = {"driver_bias", "electrode_bias"};
  } else if (d_counts) {
    r.verdict = Verdict::driver_imbalance;
    r.deciding = {"driver_bias"};
  } else if (e_counts) {
    r.verdict = Verdict::self_rectification;
    r.deciding = {"electrode_bias"};
  } else if (resolution < th.symmetric_u95_share) {
    r.verdict = Verdict::symmetric;
    r.deciding = {"driver_bias", "electrode_bias", "resolution"};
  } else {
    r.verdict = Verdict::inconclusive;
    r.deciding = {"resolution"};
  }

  // Confidence, 0…1 (README.md "lopside swap"):
  //  - inconclusive: 0 (there is no cause to be confident in);
  //  - a cause (driver_imbalance, self_rectification, mixed): 1 − 1/z, z = |value|/u95 of the
  //    weakest part that counts (z = 2 gives 0.5, z = 10 gives 0.9); halved for each part that
  //    does not count but could (|value| + u95 reaches its share of |D| + |E|);
  //  - symmetric: 1 − (larger u95 of the parts)/(1 % of the AC RMS);
  //  then × 0.75 when the charge asymmetry's parts disagree with the DC offset's about which
  //  part counts. (A mismatch between the captures, or a repeat whose bias did not come back,
  //  makes the verdict inconclusive, above.)
  double confidence = 0;
  const auto z = [](const Estimate& p) {
    return p.u95 > 0 ? std::fabs(p.value) / p.u95 : std::numeric_limits<double>::infinity();
  };
  const auto could_count = [&](const Estimate& p) {
    return std::fabs(p.value) + p.u95 >= th.part_share * total;
  };
  switch (r.verdict) {
    case Verdict::inconclusive:
      confidence = 0;
      break;
    case Verdict::symmetric:
      confidence = 1.0 - resolution / th.symmetric_u95_share;
      break;
    default: {
      double z_min = std::numeric_limits<double>::infinity();
      if (d_counts) z_min = std::min(z_min, z(d));
      if (e_counts) z_min = std::min(z_min, z(e));
      confidence = 1.0 - 1.0 / z_min;
      if (!d_counts && could_count(d)) confidence *= 0.5;
      if (!e_counts && could_count(e)) confidence *= 0.5;
      break;
    }
  }
  if (!agree) confidence *= 0.75;
  r.confidence = std::clamp(confidence, 0.0, 1.0);

  // Next steps: what a technician does with the verdict.
  // Electrode A is the one the probed lead fed in the normal capture (the sign convention of
  // `lopside measure`: positive current flows from the probed lead into electrode A).
  const std::string probed =
      on_electrode ? "electrode A (the one whose lead carried the probe)"
                   : "electrode A (the one the probed terminal fed in the normal capture)";
  const auto electrode_step = [&] {
    // E > 0: net current flows into A, so A is the anode for more charge and B the preferred
    // cathode.
    return std::string(
               "The electrodes' part stays when the leads are exchanged: compare the two "
               "electrodes (shape, surface, material, contamination). ") +
           (e.value > 0
                ? "Net current flows into " + probed +
                      ", so electrode B is the preferred cathode: it carries more charge as "
                      "cathode and, in a glow, runs hotter."
                : "Net current flows out of " + probed +
                      ", so A is the preferred cathode: it carries more charge as cathode "
                      "and, in a glow, runs hotter.");
  };
  const std::string driver_step =
      "The supply's part reverses when the leads are exchanged: look at the driver's switching "
      "(unequal half-cycle timing, gate drive, output-stage components).";
  const bool repeat_changed = r.repeat && outcome == RepeatOutcome::bias_changed;
  switch (r.verdict) {
    case Verdict::inconclusive:
      if (n_clipped || s_clipped || r_clipped) {
        r.next_steps.push_back(
            std::string("Widen the recorder's range (or choose a less sensitive probe range) "
                        "until neither polarity clips, then record ") +
            (r.repeat ? "all three captures" : "both captures") + " again.");
      }
      if (f_mismatch || a_mismatch) {
        r.next_steps.push_back(
            "Record both captures on the same unit and load, warmed up alike, exchanging "
            "only the supply's two output leads between them, and run the test again.");
      }
      if (r_mismatch) {
        r.next_steps.push_back(
            "Record the repeat on the same unit and load as the first normal capture, with the "
            "leads back as they were, warmed up alike, and run the test again.");
      }
      if (repeat_changed) {
        // A self-rectifying discharge builds its bias over seconds after ignition and may flip
        // its preferred cathode (DOMAIN.md): captures taken before it settles do not repeat.
        r.next_steps.push_back(
            "The bias did not come back between the two normal captures: let the discharge run "
            "until its DC offset settles (`lopside measure` on a long capture shows a build-up, "
            "flips or drift in its time course), then record normal, swapped and normal again "
            "in quick succession and run the test again. A bias that keeps changing points at "
            "a preferred cathode that flips, or at a supply that drifts.");
      }
      if (!n_clipped && !s_clipped && !f_mismatch && !a_mismatch && !r_clipped && !r_mismatch &&
          !repeat_changed) {
        r.next_steps.push_back(
            "Record longer captures (more cycles); with a DC-passing probe subtract a "
            "zero stretch (--zero) or use a probe with a smaller offset tolerance, "
            "until the parts' u95 fall well below their size.");
      }
      break;
    case Verdict::symmetric:
      r.next_steps.push_back(
          "Neither the supply nor the electrodes bias the current at this resolution. "
          "If one electrode still wears faster, record again after a longer warm-up: "
          "self-rectification builds up over seconds after ignition.");
      break;
    case Verdict::driver_imbalance:
      r.next_steps.push_back(driver_step);
      // With a repeat whose bias came back, a change of preferred cathode between the captures
      // is already ruled out at this resolution.
      if (!r.repeat) {
        r.next_steps.push_back(
            "A self-rectifying discharge whose preferred cathode changed between the two "
            "captures looks the same: repeat the normal capture and check that its DC "
            "offset comes back (give it to `lopside swap` as a third capture, NORMAL_AGAIN).");
      }
      break;
    case Verdict::self_rectification:
      r.next_steps.push_back(electrode_step());
      break;
    case Verdict::mixed:
      r.next_steps.push_back(driver_step);
      r.next_steps.push_back(electrode_step());
      break;
  }
  return r;
}

}  // namespace

LeadSwapResult analyse_lead_swap(const SwapCapture& normal, const SwapCapture& swapped,
                                 const SwapProbe& probe, const SwapThresholds& thresholds) {
  return analyse(normal, swapped, nullptr, probe, thresholds);
}

LeadSwapResult analyse_lead_swap(const SwapCapture& normal, const SwapCapture& swapped,
                                 const SwapCapture& normal_again, const SwapProbe& probe,
                                 const SwapThresholds& thresholds) {
  return analyse(normal, swapped, &normal_again, probe, thresholds);
}

}  // namespace lopside
