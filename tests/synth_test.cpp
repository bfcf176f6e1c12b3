// Tests of the synthetic-capture generator against analytic results: whole-cycle means and
// rms of the standard waveforms, positive-half share, lobe ratio, the glow lobe, frequency
// drift, noise statistics and seeding, clipping, and the text variants it writes.

#include "synth/synth.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <iterator>
#include <numbers>
#include <sstream>
#include <string>
#include <vector>

using namespace lopside::synth;
using std::numbers::pi;

namespace {

// N samples per cycle, offset by half a sample, for `cycles` whole cycles at f = 1 kHz. With
// the half-sample offset every sample lies half a step away from the half-cycle boundaries,
// so the positive/negative split of the samples is exact.
CaptureSpec whole_cycles(int samples_per_cycle, int cycles) {
  CaptureSpec spec;
  spec.timebase.start_frequency_hz = 1000.0;
  spec.timebase.end_frequency_hz = 1000.0;
  spec.timebase.sample_rate_hz = 1000.0 * samples_per_cycle;
  spec.timebase.duration_s = cycles / 1000.0;
  spec.timebase.start_phase_deg = 360.0 * 0.5 / samples_per_cycle;
  return spec;
}

std::vector<double> all_frames(Generator& gen) {
  std::vector<double> out, block;
  while (gen.read(block, 1000) > 0) out.insert(out.end(), block.begin(), block.end());
  return out;
}

// Channel `c` of interleaved frames.
std::vector<double> channel(const std::vector<double>& frames, std::size_t channels,
                            std::size_t c) {
  std::vector<double> out;
  for (std::size_t i = c; i < frames.size(); i += channels) out.push_back(frames[i]);
  return out;
}

// Rounding allowance of a recursive sum of n terms of size ≤ `scale`: n·u·scale with
// u = 2^−53 (Higham, Accuracy and Stability of Numerical Algorithms, 2nd ed., §4.2). Used
// wherever the exact value is known and only float rounding may differ.
double rounding(double scale, std::size_t n) {
  return scale * static_cast<double>(n) * std::ldexp(1.0, -53);
}

double mean(const std::vector<double>& x) {
  double s = 0.0;
  for (double v : x) s += v;
  return s / static_cast<double>(x.size());
}

double rms(const std::vector<double>& x) {
  double s = 0.0;
  for (double v : x) s += v * v;
  return std::sqrt(s / static_cast<double>(x.size()));
}

// Σ_{k=0}^{M−1} sin(π (k + ½) / M) = 1 / sin(π / (2M)): the sum of sines in arithmetic
// progression, Σ sin(a + k d) = sin(M d / 2) · sin(a + (M − 1) d / 2) / sin(d / 2), with
// a = π/(2M), d = π/M. It is the exact midpoint sum of one sine half-wave sampled M times.
double midpoint_sine_sum(int m) {
  return 1.0 / std::sin(pi / (2.0 * m));
}

}  // namespace

TEST(Synth, SineWithDcAveragesToTheDcOverWholeCycles) {
  CaptureSpec spec = whole_cycles(100, 50);
  spec.current.peak = 0.02;
  spec.current.dc = 0.0048;
  Generator gen(spec);
  ASSERT_EQ(gen.frames(), 5000u);
  const auto i = all_frames(gen);
  // Σ_{k=0}^{N−1} sin(2π(k + ½)/N) = 0 exactly (a sum of roots of unity), so the mean is the
  // DC; the tolerance allows only float rounding.
  EXPECT_NEAR(mean(i), 0.0048, rounding(0.025, i.size()));
  EXPECT_NEAR(cycle_mean(spec.current), 0.0048, 1e-18);
}

TEST(Synth, RmsOfTheStandardShapes) {
  // Handbook rms of peak-A waveforms: sine A/√2, square A, triangle A/√3.
  const double a = 0.03;
  {
    CaptureSpec spec = whole_cycles(1000, 10);
    spec.current.peak = a;
    Generator gen(spec);
    // Σ sin² over N equally spaced phases = N/2 exactly (N ≥ 3): only rounding remains.
    EXPECT_NEAR(rms(all_frames(gen)), a / std::sqrt(2.0), rounding(a, 10000));
  }
  {
    CaptureSpec spec = whole_cycles(1000, 10);
    spec.current.shape = Shape::square;
    spec.current.peak = a;
    Generator gen(spec);
    EXPECT_NEAR(rms(all_frames(gen)), a, rounding(a, 10000));
  }
  {
    CaptureSpec spec = whole_cycles(1000, 10);
    spec.current.shape = Shape::triangle;
    spec.current.peak = a;
    Generator gen(spec);
    // Midpoint samples of the rising quarter, p = (k + ½)/M with M = 250 per quarter:
    // mean of p² = 1/3 − 1/(12 M²), so rms² = A² (1/3 − 1/(12·250²)) exactly.
    const double m = 250.0;
    EXPECT_NEAR(rms(all_frames(gen)), a * std::sqrt(1.0 / 3.0 - 1.0 / (12.0 * m * m)),
                rounding(a, 10000));
  }
}

