#include "lopside/diagnosis.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "lopside/uncertainty.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

std::string num(double v, const char* fmt = "%.3g") {
  char buf[48];
  std::snprintf(buf, sizeof buf, fmt, v);
  return buf;
}

std::string pct(double share) {
  return num(100 * share, "%.2f") + " %";
}

// "−3.41 mA": three significant digits in the prefix the size calls for, signed.
std::string si_text(double v, const char* unit) {
  return format_si(v, unit, 3, true);
}

// Weights of the deciding evidence in the confidence: 1 − Π(1 − w) over the items that support
// the verdict (README.md states the rule). Items that read the cause off the voltage directly
// weigh most; a build-up alone could also be a supply warming up, so it weighs least.
constexpr double kWeightVoltageHalfPeriods = 0.8;
constexpr double kWeightVoltageDc = 0.7;
constexpr double kWeightCurrentOnly = 0.7;
constexpr double kWeightFlip = 0.8;
constexpr double kWeightBuildUp = 0.6;
constexpr double kWeightBurning = 0.5;

double weight_of(const std::string& code) {
  if (code == "voltage_half_periods") return kWeightVoltageHalfPeriods;
  if (code == "voltage_dc") return kWeightVoltageDc;
  if (code == "current_asymmetric_voltage_symmetric") return kWeightCurrentOnly;
  if (code == "polarity_flip") return kWeightFlip;
  if (code == "dc_builds_up") return kWeightBuildUp;
  if (code == "burning_voltage_asymmetry") return kWeightBurning;
  return 0.0;
}

double combine_weights(const std::vector<std::string>& codes) {
  double miss = 1.0;
  for (const std::string& c : codes) miss *= 1.0 - weight_of(c);
  return 1.0 - miss;
}

}  // namespace

const char* to_string(Verdict v) noexcept {
  switch (v) {
    case Verdict::symmetric:
      return "symmetric";
    case Verdict::driver_imbalance:
      return "driver_imbalance";
    case Verdict::self_rectification:
      return "self_rectification";
    case Verdict::mixed:
      return "mixed";
    case Verdict::inconclusive:
      break;
  }
  return "inconclusive";
}

const char* verdict_sentence(Verdict v) noexcept {
  switch (v) {
    case Verdict::symmetric:
      return "No DC worth acting on: both electrodes carry the same charge.";
    case Verdict::driver_imbalance:
      return "The supply switches unevenly and pushes a DC through the discharge.";
    case Verdict::self_rectification:
      return "The discharge rectifies itself: one electrode has become the preferred cathode.";
    case Verdict::mixed:
      return "Both the supply and the electrodes add to the DC.";
    case Verdict::inconclusive:
      break;
  }
  return "This capture cannot say where the DC comes from.";
}

