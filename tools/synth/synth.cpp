#include "synth.hpp"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <limits>
#include <numbers>
#include <ostream>
#include <stdexcept>
#include <string_view>

namespace lopside::synth {
namespace {

using std::numbers::pi;

void require(bool ok, const std::string& what) {
  if (!ok) throw std::invalid_argument(what);
}

bool finite(double x) {
  return std::isfinite(x);
}

void validate_waveform(const Waveform& w, const std::string& channel) {
  require(finite(w.peak) && w.peak >= 0.0, channel + " peak must be finite and ≥ 0");
  require(finite(w.dc), channel + " DC offset must be finite");
  require(finite(w.negative_ratio) && w.negative_ratio >= 0.0,
          channel + " negative-lobe ratio must be finite and ≥ 0");
  require(w.positive_share > 0.0 && w.positive_share < 1.0,
          channel + " positive-half share must lie strictly between 0 and 1");
  if (w.shape == Shape::lobed) {
    require(
        w.breakdown_share >= 0.0 && w.lobe_share > 0.0 && w.breakdown_share + w.lobe_share <= 1.0,
        channel + " lobe: breakdown share ≥ 0, lobe share > 0, and their sum ≤ 1");
  }
}

// The half-wave shape h(p) of one half-cycle, p ∈ [0, 1) the position within the half, peak 1.
// Each is the standard textbook half-period of its waveform, so that with equal halves and
// ratio 1 the full waveforms are the usual sine, square and triangle of peak 1 (their Fourier
// series are tabulated in /work/shared/DOMAIN.md).
double half_wave(const Waveform& w, double p) {
  switch (w.shape) {
    case Shape::sine:
      return std::sin(pi * p);
    case Shape::square:
      return 1.0;
    case Shape::triangle:
      return 1.0 - std::abs(2.0 * p - 1.0);
    case Shape::lobed: {
      // A glow discharge conducts only once the voltage of the half-cycle has reached the
      // breakdown voltage, then carries a smooth current pulse until it extinguishes: modelled
      // as zero for p < b and one sine arch sin(π (p − b) / w) on [b, b + w), zero after.
      const double b = w.breakdown_share;
      const double q = (p - b) / w.lobe_share;
      return (q >= 0.0 && q < 1.0) ? std::sin(pi * q) : 0.0;
    }
  }
  return 0.0;
}

// Mean of h over one half, ∫₀¹ h(p) dp: sine 2/π, square 1, triangle 1/2, lobed (2/π)·w
// (a sine arch of length w has area 2w/π).
double half_wave_mean(const Waveform& w) {
  switch (w.shape) {
    case Shape::sine:
      return 2.0 / pi;
    case Shape::square:
      return 1.0;
    case Shape::triangle:
      return 0.5;
    case Shape::lobed:
      return 2.0 * w.lobe_share / pi;
  }
  return 0.0;
}

// dh/dp of half_wave(): sine π cos(πp), square 0, triangle ±2, lobed (π/w) cos(π(p − b)/w)
// inside the lobe. At a kink, the side half_wave() itself takes (p ≥ the kink: the later one).
double half_wave_slope(const Waveform& w, double p) {
  switch (w.shape) {
    case Shape::sine:
      return pi * std::cos(pi * p);
    case Shape::square:
      return 0.0;
    case Shape::triangle:
      return p < 0.5 ? 2.0 : -2.0;
    case Shape::lobed: {
      const double q = (p - w.breakdown_share) / w.lobe_share;
      return (q >= 0.0 && q < 1.0) ? pi / w.lobe_share * std::cos(pi * q) : 0.0;
    }
  }
  return 0.0;
}

// Largest dh/dp over a half: sine π (at p = 0), triangle 2, lobed π/w, square 0.
double half_wave_max_slope(const Waveform& w) {
  switch (w.shape) {
    case Shape::sine:
      return pi;
    case Shape::square:
      return 0.0;
    case Shape::triangle:
      return 2.0;
    case Shape::lobed:
      return pi / w.lobe_share;
  }
  return 0.0;
}

// Peaks of the two halves over the whole record, build-up and flip included: the build-up
// moves the negative peak between peak and ratio·peak; after a flip the positive peak is
// ratio(t)·peak and the negative one peak.
std::pair<double, double> half_peaks(const CaptureSpec& spec) {
  const Waveform& w = spec.current;
  const bool flip = spec.polarity_flip_s.has_value();
  const bool varies = flip || spec.build_up_tau_s.has_value();
  const double positive = w.peak * (flip ? std::max(1.0, w.negative_ratio) : 1.0);
  const double negative = w.peak * (varies ? std::max(1.0, w.negative_ratio) : w.negative_ratio);
  return {positive, negative};
}

// Factor of the text units TextFormat offers; SI prefixes per the SI Brochure (BIPM, 9th ed.).
struct UnitEntry {
  std::string_view symbol;
  double factor;
};
constexpr std::array<UnitEntry, 14> units{{
    {"A", 1.0},
    {"mA", 1e-3},
    {"uA", 1e-6},
    {"\xC2\xB5"
     "A",
     1e-6},
    {"kA", 1e3},
    {"V", 1.0},
    {"mV", 1e-3},
    {"kV", 1e3},
    {"s", 1.0},
    {"ms", 1e-3},
    {"us", 1e-6},
    {"\xC2\xB5"
     "s",
     1e-6},
    {"ns", 1e-9},
    {"", 1.0},
}};

char base_of(const std::string& unit) {
  return unit.empty() ? '\0' : unit.back();
}

}  // namespace

void validate(const CaptureSpec& spec) {
  const Timebase& t = spec.timebase;
  require(finite(t.sample_rate_hz) && t.sample_rate_hz > 0.0, "sample rate must be > 0");
  require(finite(t.duration_s) && t.duration_s > 0.0, "duration must be > 0");
  const double frames = std::round(t.duration_s * t.sample_rate_hz);
  require(frames >= 1.0, "duration × sample rate must give at least one frame");
  require(frames <= 9.0e15, "too many frames (duration × sample rate > 9e15)");
  require(finite(t.start_time_s), "start time must be finite");
  require(finite(t.start_frequency_hz) && t.start_frequency_hz > 0.0 &&
              finite(t.end_frequency_hz) && t.end_frequency_hz > 0.0,
          "frequencies must be > 0");
  // Nyquist–Shannon: a component at or above half the sample rate is not represented.
  require(std::max(t.start_frequency_hz, t.end_frequency_hz) < t.sample_rate_hz / 2.0,
          "frequency must stay below half the sample rate (Nyquist)");
  require(finite(t.start_phase_deg), "start phase must be finite");
  validate_waveform(spec.current, "current");
  if (spec.voltage) validate_waveform(*spec.voltage, "voltage");
  require(finite(spec.noise_rms_a) && spec.noise_rms_a >= 0.0, "noise rms must be ≥ 0");
  require(!spec.build_up_tau_s || (finite(*spec.build_up_tau_s) && *spec.build_up_tau_s > 0.0),
          "build-up time constant must be > 0");
  require(!spec.polarity_flip_s || (finite(*spec.polarity_flip_s) && *spec.polarity_flip_s >= 0.0 &&
                                    spec.current.negative_ratio > 0.0),
          "polarity flip needs a time ≥ 0 and a negative ratio > 0");
  require(finite(spec.lead_in_s) && spec.lead_in_s >= 0.0 && spec.lead_in_s < t.duration_s,
          "lead-in must be ≥ 0 and shorter than the record");
  switch (spec.probe.kind) {
    case Probe::shunt:
      break;
    case Probe::current_transformer:
    case Probe::ac_coupled:
      require(finite(spec.probe.tau_s) && spec.probe.tau_s > 0.0,
              std::string("probe ") + probe_name(spec.probe.kind) + " needs a time constant > 0");
      break;
    case Probe::rogowski:
      require(finite(spec.probe.rogowski_m_vs_per_a) && spec.probe.rogowski_m_vs_per_a > 0.0,
              "probe rogowski needs a sensitivity M > 0 [V·s/A]");
      break;
  }
  require(!spec.clip_high_a || finite(*spec.clip_high_a), "clip level must be finite");
  require(!spec.clip_low_a || finite(*spec.clip_low_a), "clip level must be finite");
  require(!spec.clip_high_a || !spec.clip_low_a || *spec.clip_low_a < *spec.clip_high_a,
          "the low clip level must lie below the high one");
}

double frequency_hz(const Timebase& timebase, double elapsed_s) {
  // Linear drift: f(τ) = f0 + (f1 − f0) · τ / T.
  return timebase.start_frequency_hz + (timebase.end_frequency_hz - timebase.start_frequency_hz) *
                                           elapsed_s / timebase.duration_s;
}

double phase_cycles(const Timebase& timebase, double elapsed_s) {
  // φ(τ) = φ0 + ∫₀^τ f(s) ds = φ0 + f0·τ + (f1 − f0)·τ² / (2T): the integral of the
  // frequency, so the waveform stays continuous however fast the frequency drifts.
  const double f0 = timebase.start_frequency_hz;
  const double slope = (timebase.end_frequency_hz - f0) / timebase.duration_s;
  return timebase.start_phase_deg / 360.0 + f0 * elapsed_s + 0.5 * slope * elapsed_s * elapsed_s;
}

double waveform_value(const Waveform& w, double phase) {
  // u = position in the cycle, [0, 1). The positive half takes [0, D), the negative [D, 1);
  // each carries a whole half-wave stretched to its share of the period.
  const double u = phase - std::floor(phase);
  const double d = w.positive_share;
  const double shape =
      u < d ? half_wave(w, u / d) : -w.negative_ratio * half_wave(w, (u - d) / (1.0 - d));
  return w.dc + w.peak * shape;
}

double cycle_mean(const Waveform& w) {
  // (1/T)∫ over a cycle = D · m · peak − (1 − D) · m · ratio · peak + dc.
  const double d = w.positive_share;
  return w.dc + w.peak * half_wave_mean(w) * (d - (1.0 - d) * w.negative_ratio);
}

const char* probe_name(Probe probe) {
  switch (probe) {
    case Probe::shunt:
      return "shunt";
    case Probe::current_transformer:
      return "ct";
    case Probe::ac_coupled:
      return "ac-coupled";
    case Probe::rogowski:
      return "rogowski";
  }
  return "shunt";
}

double waveform_slope(const Waveform& w, double phase) {
  // Chain rule on waveform_value(): p = u/D on the positive half, (u − D)/(1 − D) on the
  // negative one, so d/du = h'(p)/D and −ratio·h'(p)/(1 − D).
  const double u = phase - std::floor(phase);
  const double d = w.positive_share;
  const double slope =
      u < d ? half_wave_slope(w, u / d) / d
            : -w.negative_ratio * half_wave_slope(w, (u - d) / (1.0 - d)) / (1.0 - d);
  return w.peak * slope;
}

double current_bound_a(const CaptureSpec& spec) {
  // 5 rms: Gaussian noise exceeds it in magnitude with probability 5.7e-7 per sample.
  const Waveform& w = spec.current;
  const double lowest = spec.clip_low_a.value_or(-std::numeric_limits<double>::infinity());
  const double highest = spec.clip_high_a.value_or(std::numeric_limits<double>::infinity());
  const auto clip = [&](double v) { return std::clamp(v, lowest, highest); };
  const double noise = 5.0 * spec.noise_rms_a;
  switch (spec.probe.kind) {
    case Probe::shunt: {
      const double high = clip(w.dc + w.peak + noise);
      const double low = clip(w.dc - w.negative_ratio * w.peak - noise);
      return std::max(std::abs(high), std::abs(low));
    }
    case Probe::current_transformer:
    case Probe::ac_coupled: {
      // y = x − L, L the first-order low-pass of x started at rest: a weighted mean of 0 and
      // past inputs, so L ∈ [min(lo, 0), max(hi, 0)] and |y| ≤ max(hi, 0) − min(lo, 0).
      const auto [positive, negative] = half_peaks(spec);
      const double span = std::max(w.dc + positive, 0.0) - std::min(w.dc - negative, 0.0);
      return std::max(std::abs(clip(span + noise)), std::abs(clip(-span - noise)));
    }
    case Probe::rogowski: {
      // M·(largest slope + largest step / Δt): the slope through the phase (f · dh/du) plus the
      // build-up's own rate peak·|r − 1|/τ; steps only where the waveform has them.
      const Timebase& t = spec.timebase;
      const auto [positive, negative] = half_peaks(spec);
      const double f = std::max(t.start_frequency_hz, t.end_frequency_hz);
      double slope = f * half_wave_max_slope(w) *
                     std::max(positive / w.positive_share, negative / (1.0 - w.positive_share));
      if (spec.build_up_tau_s) {
        slope += w.peak * std::abs(w.negative_ratio - 1.0) / *spec.build_up_tau_s;
      }
      const Generator g(spec);
      double step = std::abs(g.ideal_current_a(spec.lead_in_s));  // the ignition
      if (w.shape == Shape::square || spec.polarity_flip_s) {
        step = std::max(step, positive + negative);
      }
      const double out = spec.probe.rogowski_m_vs_per_a * (slope + step * t.sample_rate_hz) + noise;
      return std::max(std::abs(clip(out)), std::abs(clip(-out)));
    }
  }
  return 0.0;
}

double voltage_bound_v(const CaptureSpec& spec) {
  if (!spec.voltage) return 0.0;
  const Waveform& w = *spec.voltage;
  return std::max(std::abs(w.dc + w.peak), std::abs(w.dc - w.negative_ratio * w.peak));
}

double nice_full_scale(double bound) {
  if (!(bound > 0.0) || !finite(bound)) return 1.0;
  const int k = static_cast<int>(std::floor(std::log10(bound)));
  for (const double m : {1.0, 2.0, 5.0, 10.0}) {
    // m / 10^−k rather than m · 10^k: 10^−k is exact for k < 0, so 5 / 100 is exactly 0.05.
    const double v = k < 0 ? m / std::pow(10.0, -k) : m * std::pow(10.0, k);
    if (v > bound) return v;
  }
  return 10.0 * std::pow(10.0, k + 1);
}

Generator::Generator(CaptureSpec spec)
    : spec_(std::move(spec)), rng_(spec_.seed), noise_(0.0, 1.0) {
  validate(spec_);
  frames_ = static_cast<std::uint64_t>(
      std::round(spec_.timebase.duration_s * spec_.timebase.sample_rate_hz));
  // Without a lead-in this is φ0 − φ0 = 0 exactly, so the phase is phase_cycles() unchanged.
  shift_ = phase_cycles(spec_.timebase, spec_.lead_in_s) - spec_.timebase.start_phase_deg / 360.0;
}

double Generator::elapsed_s(std::uint64_t frame) const {
  // From the frame number, not by accumulating 1/rate: no drift of the time base.
  return static_cast<double>(frame) / spec_.timebase.sample_rate_hz;
}

Waveform Generator::current_waveform_at(double elapsed) const {
  Waveform w = spec_.current;
  if (spec_.build_up_tau_s) {
    // First-order approach to the plateau, the response of the thermal feedback the DOMAIN
    // note describes (a model for tests, not a claim about any discharge), from ignition.
    const double g = 1.0 - std::exp(-(elapsed - spec_.lead_in_s) / *spec_.build_up_tau_s);
    w.negative_ratio = 1.0 + (spec_.current.negative_ratio - 1.0) * g;
  }
  if (spec_.polarity_flip_s && elapsed >= *spec_.polarity_flip_s) {
    const double r = w.negative_ratio;
    w.peak *= r;
    w.negative_ratio = 1.0 / r;
  }
  return w;
}

double Generator::ideal_current_a(double elapsed) const {
  if (elapsed < spec_.lead_in_s) return 0.0;
  return waveform_value(current_waveform_at(elapsed), phase_at(elapsed));
}

double Generator::ideal_current_slope_a_per_s(double elapsed) const {
  if (elapsed < spec_.lead_in_s) return 0.0;
  const Waveform w = current_waveform_at(elapsed);
  const double phase = phase_at(elapsed);
  // dφ/dt is the instantaneous frequency (phase_at is its integral).
  double slope = waveform_slope(w, phase) * frequency_hz(spec_.timebase, elapsed);
  if (spec_.build_up_tau_s) {
    // The build-up also changes the waveform at a fixed phase: ratio(s) = 1 + (r − 1)(1 −
    // e^(−s/τ)) has rate (r − 1) e^(−s/τ)/τ. Before a flip it scales the negative half
    // (−ratio·peak·h); after it the positive half (ratio·peak·h), the negative one being
    // (1/ratio)·(ratio·peak)·h = peak·h, constant.
    const double tau = *spec_.build_up_tau_s;
    const double rate =
        (spec_.current.negative_ratio - 1.0) * std::exp(-(elapsed - spec_.lead_in_s) / tau) / tau;
    const double u = phase - std::floor(phase);
    const double d = w.positive_share;
    const bool flipped = spec_.polarity_flip_s && elapsed >= *spec_.polarity_flip_s;
    if (!flipped && u >= d) slope -= rate * spec_.current.peak * half_wave(w, (u - d) / (1.0 - d));
    if (flipped && u < d) slope += rate * spec_.current.peak * half_wave(w, u / d);
  }
  return slope;
}

std::vector<Generator::Step> Generator::steps(double from, double to) const {
  std::vector<Step> out;
  const double lead_in = spec_.lead_in_s;
  // Ignition: from 0 to the waveform's value there (the current is 0 before the first frame).
  if (lead_in > from && lead_in <= to) out.push_back({lead_in, ideal_current_a(lead_in)});
  // A polarity flip after ignition: the mirrored waveform against the one just before.
  if (spec_.polarity_flip_s) {
    const double flip = *spec_.polarity_flip_s;
    if (flip > lead_in && flip > from && flip <= to) {
      const double phase = phase_at(flip);
      const Waveform before =
          current_waveform_at(std::nextafter(flip, -std::numeric_limits<double>::infinity()));
      out.push_back(
          {flip, waveform_value(current_waveform_at(flip), phase) - waveform_value(before, phase)});
    }
  }
  // Square edges after ignition: at phase k (−ratio·peak → peak) and k + D (back).
  if (spec_.current.shape == Shape::square) {
    const Timebase& t = spec_.timebase;
    const double f0 = t.start_frequency_hz;
    const double drift = (t.end_frequency_hz - f0) / t.duration_s;
    const double p_from = phase_at(from), p_to = phase_at(to);
    for (const double offset : {0.0, spec_.current.positive_share}) {
      for (double k = std::floor(p_from - offset) + 1.0; k + offset <= p_to; k += 1.0) {
        // Time where the phase reaches k + offset: f0·τ + s·τ²/2 = Δ, solved in the form
        // τ = 2Δ / (f0 + √(f0² + 2sΔ)) that has no cancellation and holds for s = 0.
        const double delta = k + offset + shift_ - t.start_phase_deg / 360.0;
        const double time =
            std::clamp(2.0 * delta / (f0 + std::sqrt(f0 * f0 + 2.0 * drift * delta)),
                       std::nextafter(from, to), to);
        if (time <= lead_in) continue;
        const Waveform w = current_waveform_at(time);
        const double jump = w.peak * (1.0 + w.negative_ratio);
        out.push_back({time, offset == 0.0 ? jump : -jump});
      }
    }
  }
  return out;
}

double Generator::ideal_voltage_v(double elapsed) const {
  return spec_.voltage ? waveform_value(*spec_.voltage, phase_at(elapsed)) : 0.0;
}

std::size_t Generator::read(std::vector<double>& interleaved, std::size_t max_frames) {
  const std::uint64_t left = frames_ - next_;
  const std::size_t n = static_cast<std::size_t>(std::min<std::uint64_t>(left, max_frames));
  const std::size_t ch = channels();
  const double dt = 1.0 / spec_.timebase.sample_rate_hz;
  interleaved.resize(n * ch);
  for (std::size_t f = 0; f < n; ++f, ++next_) {
    const double elapsed = elapsed_s(next_);
    const double phase = phase_at(elapsed);
    const bool varies = spec_.build_up_tau_s || spec_.polarity_flip_s;
    double current =
        elapsed < spec_.lead_in_s
            ? 0.0
            : waveform_value(varies ? current_waveform_at(elapsed) : spec_.current, phase);
    // The frame covers (previous frame, this frame]; frame 0 covers (−Δt, 0], the probe at
    // rest with zero current before it.
    const double previous = next_ == 0 ? -dt : elapsed_s(next_ - 1);
    switch (spec_.probe.kind) {
      case Probe::shunt:
        break;
      case Probe::current_transformer:
      case Probe::ac_coupled: {
        // First-order high-pass y' = x' − y/τ (a CT's magnetising inductance, or a coupling
        // capacitor into an input resistance). Variation of constants over one frame:
        //   y(tₙ) = a·y(tₙ₋₁) + ∫ e^(−(tₙ − s)/τ) x'(s) ds over (tₙ₋₁, tₙ],  a = e^(−Δt/τ).
        // With x linear between frames, x' = (xₙ − xₙ₋₁)/Δt and the integral is
        // (τ/Δt)(1 − a)(xₙ − xₙ₋₁); a step J at t_s adds J·δ(s − t_s) to x', hence
        // J·e^(−(tₙ − t_s)/τ), and leaves xₙ − xₙ₋₁ − J to the ramp. Exact for signals that
        // are linear between frames apart from known steps (the triangle-hold equivalent of
        // Franklin, Powell & Workman, Digital Control of Dynamic Systems).
        const double tau = spec_.probe.tau_s;
        const double a = std::exp(-dt / tau);
        const double ramp_gain =
            -std::expm1(-dt / tau) * tau / dt;  // (τ/Δt)(1 − a), no cancellation
        double output = a * previous_output_a_;
        double ramp = current - previous_input_a_;
        for (const Step& s : steps(previous, elapsed)) {
          ramp -= s.jump_a;
          output += s.jump_a * std::exp(-(elapsed - s.time_s) / tau);
        }
        output += ramp_gain * ramp;
        previous_input_a_ = current;
        previous_output_a_ = output;
        current = output;
        break;
      }
      case Probe::rogowski: {
        // v = M·di/dt from the exact derivative; a step J is the impulse J·δ(t − t_s), kept as
        // one frame of M·J/Δt so that the record's integral (rectangle or trapezoid rule)
        // carries the step.
        double didt = ideal_current_slope_a_per_s(elapsed);
        for (const Step& s : steps(previous, elapsed)) didt += s.jump_a / dt;
        current = spec_.probe.rogowski_m_vs_per_a * didt;
        break;
      }
    }
    // One standard normal draw per frame, scaled: the sequence depends on the seed only.
    // Recorder noise: added to what the probe delivers.
    if (spec_.noise_rms_a > 0.0) current += spec_.noise_rms_a * noise_(rng_);
    if (spec_.clip_high_a) current = std::min(current, *spec_.clip_high_a);
    if (spec_.clip_low_a) current = std::max(current, *spec_.clip_low_a);
    interleaved[f * ch] = current;
    if (spec_.voltage) interleaved[f * ch + 1] = waveform_value(*spec_.voltage, phase);
  }
  return n;
}

// ---------------------------------------------------------------------------------------------
// Text output.

std::optional<double> unit_factor(const std::string& unit) {
  for (const auto& u : units) {
    if (u.symbol == unit) return u.factor;
  }
  return std::nullopt;
}

namespace {

// "%.*g"-style text of `v` with `digits` significant digits, in the "C" locale whatever the
// process locale (std::to_chars), with `decimal` as decimal mark. Returns the end of the text
// in `buf`, which must hold 32 chars (17 digits, sign, point and exponent fit).
char* format_number(char* buf, double v, int digits, char decimal) {
  v += 0.0;  // −0 → +0: a lobe's zero stretch should not print as "-0"
  const auto res = std::to_chars(buf, buf + 32, v, std::chars_format::general, digits);
  for (char* p = buf; p != res.ptr; ++p) {
    if (*p == '.') *p = decimal;
  }
  return res.ptr;
}

class RowWriter {
 public:
  RowWriter(const TextFormat& f, std::ostream& out)
      : out_(out),
        eol_(f.crlf ? "\r\n" : "\n"),
        decimal_(f.delimiter == Delimiter::semicolon ? ',' : '.'),
        whitespace_(f.delimiter == Delimiter::whitespace),
        // Wide enough for sign, point, the digits and an exponent such as "e-10".
        width_(static_cast<std::size_t>(std::max(f.time_digits, f.value_digits)) + 8) {
    switch (f.delimiter) {
      case Delimiter::comma:
        separator_ = ',';
        break;
      case Delimiter::semicolon:
        separator_ = ';';
        break;
      case Delimiter::tab:
        separator_ = '\t';
        break;
      case Delimiter::whitespace:
        separator_ = ' ';
        break;
    }
  }