TEST(Synth, SquareOfPositiveShareDHasDcOfA2DMinus1) {
  CaptureSpec spec = whole_cycles(1000, 20);
  spec.current.shape = Shape::square;
  spec.current.peak = 0.025;
  spec.current.positive_share = 0.53;
  Generator gen(spec);
  const auto i = all_frames(gen);
  std::size_t positive = 0;
  for (double v : i) positive += v > 0.0 ? 1 : 0;
  EXPECT_EQ(positive, 530u * 20u);  // 53 % of every period
  // DOMAIN.md: a ±A square of duty D gives DC = A(2D − 1).
  EXPECT_NEAR(mean(i), 0.025 * (2 * 0.53 - 1), rounding(0.025, i.size()));
  EXPECT_NEAR(cycle_mean(spec.current), 0.025 * (2 * 0.53 - 1), 1e-17);
}

TEST(Synth, SineOfPositiveShareStretchesEachHalf) {
  CaptureSpec spec = whole_cycles(1000, 20);
  spec.current.peak = 0.02;
  spec.current.positive_share = 0.53;
  Generator gen(spec);
  // Zero crossings at 0 and D·T, peaks at D·T/2 and D·T + (1 − D)·T/2 (T = 1 ms).
  const double t = 1e-3;
  const double shift = -spec.timebase.start_phase_deg / 360.0 * t;  // undo the half sample
  EXPECT_NEAR(gen.ideal_current_a(shift + 0.53 * t / 2), 0.02, 1e-15);
  EXPECT_NEAR(gen.ideal_current_a(shift + 0.53 * t + 0.47 * t / 2), -0.02, 1e-15);
  EXPECT_GT(gen.ideal_current_a(shift + 0.53 * t * (1 - 1e-9)), 0.0);
  EXPECT_LT(gen.ideal_current_a(shift + 0.53 * t * (1 + 1e-9)), 0.0);
  // Exact midpoint sums of a half-wave over 530 and 470 samples (see midpoint_sine_sum).
  const auto i = all_frames(gen);
  const double per_cycle = 0.02 * (midpoint_sine_sum(530) - midpoint_sine_sum(470)) / 1000.0;
  EXPECT_NEAR(mean(i), per_cycle, rounding(0.02, i.size()));
  // The continuous mean (2A/π)(2D − 1) differs from the sampled one by the midpoint-rule
  // error of each half: 1/(M sin(π/2M)) = (2/π)(1 + π²/(24M²) + O(M⁻⁴)), so A·π/(12M²) per
  // half; allowed twice that, weighted by the halves' shares.
  EXPECT_NEAR(cycle_mean(spec.current), 2 * 0.02 / pi * (2 * 0.53 - 1), 1e-17);
  const double midpoint_error =
      0.02 * (0.53 * pi / (12.0 * 530 * 530) + 0.47 * pi / (12.0 * 470 * 470));
  EXPECT_NEAR(mean(i), cycle_mean(spec.current), 2 * midpoint_error);
}

TEST(Synth, WeakerNegativeLobeGivesEpsilonAOverPi) {
  CaptureSpec spec = whole_cycles(1000, 20);
  const double a = 0.02, r = 0.9;
  spec.current.peak = a;
  spec.current.negative_ratio = r;
  Generator gen(spec);
  const double shift = -spec.timebase.start_phase_deg / 360.0 * 1e-3;
  EXPECT_NEAR(gen.ideal_current_a(shift + 0.25e-3), a, 1e-15);
  EXPECT_NEAR(gen.ideal_current_a(shift + 0.75e-3), -r * a, 1e-15);
  const auto i = all_frames(gen);
  EXPECT_NEAR(mean(i), a * (1 - r) * midpoint_sine_sum(500) / 1000.0, rounding(a, i.size()));
  // DOMAIN.md: a negative lobe weaker by ε gives DC = εA/π (ε = 1 − r).
  EXPECT_NEAR(cycle_mean(spec.current), (1 - r) * a / pi, 1e-17);
}

TEST(Synth, GlowLobeStartsAfterBreakdownAndCarriesTwoWOverPi) {
  // 2000 samples a cycle: each half has 1000, breakdown 20 % (200 samples), lobe 60 % (600).
  CaptureSpec spec = whole_cycles(2000, 10);
  Waveform& w = spec.current;
  w.shape = Shape::lobed;
  w.peak = 0.03;
  w.negative_ratio = 0.8;
  w.breakdown_share = 0.2;
  w.lobe_share = 0.6;
  Generator gen(spec);
  const double t = 1e-3, shift = -spec.timebase.start_phase_deg / 360.0 * t;
  const auto at = [&](double cycle_fraction) {
    return gen.ideal_current_a(shift + cycle_fraction * t);
  };
  EXPECT_EQ(at(0.05), 0.0);            // before breakdown
  EXPECT_NEAR(at(0.25), 0.03, 1e-15);  // lobe centre: (0.2 + 0.3)·½ cycle
  EXPECT_EQ(at(0.45), 0.0);            // extinguished
  EXPECT_EQ(at(0.55), 0.0);
  EXPECT_NEAR(at(0.75), -0.8 * 0.03, 1e-15);
  EXPECT_EQ(at(0.95), 0.0);
  // Samples inside the lobe are the exact midpoint samples of a sine arch over 600 points.
  const auto i = all_frames(gen);
  const double per_half = 0.03 * midpoint_sine_sum(600) / 2000.0;
  EXPECT_NEAR(mean(i), per_half * (1 - 0.8), rounding(0.03, i.size()));
  // Continuous: mean = A (2w/π) (D − (1 − D) r); the arch's midpoint sum exceeds its integral
  // by π²/(24M²) + O(M⁻⁴) relative (M = 600): allowed twice the leading term.
  const double exact = 0.03 * (2 * 0.6 / pi) * (0.5 - 0.5 * 0.8);
  EXPECT_NEAR(cycle_mean(w), exact, 1e-17);
  EXPECT_NEAR(mean(i), exact, exact * 2 * pi * pi / (24.0 * 600 * 600));
  EXPECT_GT(mean(i), exact);  // the midpoint rule overestimates a concave arch
}

