#pragma once
/// \file
/// Current probes that block DC, and what can be done about it (DOMAIN.md, Probes; issue 13).
///
/// A shunt and a Hall-effect (closed-loop) probe pass DC. A current transformer (CT) and a
/// scope's AC-coupled input are first-order high-pass filters, y' = x' − y/τ: in steady state
/// their output's mean is zero whatever the real DC. A Rogowski coil gives M·di/dt and needs an
/// integrator. What lopside does:
///   - with τ stated, the droop correction x(t) = y(t) + (1/τ)·∫₀ᵗ y dt (R. Allen, droop
///     correction note, pulsedpower.net, 2006) restores the DC, if the record starts at zero
///     current (a quiet lead-in, checked);
///   - for a Rogowski coil, i(t) = (1/M)·∫₀ᵗ (v − b) dt, with b the integrator's offset, the
///     mean of the coil's output over the quiet lead-in;
///   - without τ, where the discharge goes out in each cycle, the dead intervals' level is the
///     DC with its sign turned (the true current there is zero): dead_interval.hpp.

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "lopside/sample_source.hpp"

namespace lopside {

enum class ProbeKind { shunt, hall, ct, rogowski, ac_coupled };

/// "shunt", "hall", "ct", "rogowski", "ac-coupled".
const char* to_string(ProbeKind kind) noexcept;
/// The kind a name stands for (the names above), or nullopt.
std::optional<ProbeKind> probe_kind_from(std::string_view name) noexcept;
/// Shunts and Hall-effect probes pass DC; CTs, Rogowski coils and AC-coupled inputs do not.
bool passes_dc(ProbeKind kind) noexcept;

/// The probe as the user states it.
struct ProbeSettings {
  ProbeKind kind = ProbeKind::shunt;
  /// The high-pass time constant of a CT or an AC-coupled input [s] (> 0), for the droop
  /// correction; none: no correction (dead intervals may still give the DC).
  std::optional<double> tau_s;
  /// The stated tolerance of τ, ±percent (rectangular, GUM 4.3.7).
  double tau_tolerance_pct = 0;
  /// A Rogowski coil's mutual inductance M: its output in volts per ampere per second
  /// [V·s/A] (> 0); required for --probe rogowski.
  std::optional<double> rogowski_v_s_per_a;
};

/// The quiet stretch a record starts with, found by a first read.
struct LeadIn {
  std::uint64_t frames = 0;  ///< frames before the signal first exceeds the quiet bar
  double peak = 0;           ///< largest |value| of the channel over the whole record
  double mean = 0;           ///< mean of the channel over the lead-in (the integrator's offset)
  double sd = 0;             ///< its standard deviation
  std::uint64_t total_frames = 0;
};

/// The quiet bar: a lead-in is the stretch before |value| first exceeds this share of the
/// record's peak |value|. 2 % stays above a recorder's noise and far below any conducting lobe.
inline constexpr double kQuietShare = 0.02;

/// Reads the source to its end and finds the lead-in of channel `channel` (a first pass: the
/// peak is known only at the end, so the first sample above 2 % of it is found from the
/// record-breaking values seen on the way, a short list).
LeadIn find_lead_in(SampleSource& source, std::size_t channel);

/// Wraps a source and corrects its current channel for the probe: the droop correction
/// (CT or AC-coupled with τ) or the Rogowski integration; other channels pass unchanged. The
/// trapezoidal rule integrates (the samples are of a band-limited signal, the rule's error is
/// second order in the sampling interval).
class ProbeCorrectedSource : public SampleSource {
 public:
  /// `lead_in` from find_lead_in on the same capture (its mean is the Rogowski integrator's
  /// offset). Throws std::invalid_argument when the settings ask for no correction.
  ProbeCorrectedSource(std::unique_ptr<SampleSource> inner, std::size_t current_channel,
                       const ProbeSettings& probe, const LeadIn& lead_in);
  /// The inner source's info (refreshed: text readers refine the rate at the end), with the
  /// current channel's range cleared and, for a Rogowski coil, its unit amperes.
  const CaptureInfo& info() const override;
  std::size_t read(SampleBlock& block, std::size_t max_frames) override;
  const std::vector<std::string>& warnings() const override { return inner_->warnings(); }
  double progress() const override { return inner_->progress(); }

  /// Whether these settings correct the samples (CT/AC with τ, Rogowski with M).
  static bool corrects(const ProbeSettings& probe);

 private:
  std::unique_ptr<SampleSource> inner_;
  mutable CaptureInfo info_;
  std::size_t channel_;
  ProbeSettings probe_;
  double dt_;
  double offset_ = 0;    // subtracted before integrating (Rogowski)
  double integral_ = 0;  // ∫₀ᵗ y dt so far [unit·s]
  double previous_ = 0;  // the last sample (for the trapezoid)
  bool first_ = true;
};

}  // namespace lopside