Diagnosis diagnose(const CycleSummary& s, const TimeCourseResult& course,
                   const DiagnosisThresholds& th) {
  Diagnosis d;
  auto add = [&](std::string code, double value, double threshold, std::string text) {
    d.evidence.push_back(Evidence{std::move(code), value, threshold, std::move(text)});
  };

  // --- what would make any conclusion unsafe ------------------------------------------
  const std::uint64_t clipped = s.clipped_positive + s.clipped_negative;
  if (clipped > 0) {
    add("clipped", static_cast<double>(clipped), 0,
        std::to_string(clipped) +
            " cycle(s) sit on the recorder's extreme: clipping of one "
            "polarity fakes a DC and an asymmetry, so nothing can be concluded from this capture.");
  }
  const double dc = s.dc_offset_a.value;
  const bool dc_significant = s.dc_significant;
  const bool asym_significant = std::fabs(s.charge_asymmetry.value) > s.charge_asymmetry.u95;
  if (!dc_significant) {
    add("dc_not_significant", dc, s.dc_offset_a.u95,
        "The DC offset is not above its expanded uncertainty: no DC is shown, so no cause is "
        "given.");
  } else if (std::fabs(dc) < th.negligible_dc_share * s.ac_rms_a.value) {
    add("dc_negligible", dc / s.ac_rms_a.value, th.negligible_dc_share,
        "The DC offset is measurable but below " + pct(th.negligible_dc_share) +
            " of the AC current: too small to heat one electrode noticeably.");
  }

  // --- the supply ------------------------------------------------------------------------
  bool driver = false, self = false;
  std::vector<std::string> driver_codes, self_codes;
  bool voltage_symmetric = false;
  if (s.has_voltage && !s.voltage_periodic) {
    add("voltage_not_periodic", 0, 0,
        "The voltage channel is not periodic (the current set the cycles): its figures say "
        "nothing about how the supply switches and are not used as evidence.");
  } else if (s.has_voltage) {
    const double vpeak = 0.5 * (std::fabs(s.voltage_peak_positive_v.value) +
                                std::fabs(s.voltage_peak_negative_v.value));
    const double vdc_share = vpeak > 0 ? s.voltage_mean_v.value / vpeak : 0.0;
    const bool vdc = std::fabs(vdc_share) > th.voltage_dc_share &&
                     std::fabs(s.voltage_mean_v.value) > s.voltage_mean_v.u95;
    add("voltage_dc", vdc_share, th.voltage_dc_share,
        vdc ? "The voltage carries a DC component of " + pct(vdc_share) +
                  " of its peak: the supply's switching is unbalanced."
            : "The voltage has no DC component beyond " + pct(th.voltage_dc_share) +
                  " of its peak.");
    const double half = s.voltage_positive_share.value - 0.5;
    const bool vhalf = std::fabs(half) > th.voltage_half_period_share &&
                       std::fabs(half) > s.voltage_positive_share.u95;
    add("voltage_half_periods", half, th.voltage_half_period_share,
        vhalf ? "The voltage's positive half lasts " + pct(s.voltage_positive_share.value) +
                    " of the period: the supply switches unevenly."
              : "The voltage's half-periods are equal within " + pct(th.voltage_half_period_share) +
                    ".");
    if (vdc) {
      driver = true;
      driver_codes.push_back("voltage_dc");
    }
    if (vhalf) {
      driver = true;
      driver_codes.push_back("voltage_half_periods");
    }
    voltage_symmetric = !vdc && !vhalf;
    const double asym = s.charge_asymmetry.value;
    const bool current_only =
        voltage_symmetric && std::fabs(asym) > th.current_asymmetry && asym_significant;
    add("current_asymmetric_voltage_symmetric", asym, th.current_asymmetry,
        current_only ? "The current's half-cycles differ (charge asymmetry " + num(asym, "%+.4f") +
                           ") while the voltage is symmetric: the discharge itself rectifies."
                     : "The current's asymmetry is not accompanied by a symmetric voltage, or is "
                       "below the threshold.");
    if (current_only) {
      self = true;
      self_codes.push_back("current_asymmetric_voltage_symmetric");
    }
    // Different cathode falls at the two electrodes show as different burning voltages.
    const double vp = s.burning_voltage_positive_v.value, vn = s.burning_voltage_negative_v.value;
    if (std::isfinite(vp) && std::isfinite(vn) && std::fabs(vp) + std::fabs(vn) > 0) {
      const double mean_burn = 0.5 * (std::fabs(vp) + std::fabs(vn));
      const double diff = (std::fabs(vp) - std::fabs(vn)) / mean_burn;
      // Beyond the scatter, each window's mean is off by up to one sample's share where the
      // sampling grid cuts its edges, the same in every cycle when the rate is a multiple of
      // the frequency: about |V|/N for N ≈ 0.43 samples per cycle in a window (the part of a
      // sine half above a fifth of its peak), taken as a rectangular half-width.
      const double n_window = std::max(1.0, 0.43 * s.samples_per_cycle);
      const double u_grid = 2.0 * rectangular(mean_burn / n_window) * std::sqrt(2.0);
      const double u =
          std::hypot(std::hypot(s.burning_voltage_positive_v.u95, s.burning_voltage_negative_v.u95),
                     u_grid) /
          mean_burn;
      const bool burn = std::fabs(diff) > th.burning_voltage_share && std::fabs(diff) > u;
      add("burning_voltage_asymmetry", diff, th.burning_voltage_share,
          burn ? "The burning voltage differs by polarity (" + pct(diff) +
                     "): the electrodes differ as cathodes."
               : "The burning voltage is the same in both directions within " +
                     pct(th.burning_voltage_share) + ".");
      if (burn) {
        self = true;
        self_codes.push_back("burning_voltage_asymmetry");
      }
    }
  } else {
    add("no_voltage_channel", 0, 0,
        "Without a voltage channel the supply cannot be checked from this capture: the "
        "lead-swap test tells the supply's part from the electrodes'.");
  }

  // --- the time course -------------------------------------------------------------------
  // A flip or a build-up must move the DC by a material amount, above the same bar that calls a
  // DC negligible (issue 9, item 4): the time course applies its own (default) bar, and these
  // thresholds are applied again so that a caller's negligible_dc_share holds here too.
  const double material = th.negligible_dc_share * s.ac_rms_a.value;
  const bool built_up = course.build_up && course.build_up->significant &&
                        std::fabs(course.build_up->amplitude.value) > material;
  if (course.build_up) {
    add("dc_builds_up", built_up ? course.build_up->tau_s.value : 0.0, 0,
        built_up ? "The DC builds up after ignition with a time constant of " +
                       num(course.build_up->tau_s.value) + " s towards " +
                       num(course.build_up->plateau.value * 1e3) +
                       " mA: the thermal feedback of an electrode that became the cathode."
                 : "The DC does not build up after ignition.");
  }
  if (built_up) {
    self = true;
    self_codes.push_back("dc_builds_up");
  }
  std::size_t flips = 0;
  for (const Event& e : course.events) {
    const bool real =
        std::fabs(e.level_before_a) > material && std::fabs(e.level_after_a) > material;
    flips += e.kind == "flip" && real ? 1u : 0u;
  }
  add("polarity_flip", static_cast<double>(flips), 0,
      flips ? std::to_string(flips) +
                  " polarity flip(s): the discharge picks its cathode, so the "
                  "bias is the discharge's, not the supply's."
            : "The DC keeps its sign throughout (levels below " + pct(th.negligible_dc_share) +
                  " of the AC current do not count).");
  if (flips) {
    self = true;
    self_codes.push_back("polarity_flip");
  }

  // --- the spectrum: DC and even harmonics travel together --------------------------------
  // Only even orders that stand above the capture's own noise floor count (harmonics.hpp,
  // `significant`): noise puts as much into the even orders as into the odd ones and the bins
  // between them, and must not pass for a half-cycle difference (issue 9, item 3).
  bool offset_like = false;
  const bool even_available = s.harmonics && s.harmonics->even_evidence_available;
  if (!even_available) {
    add("even_harmonics_not_available", 0, 0,
        "The even harmonics cannot be checked (fewer whole cycles than one harmonic block, or "
        "too few samples per cycle for the 2nd order): the current's asymmetry alone gives no "
        "cause.");
  } else if (dc_significant) {
    const HarmonicSummary& h = *s.harmonics;
    const double ratio = h.even_significant_rms_a / std::fabs(dc);
    offset_like = ratio < th.even_rms_to_dc;
    const std::string orders = order_list(h.even_significant_orders);
    add("even_harmonics", ratio, th.even_rms_to_dc,
        offset_like
            ? "The DC comes without even harmonics above the noise floor (their rms is " +
                  pct(ratio) +
                  " of the DC): the half-cycles have one shape, so a probe offset or a DC leak is "
                  "more likely than a half-cycle difference; zero the probe (--zero)."
            : "Even harmonics above the noise floor (orders " + orders + ", rms " + pct(ratio) +
                  " of the DC) come with the DC, as a difference between the half-cycles must "
                  "give.");
  }
  if (!even_available) {
    // Without the second witness the current's own asymmetry is only the DC seen again.
    if (std::erase(self_codes, std::string("current_asymmetric_voltage_symmetric")) > 0) {
      for (Evidence& e : d.evidence) {
        if (e.code == "current_asymmetric_voltage_symmetric")
          e.text = "Discounted (even harmonics not available): " + e.text;
      }
    }
    self = !self_codes.empty();
  }

  // A rectifying discharge changes the shape of one half-cycle, and that makes even
  // harmonics; a DC without them is a level shift (a probe offset, a DC leak), under which the
  // current's "asymmetry" and the polarity-dependent burning voltage are only its echoes.
  if (offset_like) {
    for (const char* echo : {"current_asymmetric_voltage_symmetric", "burning_voltage_asymmetry"}) {
      if (std::erase(self_codes, std::string(echo)) == 0) continue;
      for (Evidence& e : d.evidence) {
        if (e.code == echo)
          e.text = "Discounted (no even harmonics, see even_harmonics): " + e.text;
      }
    }
    self = !self_codes.empty();
  }

  // --- the verdict (README.md, "Diagnosis rules") ------------------------------------------
  if (clipped > 0) {
    d.verdict = Verdict::inconclusive;
    d.deciding = {"clipped"};
    d.confidence = 0;
  } else if (!driver && !self && flips == 0 && !offset_like &&
             (!dc_significant || std::fabs(dc) < th.negligible_dc_share * s.ac_rms_a.value)) {
    // No evidence either way and no DC worth the name: a DC that is statistically significant
    // but below the negligible share is what a clean capture shows one time in twenty.
    // Symmetric only if the capture could have shown a DC of 1 % of the AC current.
    const bool sharp = s.dc_offset_a.u95 < 0.01 * s.ac_rms_a.value;
    d.verdict = sharp ? Verdict::symmetric : Verdict::inconclusive;
    d.deciding = {dc_significant ? "dc_negligible" : "dc_not_significant"};
    d.confidence = sharp ? 0.9 : 0.0;
  } else if (driver && self) {
    d.verdict = Verdict::mixed;
    d.confidence = std::min(combine_weights(driver_codes), combine_weights(self_codes));
  } else if (driver) {
    d.verdict = Verdict::driver_imbalance;
    d.confidence = combine_weights(driver_codes);
  } else if (self) {
    d.verdict = Verdict::self_rectification;
    d.confidence = combine_weights(self_codes);
  } else {
    d.verdict = Verdict::inconclusive;
    d.confidence = 0;
  }
  if (d.deciding.empty()) {
    if (driver) d.deciding.insert(d.deciding.end(), driver_codes.begin(), driver_codes.end());
    if (self) d.deciding.insert(d.deciding.end(), self_codes.begin(), self_codes.end());
    if (!driver && !self && offset_like) d.deciding.push_back("even_harmonics");
    if (!driver && !self && !s.has_voltage) d.deciding.push_back("no_voltage_channel");
    if (!driver && !self && s.has_voltage && !s.voltage_periodic)
      d.deciding.push_back("voltage_not_periodic");
    if (!driver && !self && !even_available && dc_significant)
      d.deciding.push_back("even_harmonics_not_available");
  }

  // --- which electrode is the cathode, stretch by stretch (issue 9, item 7) ---------------
  // Sign convention (heating_share): while i > 0, A is the anode and B the cathode; a negative
  // DC (more charge while i < 0) makes A the preferred cathode.
  const bool a_cathode_more = s.charge_negative_c.value > s.charge_positive_c.value;
  std::string hotter = a_cathode_more ? "A" : "B";
  if (flips > 0) {
    for (const Segment& g : course.segments) {
      CathodeStretch c;
      c.start_s = g.start_s;
      c.end_s = g.end_s;
      c.mean_dc_a = g.mean_dc_a;
      c.u95_a = g.u95_a;
      c.electrode = !g.decided ? "none" : (g.mean_dc_a < 0 ? "A" : "B");
      if (!d.cathodes.empty() && d.cathodes.back().electrode == c.electrode) {
        d.cathodes.back().end_s = c.end_s;  // neighbouring segments with the same cathode
        continue;
      }
      d.cathodes.push_back(c);
    }
    // After a flip the record's mean mixes two cathodes: the advice names the last one.
    for (auto it = d.cathodes.rbegin(); it != d.cathodes.rend(); ++it) {
      if (it->electrode != "none") {
        hotter = it->electrode;
        break;
      }
    }
  }
  std::string stretches;
  for (const CathodeStretch& c : d.cathodes) {
    if (!stretches.empty()) stretches += "; ";
    char span[96];
    std::snprintf(span, sizeof span, "%.4g–%.4g s: ", c.start_s, c.end_s);
    stretches += span + (c.electrode == "none" ? std::string("no preferred cathode")
                                               : "electrode " + c.electrode);
  }

  // --- what to do next (the caution is printed with them by every report) -----------------
  switch (d.verdict) {
    case Verdict::symmetric:
      d.next_steps.push_back("No DC to act on; keep this capture as the unit's reference.");
      break;
    case Verdict::driver_imbalance:
      d.next_steps.push_back(
          "Check the inverter's switch timing and drive symmetry (dead times, gate drive, "
          "output capacitor).");
      d.next_steps.push_back(
          "Confirm with the lead-swap test (lopside swap): the DC must reverse with the leads.");
      break;
    case Verdict::self_rectification:
      d.next_steps.push_back(
          "Inspect electrode " + hotter +
          (d.cathodes.empty() ? ", the preferred cathode: it takes the extra heat and wears first."
                              : ", the preferred cathode since the last flip (" + stretches +
                                    "): it takes the extra heat and wears first."));
      d.next_steps.push_back(
          "Confirm with the lead-swap test (lopside swap): the DC must stay with the electrodes.");
      break;
    case Verdict::mixed:
      d.next_steps.push_back(
          "Run the lead-swap test (lopside swap) to size the supply's and the electrodes' parts.");
      d.next_steps.push_back(
          "Check the inverter's switch timing, and inspect electrode " + hotter +
          (d.cathodes.empty() ? "." : " (cathodes by stretch: " + stretches + ")."));
      break;
    case Verdict::inconclusive:
      if (clipped > 0) {
        d.next_steps.push_back(
            "Record again with a wider recorder range (neither polarity may reach full scale).");
      } else if (offset_like) {
        d.next_steps.push_back(
            "Zero the current probe on a stretch without discharge (--zero FROM:TO), or degauss "
            "a Hall probe, and measure again.");
      } else if (s.has_voltage && s.voltage_periodic) {
        d.next_steps.push_back("Run the lead-swap test (lopside swap).");
      } else {
        d.next_steps.push_back(
            "Run the lead-swap test (lopside swap), and record the supply's voltage too if you "
            "can.");
      }
      break;
  }
  return d;
}