TEST(Synth, LinearDriftKeepsThePhaseContinuous) {
  CaptureSpec spec;
  Timebase& tb = spec.timebase;
  tb.sample_rate_hz = 1e6;
  tb.duration_s = 0.1;
  tb.start_frequency_hz = 1000.0;
  tb.end_frequency_hz = 1200.0;
  spec.current.peak = 1.0;
  Generator gen(spec);
  // ∫₀ᵀ f = (f0 + f1) T / 2 = 110 cycles.
  EXPECT_NEAR(phase_cycles(tb, 0.1), 110.0, 1e-12);
  EXPECT_NEAR(frequency_hz(tb, 0.05), 1100.0, 1e-12);

  const auto i = all_frames(gen);
  // Mean value theorem: |Δ(A sin 2πφ)| ≤ 2π f_max A / rate between samples. A phase that
  // jumped (e.g. φ = f(t)·t instead of ∫f) would break it.
  double worst_step = 0.0;
  for (std::size_t k = 1; k < i.size(); ++k)
    worst_step = std::max(worst_step, std::abs(i[k] - i[k - 1]));
  EXPECT_LE(worst_step, 2 * pi * 1200.0 / 1e6);
  // …and the waveform really runs near the end frequency: some step exceeds 2π·1180 A / rate.
  EXPECT_GE(worst_step, 2 * pi * 1180.0 / 1e6);

  // Rising zero crossings k = 1, 2, … lie where φ(τ) = k: τ_k = (−f0 + √(f0² + 2 s k)) / s,
  // s = (f1 − f0)/T. Located by linear interpolation (error ~ h³ near a sine's zero).
  const double s = (1200.0 - 1000.0) / 0.1;
  int k = 0;
  for (std::size_t n = 1; n < i.size(); ++n) {
    if (i[n - 1] < 0.0 && i[n] >= 0.0) {
      ++k;
      const double t0 = gen.elapsed_s(n - 1);
      const double crossing = t0 + (-i[n - 1] / (i[n] - i[n - 1])) / 1e6;
      const double expected = (-1000.0 + std::sqrt(1000.0 * 1000.0 + 2 * s * k)) / s;
      ASSERT_NEAR(crossing, expected, 1e-10) << "crossing " << k;
    }
  }
  EXPECT_EQ(k, 109);  // φ reaches 110 only at τ = T, one sample after the last frame
}

TEST(Synth, NoiseIsSeededGaussianOfTheGivenRms) {
  CaptureSpec spec = whole_cycles(100, 2000);  // 200 000 frames
  spec.current.peak = 0.02;
  spec.noise_rms_a = 1e-3;
  spec.seed = 42;
  Generator a(spec), b(spec);
  const auto xa = all_frames(a);
  // Block sizes must not change the sequence.
  std::vector<double> xb, block;
  while (b.read(block, 7) > 0) xb.insert(xb.end(), block.begin(), block.end());
  EXPECT_EQ(xa, xb);
  spec.seed = 43;
  Generator c(spec);
  EXPECT_NE(all_frames(c), xa);

  std::vector<double> noise;
  for (std::size_t n = 0; n < xa.size(); ++n)
    noise.push_back(xa[n] - a.ideal_current_a(a.elapsed_s(n)));
  const double count = static_cast<double>(noise.size());
  // Sampling theory of the normal distribution: mean has standard error σ/√N, the sample
  // standard deviation σ/√(2N). Five standard errors: a false alarm has probability < 1e-6,
  // and the seed is fixed, so the check is deterministic.
  EXPECT_NEAR(mean(noise), 0.0, 5 * 1e-3 / std::sqrt(count));
  EXPECT_NEAR(rms(noise), 1e-3, 5 * 1e-3 / std::sqrt(2 * count));
}

TEST(Synth, ClippingModelsTheRecorderRange) {
  CaptureSpec spec = whole_cycles(1000, 10);
  spec.current.peak = 0.02;
  spec.clip_high_a = 0.016;
  spec.clip_low_a = -0.019;
  Generator gen(spec);
  const auto i = all_frames(gen);
  std::size_t high = 0, low = 0;
  for (double v : i) {
    ASSERT_LE(v, 0.016);
    ASSERT_GE(v, -0.019);
    high += v == 0.016 ? 1 : 0;
    low += v == -0.019 ? 1 : 0;
  }
  // A sin above c for a fraction (π − 2 asin(c/A)) / (2π) of the period; counting samples is
  // exact to one sample per boundary, two boundaries a cycle.
  const auto expected = [](double c) { return (pi - 2 * std::asin(c / 0.02)) / (2 * pi) * 10000; };
  EXPECT_NEAR(static_cast<double>(high), expected(0.016), 2 * 10);
  EXPECT_NEAR(static_cast<double>(low), expected(0.019), 2 * 10);
  EXPECT_GT(high, 0u);
  EXPECT_GT(low, 0u);
  EXPECT_NEAR(current_bound_a(spec), 0.019, 1e-18);
}

