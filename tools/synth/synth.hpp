#pragma once
/// \file
/// lopside::synth: synthetic discharge captures whose truth is known, for tests, demos and the
/// `lopside-synth` program. A capture is a current channel and an optional voltage channel
/// sharing one instantaneous phase; frames are generated in blocks, so a capture of any length
/// is written with bounded memory.

#include <cstddef>
#include <cstdint>
#include <filesystem>
#include <iosfwd>
#include <optional>
#include <random>
#include <string>
#include <utility>
#include <vector>

#include "lopside/sound_file_writer.hpp"

namespace lopside::synth {

/// The shape of each half-cycle (see half_wave() in synth.cpp for the formulas).
enum class Shape {
  sine,      ///< sin(πp) over the half
  square,    ///< 1 over the half
  triangle,  ///< rises linearly to 1 at mid-half and falls back
  lobed,     ///< zero until breakdown, then one sin-shaped current lobe (a glow discharge)
};

/// One channel's noise-free waveform, as a function of the position in the cycle.
/// Each half-cycle carries a whole half-wave of `shape`, stretched to the half's duration.
struct Waveform {
  Shape shape = Shape::sine;
  double peak = 1.0;             ///< peak of the positive half [channel unit: A or V], ≥ 0
  double dc = 0.0;               ///< offset added to every value [channel unit]
  double negative_ratio = 1.0;   ///< peak of the negative half = ratio × peak, ≥ 0
  double positive_share = 0.5;   ///< fraction of each period taken by the positive half, (0, 1)
  double breakdown_share = 0.2;  ///< lobed: fraction of each half before the lobe starts, ≥ 0
  double lobe_share = 0.6;       ///< lobed: fraction of each half the lobe lasts, > 0;
                                 ///< breakdown_share + lobe_share ≤ 1
};

/// Sampling and the instantaneous phase shared by all channels.
struct Timebase {
  double sample_rate_hz = 100e3;     ///< > 0
  double duration_s = 0.1;           ///< record length; frames = round(duration × rate) ≥ 1
  double start_time_s = 0.0;         ///< time printed for the first frame
  double start_frequency_hz = 50.0;  ///< frequency at the first frame, > 0
  double end_frequency_hz = 50.0;    ///< frequency reached at duration_s (linear drift), > 0
  double start_phase_deg = 0.0;      ///< phase at the first frame; 0 = start of a positive half
};

/// What records the current (see Generator::read() for the models). The probe acts on the
/// noise-free current; the recorder's noise and range (CaptureSpec::noise_rms_a, clip levels)
/// then act on the probe's output, the channel as recorded. The voltage channel never passes a
/// probe model.
enum class Probe {
  shunt,                ///< passes DC: the channel is the current [A]
  current_transformer,  ///< first-order high-pass of time constant tau_s [A]
  ac_coupled,           ///< the same high-pass, named for AC-coupled inputs (sound cards) [A]
  rogowski,             ///< M·di/dt of the current [V], M = rogowski_m_vs_per_a
};

/// Option-style name of `probe`: "shunt", "ct", "ac-coupled", "rogowski".
const char* probe_name(Probe probe);

/// A probe and its parameters.
struct ProbeModel {
  Probe kind = Probe::shunt;
  double tau_s = 0.0;                ///< current_transformer, ac_coupled: time constant, > 0
  double rogowski_m_vs_per_a = 0.0;  ///< rogowski: mutual inductance M [V·s/A = H], > 0
};

/// Everything that defines a synthetic capture.
struct CaptureSpec {
  Timebase timebase;
  Waveform current;  ///< channel 1, amperes
  /// White Gaussian recorder noise added to channel 1 as recorded (after the probe), ≥ 0
  /// [A rms; V rms with a Rogowski probe].
  double noise_rms_a = 0.0;
  /// Recorder range: channel-1 values above are clipped [A; V with a Rogowski probe].
  std::optional<double> clip_high_a;
  /// Recorder range: channel-1 values below are clipped [A; V with a Rogowski probe].
  std::optional<double> clip_low_a;
  std::optional<Waveform> voltage;  ///< channel 2, volts (usually Shape::sine)
  /// Quiet lead-in [s], 0 ≤ lead_in_s < duration_s: the current is exactly zero (discharge not
  /// ignited) before this time after the first frame and starts at it, with the phase
  /// start_phase_deg there. The voltage (the supply) runs throughout, on the same phase.
  double lead_in_s = 0.0;
  ProbeModel probe;  ///< what records channel 1
  /// Self-rectification building up after ignition (the end of the lead-in): the current's
  /// negative_ratio approaches its set value from 1 (symmetric) as
  /// 1 + (ratio − 1)·(1 − e^(−s/τ)), s the time since ignition [s].
  std::optional<double> build_up_tau_s;
  /// The discharge changing its preferred cathode: from this time on [s, after the first
  /// frame] the current's lobe asymmetry is mirrored (positive peak ratio × peak, negative peak
  /// peak), so its DC changes sign. Needs negative_ratio > 0.
  std::optional<double> polarity_flip_s;
  std::uint64_t seed = 1;  ///< seed of the std::mt19937_64 noise generator
};

/// Throws std::invalid_argument naming the first field out of its documented range.
void validate(const CaptureSpec& spec);

/// Instantaneous frequency `elapsed_s` after the first frame [Hz].
double frequency_hz(const Timebase& timebase, double elapsed_s);

/// Unwrapped instantaneous phase [cycles] `elapsed_s` after the first frame: the integral of
/// frequency_hz plus the start phase. Integer values are starts of positive halves.
double phase_cycles(const Timebase& timebase, double elapsed_s);

/// Noise-free value of `waveform` at unwrapped phase `phase` [cycles].
double waveform_value(const Waveform& waveform, double phase);

/// Exact mean of `waveform` over one whole cycle: dc + peak · m · (D − (1 − D) · ratio), m the
/// mean of the half-wave shape (sine 2/π, square 1, triangle 1/2, lobed 2·lobe_share/π).
double cycle_mean(const Waveform& waveform);

/// d/dphase of waveform_value() at `phase` [channel unit per cycle]; at a kink the slope of
/// the side waveform_value() takes, 0 on a square wave (its edges are steps).
double waveform_slope(const Waveform& waveform, double phase);

/// Largest |value| channel 1 can take as recorded: the probe output's bound (shunt: the
/// waveform's extremes) plus 5 noise rms, limited by the clip levels [A; V with a Rogowski].
double current_bound_a(const CaptureSpec& spec);
/// Largest |value| of the voltage channel (0 without one).
double voltage_bound_v(const CaptureSpec& spec);

/// The smallest 1, 2, 5 × 10^k that is > `bound` (1 for bound ≤ 0): the full scale used for
/// sound files when none is given, so that no value reaches the top code and clips.
double nice_full_scale(double bound);

/// Streams the frames of a capture: interleaved [channel 1, voltage] values, channel 1 the
/// current through the probe model (A, or V for a Rogowski coil), noise and clipping applied.
class Generator {
 public:
  /// Validates `spec` (see validate()).
  explicit Generator(CaptureSpec spec);