HeatingShare heating_share(const CycleSummary& s, double cathode_share, const std::string& regime,
                           std::optional<double> erosion_ug_per_c, const Diagnosis* diagnosis,
                           const TimeCourseResult* course) {
  HeatingShare h;
  h.cathode_share_used = cathode_share;
  h.regime = regime;
  const double c = cathode_share, a = 1.0 - cathode_share;
  // Sign convention: while i > 0, A is the anode and B the cathode (Q+); while i < 0 the roles
  // swap (Q−).
  const double qp = s.charge_positive_c.value, qn = s.charge_negative_c.value;
  const double heat_a = c * qn + a * qp;
  const double heat_b = c * qp + a * qn;
  const double total = heat_a + heat_b;
  if (total > 0) {
    h.electrode_a = heat_a / total;
    h.electrode_b = heat_b / total;
  }
  if (erosion_ug_per_c && s.fundamental_hz.value > 0) {
    const double cycles_per_hour = 3600.0 * s.fundamental_hz.value;
    h.erosion_a_ug_per_h = *erosion_ug_per_c * qn * cycles_per_hour;
    h.erosion_b_ug_per_h = *erosion_ug_per_c * qp * cycles_per_hour;
  }
  // After the last flip: the split depends on the charges only through their ratio, Q+/(Q+ +
  // Q−) = (1 + asymmetry)/2, so the stretch's mean charge asymmetry (the time course's points,
  // weighted by their cycles) gives it.
  if (diagnosis && course && diagnosis->cathodes.size() > 1) {
    const double from = diagnosis->cathodes.back().start_s;
    double sum = 0, n = 0;
    for (const CoursePoint& p : course->points) {
      if (p.time_s < from) continue;
      sum += p.charge_asymmetry * static_cast<double>(p.cycles);
      n += static_cast<double>(p.cycles);
    }
    if (n > 0) {
      const double share_pos = 0.5 * (1 + sum / n), share_neg = 1 - share_pos;
      HeatingShare::Stretch st;
      st.start_s = from;
      st.electrode_a = c * share_neg + a * share_pos;
      st.electrode_b = c * share_pos + a * share_neg;
      h.after_last_flip = st;
    }
  }
  return h;
}