TEST(Synth, VoltageSharesThePhaseWithItsOwnDcAndShare) {
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = 1e6;
  spec.timebase.duration_s = 2e-3;
  spec.timebase.start_frequency_hz = 32e3;
  spec.timebase.end_frequency_hz = 31e3;
  spec.timebase.start_phase_deg = 30.0;
  spec.voltage = Waveform{};
  spec.voltage->peak = 1500.0;
  spec.voltage->dc = 12.0;
  Generator gen(spec);
  ASSERT_EQ(gen.channels(), 2u);
  const auto frames = all_frames(gen);
  const auto v = channel(frames, 2, 1);
  const auto i = channel(frames, 2, 0);
  for (std::size_t n = 0; n < v.size(); n += 97) {
    // Independent formula: V sin(2π(φ0 + f0 τ + (f1 − f0) τ² / (2T))) + dc.
    const double tau = static_cast<double>(n) / 1e6;
    const double phi = 30.0 / 360 + 32e3 * tau + (31e3 - 32e3) * tau * tau / (2 * 2e-3);
    ASSERT_NEAR(v[n], 1500.0 * std::sin(2 * pi * phi) + 12.0, 1e-9);
    ASSERT_NEAR(i[n], 1.0 * std::sin(2 * pi * phi), 1e-12);
  }
  // Own positive share: with D = 0.6 the voltage is still positive at 55 % of a cycle.
  spec.voltage->positive_share = 0.6;
  spec.timebase.start_phase_deg = 0.0;
  spec.timebase.end_frequency_hz = 32e3;
  Generator shared(spec);
  const double period = 1.0 / 32e3;
  EXPECT_GT(shared.ideal_voltage_v(0.55 * period), 12.0);
  EXPECT_LT(shared.ideal_current_a(0.55 * period), 0.0);
  EXPECT_NEAR(shared.ideal_voltage_v(0.3 * period), 1512.0, 1e-9);
}

TEST(Synth, RejectsOutOfRangeSpecs) {
  CaptureSpec spec;
  spec.current.positive_share = 1.0;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);
  spec = CaptureSpec{};
  spec.timebase.start_frequency_hz = 60e3;  // above Nyquist at 100 kHz
  EXPECT_THROW(Generator{spec}, std::invalid_argument);
  spec = CaptureSpec{};
  spec.current.shape = Shape::lobed;
  spec.current.breakdown_share = 0.5;
  spec.current.lobe_share = 0.6;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);
  spec = CaptureSpec{};
  spec.clip_high_a = -0.01;
  spec.clip_low_a = 0.01;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);
}

TEST(Synth, NiceFullScaleIsTheNextOneTwoFiveStepAbove) {
  EXPECT_EQ(nice_full_scale(0.021), 0.05);
  EXPECT_EQ(nice_full_scale(0.02), 0.05);  // strictly above: the peak must not clip
  EXPECT_EQ(nice_full_scale(0.0199), 0.02);
  EXPECT_EQ(nice_full_scale(1450.0), 2000.0);
  EXPECT_EQ(nice_full_scale(7.0), 10.0);
}

// ---------------------------------------------------------------------------------------------
// Text output.

namespace {

CaptureSpec small_supply() {
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = 1e6;
  spec.timebase.duration_s = 20e-6;
  spec.timebase.start_frequency_hz = 32e3;
  spec.timebase.end_frequency_hz = 32e3;
  spec.timebase.start_phase_deg = 10.0;
  spec.current.peak = 0.02;
  spec.voltage = Waveform{};
  spec.voltage->peak = 1500.0;
  return spec;
}

std::vector<std::string> lines_of(const std::string& text, const std::string& eol = "\n") {
  std::vector<std::string> out;
  std::size_t start = 0;
  for (std::size_t end; (end = text.find(eol, start)) != std::string::npos;
       start = end + eol.size()) {
    out.push_back(text.substr(start, end - start));
  }
  EXPECT_EQ(start, text.size()) << "text must end with a line end";
  return out;
}

std::vector<std::string> split(const std::string& line, char sep) {
  std::vector<std::string> out;
  std::string cell;
  std::istringstream in(line);
  while (std::getline(in, cell, sep)) out.push_back(cell);
  return out;
}

std::string write(const CaptureSpec& spec, const TextFormat& f) {
  Generator gen(spec);
  std::ostringstream out;
  write_text(gen, f, out);
  return out.str();
}

}  // namespace

TEST(SynthText, DefaultCsvHasHeaderAndSiValues) {
  const CaptureSpec spec = small_supply();
  const auto lines = lines_of(write(spec, TextFormat{}));
  ASSERT_EQ(lines.size(), 21u);
  EXPECT_EQ(lines[0], "time (s),current (A),voltage (V)");
  Generator gen(spec);
  for (std::size_t n = 0; n < 20; ++n) {
    const auto cells = split(lines[n + 1], ',');
    ASSERT_EQ(cells.size(), 3u);
    EXPECT_DOUBLE_EQ(std::stod(cells[0]), static_cast<double>(n) * 1e-6);
    // 6 significant digits: relative error ≤ 5e-6 (half a unit in the last digit).
    const double i = gen.ideal_current_a(gen.elapsed_s(n));
    const double v = gen.ideal_voltage_v(gen.elapsed_s(n));
    EXPECT_NEAR(std::stod(cells[1]), i, std::abs(i) * 5e-6);
    EXPECT_NEAR(std::stod(cells[2]), v, std::abs(v) * 5e-6);
  }
}