  char separator() const { return separator_; }
  char decimal() const { return decimal_; }
  const char* eol() const { return eol_; }

  void begin() {
    row_.clear();
    cell_start_ = 0;
  }
  void next_cell() {
    if (whitespace_) {
      // Left-aligned columns: pad the finished cell, then at least one space.
      const std::size_t len = row_.size() - cell_start_;
      row_.append(len < width_ ? width_ - len : 0, ' ');
    }
    row_.push_back(separator_);
    cell_start_ = row_.size();
  }
  void text(std::string_view s) { row_.append(s); }
  void number(double v, int digits) {
    char buf[64];
    row_.append(buf, format_number(buf, v, digits, decimal_));
  }
  void end() {
    row_.append(eol_);
    out_.write(row_.data(), static_cast<std::streamsize>(row_.size()));
  }
  void line(std::string_view s) {
    out_.write(s.data(), static_cast<std::streamsize>(s.size()));
    out_ << eol_;
  }

 private:
  std::ostream& out_;
  const char* eol_;
  char decimal_;
  bool whitespace_;
  std::size_t width_;
  char separator_ = ',';
  std::string row_;
  std::size_t cell_start_ = 0;
};

std::string header_cell(const TextFormat& f, const std::string& name, const std::string& unit) {
  const bool bare_ws = f.delimiter == Delimiter::whitespace && !f.quote_header;
  std::string cell = name;
  // Unquoted whitespace-separated headers cannot hold spaces: "time(s)", "bench_current".
  if (bare_ws) std::replace(cell.begin(), cell.end(), ' ', '_');
  const char* gap = bare_ws ? "" : " ";
  switch (f.unit_style) {
    case UnitStyle::parentheses:
      cell += gap + ("(" + unit + ")");
      break;
    case UnitStyle::brackets:
      cell += gap + ("[" + unit + "]");
      break;
    case UnitStyle::none:
      break;
  }
  if (!f.quote_header) return cell;
  std::string quoted = "\"";
  for (char c : cell) {
    if (c == '"') quoted += '"';  // RFC 4180: a quote inside a quoted field is doubled
    quoted += c;
  }
  return quoted + "\"";
}

std::string metadata_value(const RowWriter& w, const std::string& v) {
  if (v.find(w.separator()) == std::string::npos && v.find('"') == std::string::npos) return v;
  std::string q = "\"";
  for (char c : v) {
    if (c == '"') q += '"';
    q += c;
  }
  return q + "\"";
}

}  // namespace

void write_text(Generator& generator, const TextFormat& f, std::ostream& out) {
  const auto time_factor = unit_factor(f.time_unit);
  const auto voltage_factor = unit_factor(f.voltage_unit);
  if (!time_factor || base_of(f.time_unit) != 's') {
    throw std::invalid_argument("time unit must be one of s, ms, us, µs, ns");
  }
  // A Rogowski coil's channel is in volts: the default "A" becomes "V".
  const bool rogowski = generator.spec().probe.kind == Probe::rogowski;
  const std::string current_unit = rogowski && f.current_unit == "A" ? "V" : f.current_unit;
  const auto current_factor = unit_factor(current_unit);
  if (!rogowski && (!current_factor || base_of(current_unit) != 'A')) {
    throw std::invalid_argument("current unit must be one of A, mA, uA, µA, kA");
  }
  if (rogowski && (!current_factor || base_of(current_unit) != 'V')) {
    throw std::invalid_argument(
        "with a Rogowski probe the current channel is in volts: its unit must be V, mV or kV");
  }
  if (!voltage_factor || base_of(f.voltage_unit) != 'V') {
    throw std::invalid_argument("voltage unit must be one of V, mV, kV");
  }
  if (f.time_digits < 1 || f.time_digits > 17 || f.value_digits < 1 || f.value_digits > 17) {
    throw std::invalid_argument("significant digits must be 1 to 17");
  }

  RowWriter w(f, out);
  const bool has_voltage = generator.channels() == 2;
  const double rate = generator.spec().timebase.sample_rate_hz;

  if (f.preamble || !f.metadata.empty()) {
    // Key/value lines as bench recorders print them; blank lines around the block.
    w.line("Bench: Brightwell Tubeworks QA-2");
    w.line("");
    const bool ws = f.delimiter == Delimiter::whitespace;
    const auto key_value = [&](const std::string& key, const std::string& value) {
      w.line(ws ? key + ": " + value : key + w.separator() + metadata_value(w, value));
    };
    const auto number_text = [&](double v) {
      char buf[64];
      return std::string(buf, format_number(buf, v, 12, w.decimal()));
    };
    key_value("Record length", std::to_string(generator.frames() - generator.position()));
    key_value("Sample interval", number_text(1.0 / rate));
    key_value("Start time", number_text(generator.time_s(generator.position())));
    key_value("Channels", has_voltage ? "2" : "1");
    for (const auto& [key, value] : f.metadata) key_value(key, value);
    w.line("");
  }
  if (f.comments) {
    w.line("# Brightwell Tubeworks bench QA capture, synthetic (lopside-synth)");
    w.line("# seed " + std::to_string(generator.spec().seed));
  }
  if (f.header) {
    w.begin();
    bool first = true;
    const auto cell = [&](const std::string& name, const std::string& unit) {
      if (!first) w.next_cell();
      first = false;
      w.text(header_cell(f, name, unit));
    };
    if (f.time_column) cell(f.time_name, f.time_unit);
    cell(f.current_name, current_unit);
    if (has_voltage) cell(f.voltage_name, f.voltage_unit);
    w.end();
  }

  std::vector<double> block;
  const std::size_t ch = generator.channels();
  for (;;) {
    const std::uint64_t first_frame = generator.position();
    const std::size_t n = generator.read(block, 4096);
    if (n == 0) break;
    for (std::size_t i = 0; i < n; ++i) {
      w.begin();
      if (f.time_column) {
        w.number(generator.time_s(first_frame + i) / *time_factor, f.time_digits);
        w.next_cell();
      }
      w.number(block[i * ch] / *current_factor, f.value_digits);
      if (has_voltage) {
        w.next_cell();
        w.number(block[i * ch + 1] / *voltage_factor, f.value_digits);
      }
      w.end();
    }
  }
  if (f.comments) w.line("# end of record");
  out.flush();
}

// ---------------------------------------------------------------------------------------------
// Sound file output.

std::vector<double> full_scales(const CaptureSpec& spec, const SoundFormat& format) {
  std::vector<double> scales{
      format.current_full_scale_a.value_or(nice_full_scale(current_bound_a(spec)))};
  if (spec.voltage) {
    scales.push_back(format.voltage_full_scale_v.value_or(nice_full_scale(voltage_bound_v(spec))));
  }
  for (const double s : scales) {
    require(finite(s) && s > 0.0, "full scale must be finite and > 0");
  }
  return scales;
}

void write_sound(Generator& generator, const SoundFormat& format,
                 const std::filesystem::path& path) {
  const std::vector<double> scales = full_scales(generator.spec(), format);
  const std::size_t ch = generator.channels();
  SoundFileWriter writer;
  writer.open(path, format.container, format.sample_format, ch,
              generator.spec().timebase.sample_rate_hz);
  std::vector<double> block;
  for (;;) {
    const std::size_t n = generator.read(block, 4096);
    if (n == 0) break;
    // Normalised value = physical value / full scale: ±1 is the recorder's full range.
    for (std::size_t i = 0; i < n * ch; ++i) block[i] /= scales[i % ch];
    writer.write(block.data(), n);
  }
  writer.close();
}

}  // namespace lopside::synth