  const CaptureSpec& spec() const { return spec_; }
  std::uint64_t frames() const { return frames_; }
  /// 1 (current) or 2 (current, voltage).
  std::size_t channels() const { return spec_.voltage ? 2 : 1; }
  /// Time of frame `frame` after the first one: frame / sample rate [s].
  double elapsed_s(std::uint64_t frame) const;
  /// Time printed for frame `frame`: start_time_s + elapsed_s(frame) [s].
  double time_s(std::uint64_t frame) const {
    return spec_.timebase.start_time_s + elapsed_s(frame);
  }

  /// Noise-free, unclipped current `elapsed_s` after the first frame, before the probe [A];
  /// 0 during the lead-in.
  double ideal_current_a(double elapsed_s) const;
  /// Its exact time derivative [A/s] (analytic; 0 during the lead-in). Steps (the ignition
  /// at the end of the lead-in, square edges, a polarity flip) are not in it: see steps().
  double ideal_current_slope_a_per_s(double elapsed_s) const;
  /// A step of the noise-free current: at `time_s` after the first frame it changes by
  /// `jump_a` [A].
  struct Step {
    double time_s;
    double jump_a;
  };
  /// The steps of the noise-free current in (from_s, to_s]. The current is 0 before the first
  /// frame (the probe at rest), so a record that does not start at zero has a step at 0.
  std::vector<Step> steps(double from_s, double to_s) const;
  /// Instantaneous phase [cycles] shared by current and voltage: phase_cycles() shifted so
  /// that it equals start_phase_deg / 360 at the end of the lead-in.
  double phase_at(double elapsed_s) const {
    return phase_cycles(spec_.timebase, elapsed_s) - shift_;
  }
  /// The current's waveform in force `elapsed_s` after the first frame (build-up and flip
  /// applied); cycle_mean() of it is the DC of a cycle there.
  Waveform current_waveform_at(double elapsed_s) const;
  /// Noise-free voltage `elapsed_s` after the first frame [V]; 0 without a voltage channel.
  double ideal_voltage_v(double elapsed_s) const;

