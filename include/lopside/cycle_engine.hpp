#pragma once
/// \file
/// The cycle engine: finds each cycle of an AC discharge capture with fractional-sample
/// boundaries and integrates the current (and voltage) over exactly that cycle, streaming.
///
/// Memory is bounded: a short acquisition look-ahead (at most kAcquireFrames frames) to learn
/// the signal's level and swing, a ring of a few dozen samples for the boundary fit, and
/// per-cycle accumulators. The per-cycle records go to a sink as they are completed; the
/// summary keeps batch sums only.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "lopside/harmonics.hpp"
#include "lopside/sample_source.hpp"
#include "lopside/uncertainty.hpp"

namespace lopside {

/// Which channel's rising crossings set the cycles.
enum class CycleReference {
  automatic,  ///< the voltage when it is present and periodic, else the current
  current,
  voltage,  ///< needs a voltage channel
};

/// How the engine is set up; validated once by the CycleEngine constructor.
struct CycleConfig {
  double sample_rate_hz = 0;                   ///< > 0 [Hz]
  double start_time_s = 0;                     ///< time of frame 0 [s]
  std::size_t current_channel = 0;             ///< 0-based channel index in the blocks
  std::optional<std::size_t> voltage_channel;  ///< 0-based; the cycle reference when given
  /// Probe offset subtracted from every current sample [A] (from `--zero`), 0 if none.
  double current_zero_a = 0;
  /// Standard uncertainty of that zero [A] (type A, from the zero stretch's scatter).
  double current_zero_u_a = 0;
  /// Probe's stated offset tolerance ±a [A] and gain tolerance ±p [%] (rectangular, GUM 4.3.7).
  double probe_offset_a = 0;
  double probe_gain_pct = 0;
  /// Cycles overlapping [exclude_from_s, exclude_to_s] are left out (the `--zero` stretch).
  std::optional<std::pair<double, double>> exclude_s;
  /// Cycle-synchronous harmonics of the current; sample_rate_hz is filled in by the engine.
  std::optional<HarmonicConfig> harmonics;
  CycleReference reference = CycleReference::automatic;
  /// The recorder's range for the current as the file's integer encoding states it (WAV/FLAC/
  /// AIFF), in A before the --zero offset is taken off; a crest on it is clipped.
  std::optional<double> current_full_scale_low_a, current_full_scale_high_a;
  /// Frames that only add to the open cycle's sums take a tight loop doing the same arithmetic
  /// in the same order (the results agree to the last bit); false sends every frame through
  /// the general path, for the tests that check that agreement.
  bool quick_path = true;
};

/// A stretch of the record left out of the summary, and why.
struct Exclusion {
  double start_s = 0, end_s = 0;
  /// "not_finite" (a NaN or infinite sample), "glitch" (a peak beyond kGlitchFactor times the
  /// typical swing), "irregular" (a period outside ±kPeriodTolerance of the running one: a
  /// dropout, a missed or a doubled crossing), "neighbour" (next to a glitch or an irregular
  /// cycle, sharing the boundary its fault reaches).
  std::string reason;
};

/// One whole cycle, integrated over its exact fractional-sample span.
struct CycleRecord {
  std::uint64_t index = 0;  ///< 0-based count of whole cycles
  double start_s = 0;       ///< time of the cycle's start boundary [s]
  double period_s = 0;
  // current
  double mean_a = 0;  ///< the cycle's DC offset
  double rms_a = 0;
  double ac_rms_a = 0;           ///< √(rms² − mean²)
  double charge_positive_c = 0;  ///< Q+ = ∫max(i,0)dt
  double charge_negative_c = 0;  ///< Q− = ∫max(−i,0)dt
  double charge_asymmetry = 0;   ///< (Q+ − Q−)/(Q+ + Q−)
  double peak_positive_a = 0;
  double peak_negative_a = 0;
  double positive_share = 0;       ///< share of the period with i > 0
  bool flat_top_positive = false;  ///< the positive peak is held by ≥ 3 equal samples
  bool flat_top_negative = false;
  /// The positive (negative) peak is clipped: a flat run too long for quantisation, between
  /// flanks whose curvature says the peak would have gone further (rule in cycle_engine.cpp).
  /// flat_top_* above stays the plain fact (≥ 3 equal samples), printed per cycle.
  bool clipped_positive = false;
  bool clipped_negative = false;
  bool has_voltage = false;  ///< the voltage fields below are measured
  // voltage (zero when there is no voltage channel)
  double voltage_mean_v = 0;
  double voltage_rms_v = 0;
  double voltage_peak_positive_v = 0;
  double voltage_peak_negative_v = 0;
  double voltage_positive_share = 0;
  double power_w = 0;            ///< mean of v·i over the cycle
  double energy_positive_j = 0;  ///< ∫ v·i dt while i > 0
  double energy_negative_j = 0;  ///< ∫ v·i dt while i < 0
  /// Mean voltage while the current conducts strongly in each direction (|i| above a fifth of
  /// the previous cycle's peak of that polarity): the burning voltage [V]; NaN when unknown.
  double burning_voltage_positive_v = 0;
  double burning_voltage_negative_v = 0;
};

/// A summary figure with its expanded uncertainty (95 %).
struct Estimate {
  double value = 0;
  double u95 = 0;         ///< expanded uncertainty, same unit as value
  double coverage_k = 2;  ///< the coverage factor used
};

/// Statistics of whole cycles.
struct CycleSummary {
  std::uint64_t cycles = 0;
  std::uint64_t partial_cycles = 0;   ///< incomplete cycles at the ends, left out
  std::uint64_t excluded_cycles = 0;  ///< whole cycles in the `--zero` stretch, left out
  /// Cycles left out because a sample in or next to them is not finite, holds a glitch, or
  /// because their period is irregular (Exclusion::reason); not in `cycles`.
  std::uint64_t not_finite_cycles = 0, glitch_cycles = 0, irregular_cycles = 0;
  /// Cycles left out because a neighbour's fault (a glitch, an irregular period) reaches the
  /// boundary they share, through the boundary fit or the edge corrections.
  std::uint64_t neighbour_cycles = 0;
  std::uint64_t not_finite_samples = 0;  ///< NaN or infinite samples of the current or voltage
  /// The first kMaxExclusions such stretches, in time order.
  std::vector<Exclusion> exclusions;
  /// False when the reference has no periodic fundamental (noise, a single transient): most of
  /// its "cycles" are irregular. The figures are then meaningless and the caller refuses them.
  bool periodic = true;
  std::string not_periodic_reason;  ///< why `periodic` is false, as a clause
  /// False when the voltage channel was found not periodic and the current set the cycles: the
  /// voltage's figures are then no evidence of how the supply switches.
  bool voltage_periodic = true;
  /// Why the reference is the channel it is, when not the plain default (empty otherwise).
  std::string reference_note;
  /// The boundaries' scatter (1σ) measured from the period differences, and the part the
  /// reference's noise explains (from the boundary fits' residuals) [s]; NaN when unknown
  /// (fewer than 10 period differences, or fits of under six samples).
  double boundary_jitter_s = std::numeric_limits<double>::quiet_NaN();
  double boundary_jitter_noise_s = std::numeric_limits<double>::quiet_NaN();
  std::uint64_t frames = 0;
  double samples_per_cycle = 0;  ///< mean period over the sampling interval
  std::string reference;         ///< "voltage" or "current": the channel whose crossings set cycles
  Estimate fundamental_hz;
  Estimate dc_offset_a;
  bool dc_significant = false;  ///< |DC| > its u95
  Estimate rms_a, ac_rms_a;
  /// The DC as a share of the RMS and of the AC RMS (dimensionless, signed as the DC): the
  /// figures limits are written in. The probe's gain cancels in both ratios.
  Estimate dc_to_rms, dc_to_ac_rms;
  Estimate charge_positive_c, charge_negative_c;  ///< means per cycle
  Estimate charge_asymmetry;
  Estimate positive_share;
  Estimate peak_positive_a, peak_negative_a;  ///< means of the per-cycle peaks
  double first_start_s = 0, last_end_s = 0;
  /// Cycles whose positive peak is clipped (CycleRecord::clipped_positive) at the extreme.
  std::uint64_t clipped_positive = 0;
  std::uint64_t clipped_negative = 0;
  double current_zero_a = 0;  ///< the subtracted probe offset
  bool has_voltage = false;
  Estimate voltage_mean_v, voltage_rms_v, voltage_peak_positive_v, voltage_peak_negative_v;
  Estimate voltage_positive_share, power_w;
  Estimate energy_positive_j, energy_negative_j;  ///< per cycle
  Estimate burning_voltage_positive_v, burning_voltage_negative_v;
  /// Peak over RMS: the mean of max(|peak+|, |peak−|) per cycle over the RMS.
  double crest_factor = 0;
  /// RMS over the rectified mean, (Q+ + Q−)/T.
  double form_factor = 0;
  std::optional<HarmonicSummary> harmonics;
  std::vector<std::string> warnings;
  /// Crossings of the reference seen (for the "fewer than two whole cycles" message).
  std::uint64_t crossings = 0;
};

class CycleEngine {
 public:
  /// A cycle whose period differs from the running period by more than this share is
  /// irregular. Our own bench choice: a resonant inverter's frequency follows its load and the
  /// mains ripple by a few per cent, up to ±10 % for self-oscillating drivers (common
  /// practice), well inside ±30 %; a dropped or doubled crossing changes a period by 50 % or
  /// more.
  static constexpr double kPeriodTolerance = 0.3;
  /// A cycle whose current strays from its mean by more than this many times the typical half
  /// swing holds a glitch. Our own choice: no discharge changes its peak tenfold from one
  /// cycle to the next, while a spark gap's or a corona's pulse heights scatter by a few times.
  static constexpr double kGlitchFactor = 10;
  static constexpr std::size_t kMaxExclusions = 20;
  /// Frames held to learn the reference's level and swing before the first cycle. The fuzzing
  /// build (CMake option LOPSIDE_SHORT_ACQUIRE) shortens it, so that small inputs reach the
  /// code that runs after it.
#ifdef LOPSIDE_ACQUIRE_FRAMES
  static constexpr std::size_t kAcquireFrames = LOPSIDE_ACQUIRE_FRAMES;
#else
  static constexpr std::size_t kAcquireFrames = 1 << 20;
#endif

  using Sink = std::function<void(const CycleRecord&)>;
  /// Throws std::invalid_argument on an invalid configuration (a programming error).
  explicit CycleEngine(const CycleConfig& config, Sink sink = {});

  /// Feeds the next block of frames (SI units, channels as in the config).
  void consume(const SampleBlock& block);
  /// Ends the capture: flushes the look-ahead, closes the last cycle, builds the summary.
  const CycleSummary& finish();

 private:
  struct Impl;
  std::shared_ptr<Impl> impl_;
};

}  // namespace lopside