TEST(SynthText, SemicolonWritesDecimalCommasAndPrefixedUnits) {
  const CaptureSpec spec = small_supply();
  TextFormat f;
  f.delimiter = Delimiter::semicolon;
  f.unit_style = UnitStyle::brackets;
  f.time_unit = "\xC2\xB5s";  // µ, U+00B5 MICRO SIGN in UTF-8
  f.current_unit = "mA";
  f.voltage_unit = "kV";
  f.quote_header = true;
  f.crlf = true;
  const std::string text = write(spec, f);
  const auto lines = lines_of(text, "\r\n");
  ASSERT_EQ(lines.size(), 21u);
  for (const auto& line : lines) EXPECT_EQ(line.find('\n'), std::string::npos);  // no bare LF
  EXPECT_EQ(lines[0], "\"time [\xC2\xB5s]\";\"current [mA]\";\"voltage [kV]\"");
  Generator gen(spec);
  for (std::size_t n = 1; n < 20; ++n) {
    std::string row = lines[n + 1];
    EXPECT_EQ(row.find('.'), std::string::npos) << row;
    for (char& c : row) c = c == ',' ? '.' : c;
    const auto cells = split(row, ';');
    ASSERT_EQ(cells.size(), 3u);
    EXPECT_DOUBLE_EQ(std::stod(cells[0]), static_cast<double>(n));  // µs
    const double i_ma = gen.ideal_current_a(gen.elapsed_s(n)) * 1e3;
    const double v_kv = gen.ideal_voltage_v(gen.elapsed_s(n)) * 1e-3;
    EXPECT_NEAR(std::stod(cells[1]), i_ma, std::abs(i_ma) * 5e-6);
    EXPECT_NEAR(std::stod(cells[2]), v_kv, std::abs(v_kv) * 5e-6);
  }
}

TEST(SynthText, PreambleCommentsAndNoHeader) {
  CaptureSpec spec = small_supply();
  spec.voltage.reset();
  TextFormat f;
  f.preamble = true;
  f.comments = true;
  f.metadata = {{"Unit under test", "BT-32K serial 0042"}};
  f.header = false;
  f.time_column = false;
  const auto lines = lines_of(write(spec, f));
  const std::vector<std::string> head{
      "Bench: Brightwell Tubeworks QA-2",
      "",
      "Record length,20",
      "Sample interval,1e-06",
      "Start time,0",
      "Channels,1",
      "Unit under test,BT-32K serial 0042",
      "",
      "# Brightwell Tubeworks bench QA capture, synthetic (lopside-synth)",
      "# seed 1"};
  ASSERT_EQ(lines.size(), head.size() + 20 + 1);
  for (std::size_t k = 0; k < head.size(); ++k) EXPECT_EQ(lines[k], head[k]);
  EXPECT_EQ(split(lines[head.size()], ',').size(), 1u);  // data only: no time, no header
  EXPECT_EQ(lines.back(), "# end of record");
}

TEST(SynthText, FewTimeDigitsDoNotResolveTheStep) {
  CaptureSpec spec = small_supply();
  spec.timebase.sample_rate_hz = 10e6;  // 100 ns steps
  spec.timebase.start_time_s = 12.0;
  TextFormat f;
  f.time_digits = 8;  // resolves 1e-6 s at t ≥ 10 s
  const auto lines = lines_of(write(spec, f));
  EXPECT_EQ(split(lines[1], ',')[0], "12");
  EXPECT_EQ(split(lines[2], ',')[0], "12");
  EXPECT_EQ(split(lines[11], ',')[0], "12.000001");  // 10 steps = 1 µs
}

TEST(SynthText, WhitespaceColumnsAlign) {
  const CaptureSpec spec = small_supply();
  TextFormat f;
  f.delimiter = Delimiter::whitespace;
  f.current_name = "tube current";
  const auto lines = lines_of(write(spec, f));
  EXPECT_EQ(lines[0].substr(0, 7), "time(s)");
  std::istringstream header(lines[0]);
  std::string a, b, c;
  header >> a >> b >> c;
  EXPECT_EQ(b, "tube_current(A)");
  EXPECT_EQ(c, "voltage(V)");
  const std::size_t second_column = lines[0].find('t', 7);
  for (std::size_t n = 1; n < lines.size(); ++n) {
    EXPECT_NE(lines[n][second_column], ' ') << lines[n];
    EXPECT_EQ(lines[n][second_column - 1], ' ') << lines[n];
  }
}

TEST(SynthText, RejectsUnknownUnits) {
  TextFormat f;
  f.current_unit = "mV";
  Generator gen(small_supply());
  std::ostringstream out;
  EXPECT_THROW(write_text(gen, f, out), std::invalid_argument);
  EXPECT_TRUE(out.str().empty());
}

