#pragma once
/// \file
/// Where a DC comes from and which electrode pays for it: the evidence one capture holds, the
/// verdict drawn from it, and each electrode's share of the electrode heating.
///
/// Two causes (DOMAIN.md): the supply switches unevenly (driver imbalance: the bias belongs to
/// the supply's terminals and shows in the voltage), or the discharge rectifies because one
/// electrode became the preferred cathode (self-rectification: the bias belongs to the
/// electrodes, builds up after ignition, may flip, and shows as a current asymmetry under a
/// symmetric voltage).

#include <optional>
#include <string>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/dead_interval.hpp"
#include "lopside/time_course.hpp"

namespace lopside {

/// One item of evidence: a code, the measured value, the threshold it was held against, and
/// one sentence saying what it means.
struct Evidence {
  std::string code;
  double value = 0;
  double threshold = 0;
  std::string text;
};

/// The verdicts, spelled as in every output.
enum class Verdict { symmetric, driver_imbalance, self_rectification, mixed, inconclusive };
const char* to_string(Verdict v) noexcept;
/// One plain sentence saying what the verdict means, printed beside its code.
const char* verdict_sentence(Verdict v) noexcept;

/// Which electrode was the preferred cathode over a stretch of the record (between flips).
struct CathodeStretch {
  double start_s = 0, end_s = 0;
  std::string electrode;  ///< "A", "B", or "none" (no significant and material DC there)
  double mean_dc_a = 0;
  double u95_a = 0;
};

struct Diagnosis {
  Verdict verdict = Verdict::inconclusive;
  double confidence = 0;                ///< 0…1, by the rule stated in README.md
  std::vector<std::string> deciding;    ///< codes of the evidence that decided the verdict
  std::vector<Evidence> evidence;       ///< everything examined, deciding or not
  std::vector<std::string> next_steps;  ///< one or two things a technician does next
  /// The preferred cathode stretch by stretch when the DC flipped (issue 9, item 7); empty
  /// without a flip, when the whole record's mean names it.
  std::vector<CathodeStretch> cathodes;
};

/// Thresholds of the evidence; the defaults are documented in README.md with their reasons.
struct DiagnosisThresholds {
  double voltage_dc_share = 0.005;  ///< |V_dc| / V_peak
  /// |DC| / AC RMS below which a DC does not matter; the time course uses the same bar.
  double negligible_dc_share = kNegligibleDcShare;
  double voltage_half_period_share = 0.003;  ///< |positive share − 0.5|
  double current_asymmetry = 0.01;           ///< |(Q+ − Q−)/(Q+ + Q−)|
  double burning_voltage_share = 0.03;       ///< |V+ − |V−|| / mean of the two
  /// Even-harmonic rms over |DC| below this: the DC comes without a half-cycle difference
  /// (a weaker lobe by ε gives H2 = 2εA/(3π) against DC = εA/π, a ratio of 0.47 in rms).
  double even_rms_to_dc = 0.1;
};

/// Draws evidence and verdict from a capture's summary and time course.
Diagnosis diagnose(const CycleSummary& summary, const TimeCourseResult& course,
                   const DiagnosisThresholds& thresholds = {});

/// Electrode heating split by the sign convention: positive current flows from the probed lead
/// into electrode A, so while i > 0 electrode A is the anode and B the cathode.
struct HeatingShare {
  double electrode_a = 0;  ///< A's share of the electrode heating, 0…1
  double electrode_b = 0;
  double cathode_share_used = 0;  ///< the cathode's heat per coulomb over the sum of both
  std::string regime;             ///< "glow", "arc" or "custom"
  std::optional<double> erosion_a_ug_per_h;  ///< cathode erosion of A, if a rate was given
  std::optional<double> erosion_b_ug_per_h;
  /// The same split over the stretch after the last polarity flip, when there was one: the
  /// whole record's mean mixes the cathodes before and after it.
  struct Stretch {
    double start_s = 0;
    double electrode_a = 0, electrode_b = 0;
  };
  std::optional<Stretch> after_last_flip;
};

/// Heat_A = c·Q− + a·Q+ and Heat_B = c·Q+ + a·Q− per cycle (c, a the cathode's and anode's
/// shares); erosion = rate × charge carried as cathode per hour.
HeatingShare heating_share(const CycleSummary& summary, double cathode_share,
                           const std::string& regime, std::optional<double> erosion_ug_per_c,
                           const Diagnosis* diagnosis = nullptr,
                           const TimeCourseResult* course = nullptr);

/// What the probe allows the diagnosis to say (issue 13): a probe that blocks DC, or a record
/// whose shape says the probe may block it, must never be called symmetric.
struct ProbeFindings {
  std::string kind = "shunt";  ///< as stated (probe.hpp's names)
  bool passes_dc = true;       ///< the stated probe passes DC
  /// How the DC was obtained: "direct" (a probe that passes DC), "droop" (CT or AC coupling
  /// corrected with τ), "rogowski" (integrated), "dead_intervals" (the record's rest level),
  /// "not_recovered" (a probe that blocks DC, nothing to recover it from).
  std::string method = "direct";
  DeadLevel dead;  ///< the record's rest level as read (before any shift)
};

/// Adds the probe's evidence to a diagnosis: "probe_blocks_dc" when the stated probe blocks DC
/// and nothing recovered it; "probe_may_block_dc" when a probe stated to pass DC gives a
/// current whose mean is zero within its u95 while its half-cycles differ (even harmonics above
/// the noise floor, unequal half-cycle durations or peaks) or which rests between lobes at a
/// level other than zero — with what the rest level says of the hidden DC's sign. Either turns
/// a symmetric verdict into inconclusive.
void apply_probe_findings(Diagnosis& diagnosis, const CycleSummary& summary,
                          const ProbeFindings& probe, const DiagnosisThresholds& thresholds = {});

}  // namespace lopside
