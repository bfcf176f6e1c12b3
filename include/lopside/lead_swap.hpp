#pragma once
/// \file
/// The lead-swap test: two captures of one unit, the supply's output leads exchanged between
/// them, split into the part of the DC (and of the charge asymmetry) that follows the supply
/// and the part that stays with the electrodes (DOMAIN.md, lead-swap test [common practice]).
///
/// With the probe kept on the same electrode's lead, the supply's bias reverses and the
/// electrodes' stays:  N = D + E, S = −D + E  →  D = (N − S)/2, E = (N + S)/2.
/// With the probe kept on one supply terminal, it is the other way round:
///                     N = D + E, S = D − E   →  D = (N + S)/2, E = (N − S)/2.
/// D and E are both stated as seen in the normal capture: a current flowing from the probed
/// lead into the electrode it fed there (the sign convention of `lopside measure`).
///
/// A repeat of the normal capture (N, S, then N' with the leads back as normal) tells whether
/// the bias came back. A discharge whose preferred cathode changed between N and S gives
/// N = E, S = −E, which the split reads as a pure supply part; N' then shows −E, not N.

#include <optional>
#include <string>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/diagnosis.hpp"
#include "lopside/time_course.hpp"
#include "lopside/uncertainty.hpp"

namespace lopside {

/// Where the current probe stayed while the leads were exchanged.
enum class ProbeOn {
  electrode,  ///< on the lead of the same electrode in both captures
  supply,     ///< on the same supply terminal in both captures
};
/// "electrode" or "supply", as on the command line and in the JSON.
const char* to_string(ProbeOn on) noexcept;

/// One capture of the pair: its summary, measured with the probe tolerances set to 0, and the
/// statistical (type-A) standard uncertainties of its DC offset and charge asymmetry. The
/// probe's tolerances are added by analyse_lead_swap, once, because the same probe took both
/// captures (its errors are fully correlated between them, GUM 5.2).
struct SwapCapture {
  CycleSummary summary;
  UncertaintyComponent dc_type_a;         ///< standard uncertainty of summary.dc_offset_a [A]
  UncertaintyComponent asymmetry_type_a;  ///< standard uncertainty of summary.charge_asymmetry [1]
};

/// The standard uncertainty and degrees of freedom behind an Estimate made without type-B
/// parts: u95 / k, with ν recovered from k (k = 2 means ν ≥ 30, GUM 6.3.3; it is taken as 30,
/// the conservative end; a larger k is the Student t95 of ν, inverted).
UncertaintyComponent statistical_part(const Estimate& estimate);

/// The probe that took both captures and where it stayed.
struct SwapProbe {
  double offset_a = 0;  ///< stated offset tolerance ±a [A], ≥ 0 (rectangular, GUM 4.3.7)
  double gain_pct = 0;  ///< stated gain tolerance ±p [%], ≥ 0 (rectangular)
  ProbeOn on = ProbeOn::electrode;
};

/// Thresholds of the verdict; README.md gives the rule.
struct SwapThresholds {
  double part_share = 0.10;           ///< a part counts from this share of |D| + |E| on
  double symmetric_u95_share = 0.01;  ///< "symmetric" needs u95 below this share of the AC RMS
  /// Fundamentals differing (|fN − fS| / mean) by more than this, or by more than their combined
  /// relative u95 when that is larger, cannot be one unit on one load: verdict inconclusive.
  /// Our own choice, anchored on EN 50160 (from memory): mains on an interconnected grid stays
  /// within 50 Hz ± 1 % for 99.5 % of a year, so a mains-locked unit's two captures can differ by
  /// up to 2 % without anything on the bench changing. The lead exchange changes neither the
  /// driver nor the load, so a self-oscillating driver's warm-up drift should stay inside it too.
  double frequency_mismatch = 0.02;
  /// AC RMS currents differing (|IN − IS| / mean) by more than this cannot be one unit on one
  /// load: verdict inconclusive. Our own choice (no standard sets it), a bench allowance in the
  /// spirit of common practice: the lead exchange changes neither the supply's output nor the
  /// load, so the RMS should repeat; 20 % leaves room for warm-up and a re-seated probe, while a
  /// 1 : 2 pair (67 % apart) or another unit's load stands well outside it.
  double ac_rms_mismatch = 0.20;
  /// A change between the normal capture and its repeat is material from this share of their
  /// mean AC RMS on: the bar of materiality the time course and the diagnosis share (README.md,
  /// `dc_negligible`), so a change the rest of lopside calls negligible is never a "change" here.
  double repeat_material_share = kNegligibleDcShare;
};

/// What the repeat of the normal capture showed (README.md "lopside swap", repeat rule).
enum class RepeatOutcome {
  bias_returned,  ///< N' − N within its u95, and N' pairs with N: D and E use (N + N')/2
  /// N' − N beyond its u95 but under the materiality bar: a slow drift. D and E use (N + N')/2
  /// with the half-difference added as a rectangular uncertainty (the normal at the time of S
  /// lies between N and N' when the drift is monotonic).
  bias_drifted,
  bias_changed,  ///< N' − N beyond its u95 and the bar: the split cannot be trusted
  inconclusive,  ///< N' clipped, or not the same unit on the same load as N
};
/// "bias_returned", "bias_drifted", "bias_changed" or "inconclusive", as in the JSON.
const char* to_string(RepeatOutcome outcome) noexcept;

/// The comparison of the normal capture N with its repeat N'.
struct RepeatCheck {
  /// N''s DC offset and charge asymmetry with the probe's tolerances (as `lopside measure`).
  Estimate again_dc_a, again_asymmetry;
  /// N' − N. The same probe took both: its offset cancels in the DC difference and enters the
  /// asymmetry difference only through the captures' different sensitivities; its gain scales
  /// the DC difference.
  Estimate difference_dc_a, difference_asymmetry;
  double material_dc_a = 0;       ///< the materiality bar: share × mean AC RMS of N and N' [A]
  double material_asymmetry = 0;  ///< the same bar over N's mean |i|, (Q+ + Q−)·f [1]
  RepeatOutcome outcome = RepeatOutcome::inconclusive;
  /// The normal the split used, (N + N')/2 with the probe's tolerances, when the outcome is
  /// bias_returned or bias_drifted; otherwise N itself (the split is then not trusted).
  Estimate normal_used_dc_a, normal_used_asymmetry;
  bool mean_used = false;
};

struct LeadSwapResult {
  ProbeOn probe_on = ProbeOn::electrode;
  Estimate driver_bias_a;        ///< D of the DC offset [A]
  Estimate electrode_bias_a;     ///< E of the DC offset [A]
  Estimate driver_asymmetry;     ///< D of the charge asymmetry (Q+ − Q−)/(Q+ + Q−) [1]
  Estimate electrode_asymmetry;  ///< E of the charge asymmetry [1]
  /// Each capture's DC offset and charge asymmetry with the probe's tolerances included (as
  /// `lopside measure` with the same probe flags would state them).
  Estimate normal_dc_a, swapped_dc_a, normal_asymmetry, swapped_asymmetry;
  Verdict verdict = Verdict::inconclusive;
  double confidence = 0;              ///< 0…1, rule in analyse_lead_swap and README.md
  std::vector<std::string> deciding;  ///< codes of the evidence that decided the verdict
  std::vector<Evidence> evidence;     ///< everything examined, deciding or not
  std::vector<std::string> warnings;
  std::vector<std::string> next_steps;
  std::optional<RepeatCheck> repeat;  ///< present when a repeat of the normal capture was given
};

/// Splits the pair into supply and electrode parts with their expanded uncertainties and draws
/// the verdict. Throws std::invalid_argument on negative probe tolerances (a programming
/// error: the command line checks them).
LeadSwapResult analyse_lead_swap(const SwapCapture& normal, const SwapCapture& swapped,
                                 const SwapProbe& probe, const SwapThresholds& thresholds = {});

/// The same with a repeat of the normal capture, recorded after the swapped one with the leads
/// back as normal (N, S, N'). N' is compared with N (RepeatCheck); when the bias came back (or
/// only drifted) the split uses (N + N')/2 as the normal, a better estimate of the normal at the
/// time of S; when it changed, or N' is not comparable with N, the verdict is inconclusive.
LeadSwapResult analyse_lead_swap(const SwapCapture& normal, const SwapCapture& swapped,
                                 const SwapCapture& normal_again, const SwapProbe& probe,
                                 const SwapThresholds& thresholds = {});

}  // namespace lopside