namespace {

// Build-up and flip: the generator's per-cycle mean must follow the model it states
// (synth.hpp): ratio(t) = 1 + (r − 1)(1 − e^(−t/τ)), DC = (2A/π)·½·(1 − ratio) for sine halves
// (cycle_mean), and the mirrored waveform after a flip has the opposite DC.
TEST(SynthTimeCourse, BuildUpFollowsTheFirstOrderModelAndFlipNegatesTheDc) {
  lopside::synth::CaptureSpec s;
  s.timebase.sample_rate_hz = 100e3;
  s.timebase.duration_s = 2.0;
  s.timebase.start_frequency_hz = s.timebase.end_frequency_hz = 1000;
  s.current.peak = 1.0;
  s.current.negative_ratio = 0.8;
  s.build_up_tau_s = 0.5;
  s.polarity_flip_s = 1.5;
  lopside::synth::Generator g(s);
  for (const double t : {0.0, 0.25, 0.5, 1.0, 1.49}) {
    const double ratio = 1 + (0.8 - 1) * (1 - std::exp(-t / 0.5));
    EXPECT_NEAR(lopside::synth::cycle_mean(g.current_waveform_at(t)),
                (2 / M_PI) * 0.5 * (1 - ratio), 1e-12)
        << t;
  }
  const double before = lopside::synth::cycle_mean(g.current_waveform_at(1.4999));
  const double after = lopside::synth::cycle_mean(g.current_waveform_at(1.5));
  EXPECT_NEAR(after, -before, 1e-4 * std::fabs(before));
  // The mirrored waveform's positive peak is the ratio in force: at the crest of the cycle
  // starting at 1.5 s (a quarter period later), 1 − 0.2·(1 − e^(−t/0.5)).
  const double crest = 1.5 + 0.25e-3;
  const double ratio = 1 + (0.8 - 1) * (1 - std::exp(-crest / 0.5));
  EXPECT_NEAR(g.ideal_current_a(crest), ratio, 1e-9);
}

}  // namespace

// ---------------------------------------------------------------------------------------------
// Probe models (issue 13): first-order high-pass (ct, ac-coupled) and Rogowski di/dt, checked
// against analytic answers.

namespace {

// Trapezoid running integral ∫₀^{tₙ} y dt of frames y spaced `dt`, starting at 0.
std::vector<double> trapezoid(const std::vector<double>& y, double dt) {
  std::vector<double> out(y.size(), 0.0);
  for (std::size_t n = 1; n < y.size(); ++n) out[n] = out[n - 1] + 0.5 * dt * (y[n - 1] + y[n]);
  return out;
}

CaptureSpec probed(Probe kind) {
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = 100e3;
  spec.timebase.duration_s = 0.2;
  spec.timebase.start_frequency_hz = spec.timebase.end_frequency_hz = 1000.0;
  spec.current.peak = 0.02;
  spec.current.dc = 0.004;
  spec.lead_in_s = 1e-3;
  spec.probe.kind = kind;
  spec.probe.tau_s = 5e-3;
  spec.probe.rogowski_m_vs_per_a = 2e-7;
  return spec;
}

}  // namespace

TEST(SynthProbe, CtStepResponseIsI0TimesExpMinusTOverTau) {
  // A constant current I0 switched on after a lead-in: the first-order high-pass answers a
  // step with I0·e^(−t/τ) (the step response of any first-order RL/RC high-pass). Checked with
  // the ignition on a frame and between frames; only rounding differs, allowed 1e-9 relative.
  for (const double lead_in : {1e-3, 1.00037e-3}) {
    CaptureSpec spec;
    spec.timebase.sample_rate_hz = 1e6;
    spec.timebase.duration_s = 5e-3;
    spec.current.peak = 0.0;
    spec.current.dc = 0.01;
    spec.lead_in_s = lead_in;
    spec.probe.kind = Probe::current_transformer;
    spec.probe.tau_s = 1e-3;
    Generator gen(spec);
    const auto y = all_frames(gen);
    ASSERT_EQ(y.size(), 5000u);
    std::size_t checked = 0;
    for (std::size_t n = 0; n < y.size(); n += 37) {
      const double t = gen.elapsed_s(n) - lead_in;
      if (t < 0.0) {
        ASSERT_EQ(y[n], 0.0) << n;  // quiet lead-in: exactly zero
        continue;
      }
      ASSERT_NEAR(y[n], 0.01 * std::exp(-t / 1e-3), 1e-9 * 0.01 * std::exp(-t / 1e-3))
          << "frame " << n << ", lead-in " << lead_in;
      ++checked;
    }
    EXPECT_GT(checked, 100u);
    // The ignition frame itself: I0·e^(−(t_j − L)/τ), I0 exactly when it falls on the frame.
    const auto j = static_cast<std::size_t>(std::ceil(lead_in * 1e6));
    EXPECT_NEAR(y[j], 0.01 * std::exp(-(gen.elapsed_s(j) - lead_in) / 1e-3), 1e-18);
    EXPECT_EQ(y[j - 1], 0.0);
  }
}

TEST(SynthProbe, CtHidesTheDcAndDroopCorrectionRestoresIt) {
  // A 1 kHz sine of 20 mA peak with 4 mA DC, τ = 5 ms, 100 frames a cycle, ignition at 1 ms.
  const CaptureSpec spec = probed(Probe::current_transformer);
  Generator gen(spec);
  const auto y = all_frames(gen);
  ASSERT_EQ(y.size(), 20000u);
  const double dt = 1e-5, tau = 5e-3, d = 0.004, peak = 0.02;
  // In steady state (the last 50 cycles start 29.8 τ after ignition, e^−29.8 ≈ 1e-13) a
  // high-pass passes no DC: the mean over whole cycles is 0; allowed 1e-3·d.
  const std::vector<double> tail(y.end() - 5000, y.end());
  EXPECT_LT(std::abs(mean(tail)), 1e-3 * d);
  // Droop correction x = y + (1/τ)∫₀ᵗ y dt (DOMAIN.md, Probes). The trapezoid rule errs by
  // d·Δt/2 over the ignition frame (d·Δt/(2τ) = 4 µA in x) and O(Δt²) elsewhere: the DC and
  // every frame of the current come back within 1e-3 of the peak.
  const auto integral = trapezoid(y, dt);
  std::vector<double> x(y.size());
  for (std::size_t n = 0; n < y.size(); ++n) x[n] = y[n] + integral[n] / tau;
  const std::vector<double> x_tail(x.end() - 5000, x.end());
  EXPECT_NEAR(mean(x_tail), d, 1e-3 * peak);
  double worst = 0.0;
  for (std::size_t n = 0; n < x.size(); ++n)
    worst = std::max(worst, std::abs(x[n] - gen.ideal_current_a(gen.elapsed_s(n))));
  EXPECT_LT(worst, 1e-3 * peak);
  // The truth before the probe is still the generator's: its cycle mean is the DC.
  EXPECT_NEAR(cycle_mean(spec.current), d, 1e-18);
}

