#pragma once
/// \file
/// The measuring pipeline as one library call: a capture's source in, one MeasureResult out.
/// It wires the cycle engine (with harmonics), the time course and the diagnosis, measures the
/// `--zero` stretch first when one is given, and checks that the current is in amperes. It
/// never opens a file: the caller hands it a way to open the capture (twice when the zero
/// stretch must be read first), so the CLI, the benchmarks and the tests share one wiring.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/cycle_picture.hpp"
#include "lopside/diagnosis.hpp"
#include "lopside/probe.hpp"
#include "lopside/provenance.hpp"
#include "lopside/sample_source.hpp"
#include "lopside/time_course.hpp"

namespace lopside {

/// Frames per read: large enough that the per-block overhead vanishes, small enough that a
/// block of many channels stays a few MB.
inline constexpr std::size_t kBlockFrames = std::size_t{1} << 16;

struct MeasureResult {
  CaptureInfo info;
  std::string current_name;                                 ///< the current channel's name
  std::optional<std::string> voltage_name;                  ///< the voltage channel's, if any
  double probe_offset_a = 0;                                ///< stated ±offset tolerance used [A]
  double probe_gain_pct = 0;                                ///< stated ±gain tolerance used [%]
  std::optional<std::pair<double, double>> zero_stretch_s;  ///< `--zero` [s]
  double zero_u_a = 0;  ///< standard uncertainty of the measured zero [A]
  CycleSummary summary;
  TimeCourseResult time_course;
  Diagnosis diagnosis;
  std::optional<HeatingShare> heating;  ///< measure fills it; swap does not
  std::vector<std::string> warnings;    ///< reader's, then the engine's
  std::optional<CyclePicture> picture;  ///< the waveform to draw, when settings.picture asked
  /// The probe as stated, how the DC was obtained through it, and the record's rest level.
  ProbeSettings probe;
  ProbeFindings probe_findings;
  std::optional<double> lead_in_s;  ///< the quiet lead-in a correction needed [s]
  /// The DC measured with the dead intervals' rest level taken as the zero, when that is how
  /// it was obtained (the same as summary.dc_offset_a then).
  std::optional<Estimate> dc_from_dead_intervals_a;
  /// Where the result came from (filled in by the caller that opened the files).
  Provenance provenance;
};

/// How one capture is measured.
struct MeasureSettings {
  std::string capture_name;   ///< how errors name the capture (its path as the user gave it)
  double probe_offset_a = 0;  ///< the probe's stated offset tolerance ±a [A], ≥ 0
  double probe_gain_pct = 0;  ///< the probe's stated gain tolerance ±p [%], ≥ 0
  /// A stretch with no discharge [s]: its mean current is the probe's offset, subtracted.
  std::optional<std::pair<double, double>> zero_stretch_s;
  std::string zero_text;          ///< the stretch as the user wrote it, for messages
  std::size_t block_cycles = 10;  ///< harmonic block length for non-mains captures
  std::size_t max_order = 40;     ///< highest harmonic order; 0 skips the harmonics
  CycleReference reference = CycleReference::automatic;
  /// Keep the average cycle and a strip of real cycles for a report's plots (4 MiB more).
  bool picture = false;
  /// The current probe (probe.hpp). A CT or AC-coupled input with τ is droop-corrected and a
  /// Rogowski coil integrated, each after a first read that finds the quiet lead-in; without
  /// τ, a probe that blocks DC is measured twice when the record has dead intervals: their
  /// rest level becomes the zero, as a --zero stretch would.
  ProbeSettings probe;
};

/// Opens the capture afresh (from its start) each time it is called.
using SourceOpener = std::function<std::unique_ptr<SampleSource>()>;

/// What the caller watches while a capture streams.
struct MeasureCallbacks {
  std::function<void(const CycleRecord&)> per_cycle;  ///< each whole cycle as it is found
  /// The share of the capture read (0…1, or negative when unknown) and the frames read.
  std::function<void(double, std::uint64_t)> progress;
};

/// Measures one capture. Throws lopside::InputError (naming settings.capture_name) on bad
/// input: no current channel, a current not in amperes, a zero stretch outside the capture, no
/// periodic fundamental, fewer than two whole cycles.
MeasureResult measure_capture(const SourceOpener& open, const MeasureSettings& settings,
                              const MeasureCallbacks& callbacks = {});

}  // namespace lopside