namespace {

// A diagnosis the probe gives no warning: only the dead intervals' part, when they set the zero.
void finish_without(Diagnosis& d, const ProbeFindings& probe, const DeadLevel& dead) {
  if (probe.method != "dead_intervals") return;
  d.evidence.push_back(
      Evidence{"dc_from_dead_intervals", -dead.level_a.value, dead.level_a.u95,
               "The probe (" + probe.kind + ") blocks DC; the record rests at " +
                   si_text(dead.level_a.value, "A") + " in " + std::to_string(dead.cycles_with) +
                   " of " + std::to_string(dead.cycles_examined) +
                   " cycles, where the true current is zero: that level was taken as the zero."});
}

}  // namespace

void apply_probe_findings(Diagnosis& d, const CycleSummary& s, const ProbeFindings& probe,
                          const DiagnosisThresholds& th) {
  const DeadLevel& dead = probe.dead;
  const double ac = s.ac_rms_a.value;
  // The rest level, when the record has one: through a probe that blocks DC it is −DC.
  const bool rests_off_zero = dead.found && std::fabs(dead.level_a.value) > dead.level_a.u95 &&
                              std::fabs(dead.level_a.value) > th.negligible_dc_share * ac;
  std::string sign_text =
      rests_off_zero
          ? " Between lobes the record rests at " + si_text(dead.level_a.value, "A") +
                " instead of zero: through a probe that blocks DC that is the hidden DC with its "
                "sign turned, so the hidden DC is " +
                (dead.level_a.value < 0 ? std::string("positive") : std::string("negative")) +
                " (electrode " + (dead.level_a.value < 0 ? "B" : "A") + " the preferred cathode)."
          : " The shape alone does not tell the hidden DC's sign reliably (no rest between "
            "lobes).";
  std::string code, text;
  if (!probe.passes_dc && probe.method == "not_recovered") {
    code = "probe_blocks_dc";
    text = "The stated probe (" + probe.kind +
           ") blocks DC and nothing recovered it (no time constant for the droop correction, " +
           (dead.found ? std::string("and dead intervals were not used") : dead.reason) +
           "): the DC offset shown is the probe's, near zero whatever the real DC." + sign_text;
  } else if (probe.passes_dc) {
    // The DC is too small for what the half-cycles show: zero within its u95 or negligible, or
    // far below the even harmonics (a weaker lobe or a longer half makes an even-harmonic rms
    // of 0.5 to 1.5 times its DC; over 4 times, our own bar, the DC has gone missing), or below
    // half the level the record rests at between lobes.
    const double even_rms = s.harmonics && s.harmonics->even_evidence_available
                                ? s.harmonics->even_significant_rms_a
                                : 0.0;
    const bool small_dc =
        !s.dc_significant || std::fabs(s.dc_offset_a.value) < th.negligible_dc_share * ac ||
        even_rms > 4 * std::fabs(s.dc_offset_a.value) ||
        (rests_off_zero && std::fabs(s.dc_offset_a.value) < 0.5 * std::fabs(dead.level_a.value));
    if (!small_dc) return finish_without(d, probe, dead);
    std::vector<std::string> why;
    if (s.harmonics && s.harmonics->even_evidence_available &&
        !s.harmonics->even_significant_orders.empty())
      why.push_back("even harmonics stand above the noise floor (orders " +
                    order_list(s.harmonics->even_significant_orders) + ")");
    if (std::fabs(s.positive_share.value - 0.5) > s.positive_share.u95 &&
        std::fabs(s.positive_share.value - 0.5) > th.voltage_half_period_share)
      why.push_back("the positive half lasts " + pct(s.positive_share.value) + " of the period");
    const double dpeak = s.peak_positive_a.value + s.peak_negative_a.value;
    const double upeak = std::hypot(s.peak_positive_a.u95, s.peak_negative_a.u95);
    if (std::fabs(dpeak) > upeak && std::fabs(dpeak) > 0.01 * s.peak_positive_a.value)
      why.push_back("the positive and negative peaks differ by " + si_text(dpeak, "A"));
    if (rests_off_zero)
      why.push_back("the current rests between lobes at " + si_text(dead.level_a.value, "A"));
    if (!why.empty()) {
      code = "probe_may_block_dc";
      text =
          "The current's mean is zero within its u95 or negligible, yet its half-cycles "
          "differ (";
      for (std::size_t k = 0; k < why.size(); ++k) text += (k ? "; " : "") + why[k];
      text +=
          "): a probe that blocks DC (a current transformer, a Rogowski coil, an AC-coupled "
          "input) hides a DC exactly so." +
          sign_text;
    }
  }
  if (code.empty()) return finish_without(d, probe, dead);
  d.evidence.push_back(Evidence{code, rests_off_zero ? -dead.level_a.value : 0.0,
                                rests_off_zero ? dead.level_a.u95 : 0.0, text});
  if (d.verdict == Verdict::symmetric) {
    d.verdict = Verdict::inconclusive;
    d.confidence = 0;
    d.deciding = {code};
  }
  d.next_steps.insert(
      d.next_steps.begin(),
      probe.passes_dc
          ? "Check the probe: record with a shunt or a Hall-effect probe, or state the probe "
            "(--probe ct|rogowski|ac-coupled, with --probe-tau or --rogowski-m) so the DC can be "
            "corrected or recovered."
          : "Give the probe's time constant (--probe-tau, with --probe-tau-pct) and record from "
            "before the discharge starts, or record with a shunt or a Hall-effect probe.");
}

}  // namespace lopside