TEST(SynthProbe, RogowskiGivesMTimesDiDtAndIntegratesBackToTheCurrent) {
  // I sin(ωt) at 1 kHz, 1000 frames a cycle, M = 0.2 µV·s/A: output M·I·ω·cos(ωt). The
  // derivative is analytic, so only rounding differs: allowed 1e-6 of the amplitude M·I·ω
  // (relative to each sample would be meaningless at the zeros of the cosine).
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = 1e6;
  spec.timebase.duration_s = 10e-3;
  spec.timebase.start_frequency_hz = spec.timebase.end_frequency_hz = 1000.0;
  spec.current.peak = 0.02;
  spec.probe.kind = Probe::rogowski;
  spec.probe.rogowski_m_vs_per_a = 2e-7;
  Generator gen(spec);
  const auto v = all_frames(gen);
  const double m = 2e-7, i = 0.02, w = 2 * pi * 1000.0, dt = 1e-6;
  for (std::size_t n = 0; n < v.size(); ++n) {
    ASSERT_NEAR(v[n], m * i * w * std::cos(w * gen.elapsed_s(n)), 1e-6 * m * i * w) << n;
  }
  // Trapezoid integral of v/M: error ≤ (Δt²/12)·max|i''|·t-ish, here (ωΔt)²/12 ≈ 3e-6 of I
  // per cycle-scale stretch; allowed 1e-4 of I.
  std::vector<double> didt(v.size());
  for (std::size_t n = 0; n < v.size(); ++n) didt[n] = v[n] / m;
  const auto x = trapezoid(didt, dt);
  for (std::size_t n = 0; n < x.size(); ++n) {
    ASSERT_NEAR(x[n], i * std::sin(w * gen.elapsed_s(n)), 1e-4 * i) << n;
  }
}

TEST(SynthProbe, RogowskiKeepsStepsAsImpulsesSoTheIntegralCarriesTheDc) {
  // After a lead-in the ignition steps the current from 0 to d + A (phase 90°, where the
  // sine's slope is 0, so the trapezoid meets no kink there): the impulse (d + A)·δ(t − L) is
  // one frame of M·(d + A)/Δt. Integrated (trapezoid), the record gives the current back, DC
  // included, from the frame after ignition on.
  CaptureSpec spec = probed(Probe::rogowski);
  spec.timebase.start_phase_deg = 90.0;
  Generator gen(spec);
  const auto v = all_frames(gen);
  const double m = 2e-7, dt = 1e-5;
  std::vector<double> didt(v.size());
  for (std::size_t n = 0; n < v.size(); ++n) didt[n] = v[n] / m;
  EXPECT_EQ(didt[99], 0.0);
  EXPECT_NEAR(didt[100], (0.004 + 0.02) / dt, 1e-9 * 0.024 / dt);
  const auto x = trapezoid(didt, dt);
  double worst = 0.0;
  for (std::size_t n = 101; n < x.size(); ++n)
    worst = std::max(worst, std::abs(x[n] - gen.ideal_current_a(gen.elapsed_s(n))));
  // Trapezoid error of the sine part (ωΔt)²/12 ≈ 3.3e-4 relative, not cumulative over
  // whole cycles: allowed 1e-3 of the peak.
  EXPECT_LT(worst, 1e-3 * 0.02);
  EXPECT_NEAR(mean(std::vector<double>(x.end() - 5000, x.end())), 0.004, 1e-3 * 0.02);
}

TEST(SynthProbe, RogowskiOfASquareWaveIntegratesBackToTheSquare) {
  // A ±A square with unequal halves after a 1 ms lead-in: di/dt is only impulses at the edges
  // and at ignition. The integral of the record matches the square at every frame but the
  // edge frames themselves (half a step there: the trapezoid rule splits an impulse's area
  // over its two neighbouring intervals).
  CaptureSpec spec = whole_cycles(200, 20);
  spec.lead_in_s = 1e-3;
  spec.current.shape = Shape::square;
  spec.current.peak = 0.02;
  spec.current.negative_ratio = 0.7;
  spec.current.positive_share = 0.53;
  spec.probe.kind = Probe::rogowski;
  spec.probe.rogowski_m_vs_per_a = 1e-6;
  Generator gen(spec);
  const auto v = all_frames(gen);
  std::vector<double> didt(v.size());
  for (std::size_t n = 0; n < v.size(); ++n) didt[n] = v[n] / 1e-6;
  const auto x = trapezoid(didt, 1.0 / 200e3);
  std::size_t edges = 0;
  for (std::size_t n = 1; n < x.size(); ++n) {
    const double truth = gen.ideal_current_a(gen.elapsed_s(n));
    if (truth != gen.ideal_current_a(gen.elapsed_s(n - 1))) {
      ++edges;
      continue;
    }
    ASSERT_NEAR(x[n], truth, 1e-12) << n;
  }
  // Ignition, then in 19 cycles the edges at phases k + 0.53 (k = 0…18) and k (k = 1…18).
  EXPECT_EQ(edges, 1u + 19u + 18u);
}

