#pragma once
/// \file
/// Cycle-synchronous harmonic analysis. Blocks of whole cycles are resampled onto a grid locked
/// to the measured cycle boundaries (M points per cycle), so harmonic n falls exactly on bin
/// n·B of one FFT of the block (B cycles): no window, no leakage, even under frequency drift.
/// The even harmonics are the second witness of a hidden DC: a waveform with half-wave symmetry
/// f(t + T/2) = −f(t) has neither DC nor even orders (DOMAIN.md).

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
  std::vector<std::string> warnings;
};

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
  void on_boundary(double index);
  /// Forgets the boundaries of the block being filled: the next boundary starts a new block.
  void drop_partial_block();
  /// Aggregates the complete blocks (a last incomplete block is left out).
  HarmonicSummary finish();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace lopside
