#pragma once
/// \file
/// Cycle-synchronous harmonic analysis. Blocks of whole cycles are resampled onto a grid locked
/// to the measured cycle boundaries (M points per cycle), so harmonic n falls exactly on bin
/// n·B of one FFT of the block (B cycles): no window, no leakage, even under frequency drift.
/// The even harmonics are the second witness of a hidden DC: a waveform with half-wave symmetry
/// f(t + T/2) = −f(t) has neither DC nor even orders (DOMAIN.md). The bins between harmonics
/// hold what the block's cycles do not share (noise, interharmonics): they give each order a
/// local noise floor, against which the order is tested for significance (an F-test of its
/// power), so that an even order counts as evidence only where it stands above the capture's
/// own noise.

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

namespace lopside {

struct HarmonicConfig {
  /// Cycles per block for non-mains captures (≥ 1). Captures whose fundamental is within ±5 %
  /// of 50 Hz or 60 Hz use IEC 61000-4-7's 10 or 12 cycles instead, and get groups.
  std::size_t block_cycles = 10;
  /// Highest order reported (≥ 1); capped by what the sampling resolves.
  std::size_t max_order = 40;
  double sample_rate_hz = 0;  ///< > 0 [Hz]
};

struct HarmonicOrder {
  std::size_t order = 0;   ///< 0 is DC
  double amplitude_a = 0;  ///< mean over blocks of the peak amplitude [A] (DC: the mean, signed)
  double rms_a = 0;        ///< rms value, aggregated over blocks in the rms sense [A]
  double phase_deg = 0;    ///< φn − n·φ1 in the sine basis, circular mean over blocks [°]
  double amplitude_spread_a = 0;      ///< standard deviation of the peak amplitude over blocks [A]
  double phase_spread_deg = 0;        ///< circular standard deviation of the phase [°]
  std::optional<double> group_rms_a;  ///< IEC 61000-4-7 harmonic group (mains only)
  std::optional<double> subgroup_rms_a;  ///< IEC 61000-4-7 harmonic subgroup (mains only)
  /// Expanded uncertainty (95 %) of amplitude_a [A], type A (GUM 4.2): the block-to-block
  /// scatter over effective_blocks independent blocks, k = t95(effective_blocks − 1) (2 for
  /// ν ≥ 30). With one block, from the noise floor instead (noise_floor_a/√2, ν = 2 per floor
  /// bin). Orders ≥ 1 add the noise's lift of the mean amplitude, ā − √(P − noise_floor_a²)
  /// with P the mean squared amplitude: amplitude_a is left uncorrected, as the mean over blocks.
  double u95_a = 0;
  /// Independent blocks the scatter is worth after the lag-1 autocorrelation r1 of the
  /// per-block amplitudes: n(1 − r1)/(1 + r1) for r1 > 0, within [2, n]; n otherwise.
  double effective_blocks = 0;
  /// Local noise floor [A, peak scale like amplitude_a]: the rms amplitude one block's bin
  /// shows from noise alone, √(mean |bin amplitude|²) over the non-harmonic bins n·B ± d,
  /// d = 2 … ⌊B/2⌋ (the nearer half of the gap on each side; the direct neighbours, where a
  /// wandering harmonic leaks, left out when B ≥ 4), pooled over blocks. Same bin width as the
  /// harmonic bin, so the same noise power when the noise is white across a few orders: white
  /// noise of standard deviation σ gives 2σ/√S, S the recorded samples per block. In rms terms
  /// noise_floor_a/√2. 0 for order 0, and with 1-cycle blocks (no bins between orders).
  double noise_floor_a = 0;
  /// The amplitude at which the order's expected power reaches the significance threshold [A]
  /// (found about half the time), or the analyser's resolution (1e-4 of the fundamental's
  /// amplitude) if that is larger. 0 when not assessed.
  double detection_limit_a = 0;
  /// The order stands above the capture's own noise: its mean power over blocks exceeds the
  /// local floor's by more than noise alone does with probability
  /// HarmonicSummary::false_alarm_per_order (F-test), and its amplitude exceeds the resolution.
  /// Not tied to u95_a: a drifting order is present, though its mean is uncertain.
  /// Order 0: |DC| > u95_a.
  bool significant = false;
};

struct HarmonicSummary {
  std::vector<HarmonicOrder> orders;  ///< 0 … max_usable_order
  std::uint64_t blocks = 0;
  std::size_t block_cycles = 0;
  std::size_t grid_points_per_cycle = 0;  ///< M
  std::size_t max_usable_order = 0;
  bool iec_61000_4_7 = false;  ///< 10/12-cycle blocks of a 50/60 Hz capture, with groups
  /// THD by IEC 61000-4-7 / IEC 61000-2-2: √(Σ_{n=2}^{N} In²)/I1, DC excluded.
  double thd = 0;
  /// THD as IEEE 1459-2010 defines it: the non-fundamental part including DC,
  /// √(I0² + Σ_{n≥2} In²)/I1 (rms values).
  double thd_with_dc = 0;
  /// √(Σ even In²)/√(Σ_{n≥2} In²): 0 for half-wave symmetry.
  double even_harmonic_share = 0;
  /// DC over the fundamental's rms value, I0/I1.
  double dc_to_fundamental = 0;
  /// Typical noise floor [A, peak scale]: the median of the orders' noise_floor_a over orders
  /// 2 … max_usable_order (the median ignores the few orders next to a strong component).
  double noise_floor_a = 0;
  bool noise_floor_known = false;  ///< the blocks had bins between orders (≥ 2 cycles a block)
  /// Probability that an order carrying noise only is flagged significant (per order, per
  /// capture), for Gaussian noise that is locally white: the F-test's size.
  double false_alarm_per_order = 0;
  /// Even-harmonic evidence can be judged: at least one block, a noise floor, order 2 resolved.
  /// When false, the even_significant_* figures below say nothing (not "no even harmonics").
  bool even_evidence_available = false;
  std::vector<std::size_t> even_significant_orders;  ///< even orders n ≥ 2 flagged significant
  /// √(Σ over even_significant_orders of (rms_a² − noise_floor_a²/2)) [A rms]: the even
  /// harmonics' rms value with the noise's share taken out; 0 when none is significant.
  double even_significant_rms_a = 0;
  /// Expanded uncertainty (95 %) of even_significant_rms_a [A] (GUM 5.1.2 and G.4: block
  /// scatter of each order's power and the floors' sampling error, Welch–Satterthwaite);
  /// 0 when no even order is significant (then each order's detection_limit_a bounds it).
  double even_rms_u95_a = 0;
  std::vector<std::string> warnings;
};

/// "2, 4, 6, …": the orders, cut with an ellipsis once the text passes `max_chars`.
std::string order_list(const std::vector<std::size_t>& orders, std::size_t max_chars = 40);

/// Fed by the cycle engine with every current sample (in order, by global frame index) and
/// every cycle boundary (fractional frame index, increasing). Memory: one block of samples.
class HarmonicAnalyzer {
 public:
  /// Throws std::invalid_argument on an invalid configuration.
  explicit HarmonicAnalyzer(const HarmonicConfig& config);
  ~HarmonicAnalyzer();
  HarmonicAnalyzer(HarmonicAnalyzer&&) noexcept;
  HarmonicAnalyzer& operator=(HarmonicAnalyzer&&) noexcept;

  void on_sample(std::uint64_t index, double value);
  /// on_sample() for `count` consecutive samples from `first` on, with the same results.
  void on_samples(std::uint64_t first, const double* values, std::size_t count);
  void on_boundary(double index);
  /// Forgets the boundaries of the block being filled: the next boundary starts a new block.
  void drop_partial_block();
  /// Samples held for the block being filled (its memory, for the bounds in the README).
  std::size_t held_samples() const;
  /// Aggregates the complete blocks (a last incomplete block is left out).
  HarmonicSummary finish();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace lopside