TEST(SynthProbe, AcCoupledIsTheSameFilterAsCt) {
  CaptureSpec spec = probed(Probe::current_transformer);
  spec.noise_rms_a = 1e-4;
  spec.build_up_tau_s = 0.03;
  spec.current.negative_ratio = 0.8;
  Generator ct(spec);
  spec.probe.kind = Probe::ac_coupled;
  Generator ac(spec);
  EXPECT_EQ(all_frames(ct), all_frames(ac));  // bit-identical
}

TEST(SynthProbe, ShuntLeavesTheCurrentBitIdentical) {
  // Everything that shapes the current, through an explicit shunt with stray probe
  // parameters, against the default spec: the same frames, bit for bit.
  CaptureSpec plain = whole_cycles(100, 50);
  plain.current.peak = 0.02;
  plain.current.dc = 0.001;
  plain.current.negative_ratio = 0.9;
  plain.noise_rms_a = 1e-3;
  plain.clip_high_a = 0.018;
  plain.build_up_tau_s = 0.01;
  plain.polarity_flip_s = 0.03;
  plain.timebase.end_frequency_hz = 1100.0;
  plain.voltage = Waveform{};
  plain.voltage->peak = 300.0;
  CaptureSpec shunt = plain;
  shunt.probe = ProbeModel{Probe::shunt, 0.01, 1.0};
  Generator a(plain), b(shunt);
  EXPECT_EQ(all_frames(a), all_frames(b));
}

TEST(SynthProbe, VoltageRunsThroughTheLeadInAndNoProbeTouchesIt) {
  CaptureSpec spec = probed(Probe::shunt);
  spec.voltage = Waveform{};
  spec.voltage->peak = 300.0;
  spec.timebase.start_phase_deg = 0.0;
  Generator shunt(spec);
  const auto frames = all_frames(shunt);
  const auto v = channel(frames, 2, 1);
  // The supply is on before ignition, and the shared phase is the start phase at ignition.
  double largest = 0.0;
  for (std::size_t n = 0; n < 100; ++n) largest = std::max(largest, std::abs(v[n]));
  EXPECT_GT(largest, 290.0);
  EXPECT_NEAR(shunt.ideal_voltage_v(1e-3), 0.0, 1e-12);
  EXPECT_NEAR(shunt.ideal_voltage_v(1e-3 + 0.25e-3), 300.0, 1e-9);
  EXPECT_NEAR(shunt.ideal_current_a(1e-3 + 0.25e-3), 0.024, 1e-15);
  for (const Probe kind : {Probe::current_transformer, Probe::rogowski}) {
    spec.probe.kind = kind;
    Generator probed_gen(spec);
    EXPECT_EQ(channel(all_frames(probed_gen), 2, 1), v) << probe_name(kind);
  }
}

TEST(SynthProbe, RejectsMissingProbeParametersAndALongLeadIn) {
  CaptureSpec spec;
  spec.probe.kind = Probe::current_transformer;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);  // no τ
  spec.probe.kind = Probe::rogowski;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);  // no M
  spec = CaptureSpec{};
  spec.lead_in_s = spec.timebase.duration_s;
  EXPECT_THROW(Generator{spec}, std::invalid_argument);
}

TEST(SynthProbe, RogowskiTextIsInVolts) {
  CaptureSpec spec = small_supply();
  spec.probe.kind = Probe::rogowski;
  spec.probe.rogowski_m_vs_per_a = 1e-6;
  EXPECT_EQ(lines_of(write(spec, TextFormat{}))[0], "time (s),current (V),voltage (V)");
  TextFormat f;
  f.current_unit = "mA";
  Generator gen(spec);
  std::ostringstream out;
  EXPECT_THROW(write_text(gen, f, out), std::invalid_argument);
}

TEST(SynthProbe, CommandLineShuntIsTheDefault) {
  // The program: --probe shunt writes the same bytes as no --probe at all.
  const std::string dir = ::testing::TempDir();
  const std::string a = dir + "/synth_probe_a.csv", b = dir + "/synth_probe_b.csv";
  const std::string common = std::string(LOPSIDE_SYNTH) +
                             " --dc 0.003 --noise-rms 0.001 --lead-in 0.01 --duration 0.05 -o ";
  ASSERT_EQ(std::system((common + a).c_str()), 0);
  ASSERT_EQ(std::system((common + b + " --probe shunt").c_str()), 0);
  const auto slurp = [](const std::string& path) {
    std::ifstream in(path, std::ios::binary);
    return std::string(std::istreambuf_iterator<char>(in), {});
  };
  EXPECT_FALSE(slurp(a).empty());
  EXPECT_EQ(slurp(a), slurp(b));
  // Probe options out of place are refused.
  EXPECT_NE(std::system((common + b + " --probe ct 2>/dev/null").c_str()), 0);
  EXPECT_NE(std::system((common + b + " --probe-tau 0.01 2>/dev/null").c_str()), 0);
}