  /// Index of the next frame read() hands out.
  std::uint64_t position() const { return next_; }
  /// Replaces `interleaved` with the next up to `max_frames` frames; returns how many
  /// (0 at the end). The noise sequence depends only on the seed, not on the block sizes.
  std::size_t read(std::vector<double>& interleaved, std::size_t max_frames);

 private:
  CaptureSpec spec_;
  std::uint64_t frames_ = 0;
  std::uint64_t next_ = 0;
  std::mt19937_64 rng_;
  std::normal_distribution<double> noise_;
  double shift_ = 0.0;  ///< phase_cycles(lead-in) − start phase: 0 without a lead-in
  // The high-pass filter's state after the previous frame (at rest before frame 0).
  double previous_input_a_ = 0.0;
  double previous_output_a_ = 0.0;
};

/// How text values are separated. `semicolon` also writes decimal commas (the European
/// spreadsheet convention); `whitespace` aligns columns with runs of spaces.
enum class Delimiter { comma, semicolon, tab, whitespace };

/// How the header shows units: "current (mA)", "current [mA]" or "current".
enum class UnitStyle { parentheses, brackets, none };

/// The text variants of a CSV-like export.
struct TextFormat {
  Delimiter delimiter = Delimiter::comma;
  /// A preamble of bench metadata ("Bench: Brightwell Tubeworks QA-2", record length, sample
  /// interval, start time, then `metadata`) with blank lines, before the header.
  bool preamble = false;
  std::vector<std::pair<std::string, std::string>> metadata;  ///< extra preamble key/values
  bool comments = false;      ///< '#' comment lines before the header and after the data
  bool crlf = false;          ///< CR LF line ends instead of LF
  bool quote_header = false;  ///< header cells in double quotes
  bool header = true;         ///< false: data rows only
  UnitStyle unit_style = UnitStyle::parentheses;
  bool time_column = true;
  std::string time_unit = "s";     ///< s, ms, us, µs, ns
  std::string current_unit = "A";  ///< A, mA, uA, µA, kA
  std::string voltage_unit = "V";  ///< V, mV, kV
  int time_digits = 10;            ///< significant digits of the time column, 1–17
  int value_digits = 6;            ///< significant digits of the values, 1–17
  std::string time_name = "time";
  std::string current_name = "current";
  std::string voltage_name = "voltage";
};

/// Value of one `unit` in SI for the units TextFormat accepts ("mA" → 1e-3); nullopt
/// otherwise. Deliberately independent of lopside's own unit parser, so tests of the reader
/// do not check the parser against itself.
std::optional<double> unit_factor(const std::string& unit);

/// Writes the remaining frames of `generator` as text. Throws std::invalid_argument on a bad
/// format (unknown unit, digits out of range) before writing anything.
void write_text(Generator& generator, const TextFormat& format, std::ostream& out);

/// A WAV-like output: normalised value = physical value / full scale.
struct SoundFormat {
  SoundContainer container = SoundContainer::wav;
  SoundSampleFormat sample_format = SoundSampleFormat::pcm24;
  std::optional<double> current_full_scale_a;  ///< default nice_full_scale(current_bound_a)
  std::optional<double> voltage_full_scale_v;  ///< default nice_full_scale(voltage_bound_v)
};

/// Full scale of each channel that write_sound uses for `spec` and `format`.
std::vector<double> full_scales(const CaptureSpec& spec, const SoundFormat& format);

/// Writes the remaining frames of `generator` to `path` through SoundFileWriter (atomic).
/// The sample rate must be a whole number of hertz. Throws InputError or std::invalid_argument.
void write_sound(Generator& generator, const SoundFormat& format,
                 const std::filesystem::path& path);

}  // namespace lopside::synth
