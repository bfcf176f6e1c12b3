// Round trips synth → text → reader: every text variant lopside-synth writes is read back by
// the delimited-text reader and compared, sample by sample, with a second Generator of the same
// spec (the noise depends on the seed only, not on block sizes: synth.hpp, Generator::read), so
// the truth is known exactly and the only allowed difference is the printing's rounding.
//
// Tolerances used throughout, derived once here:
//  * Values. The synth prints y = x / f (x in SI, f the unit's factor) with std::to_chars in
//    general format with p significant digits, which is printf's "%.*g" ([charconv.to.chars]);
//    "%.*g" rounds to nearest (ISO C 7.21.6.1 with IEC 60559 rounding), so the printed decimal
//    d has |d − y| ≤ ½·10^(e−p+1) with 10^e ≤ |y|, i.e. |d − y| ≤ ½·10^(1−p)·|y|. The reader
//    parses d correctly rounded (from_chars, [charconv.from.chars]) and multiplies by the unit
//    factor times any gain. Each binary step adds at most one rounding of 2^−53 relative
//    (IEEE 754 §4.3): x / f, the parse, the product factor·gain, the multiplication, and the
//    reader's own factor constant against the synth's (each the correctly rounded 10^k): five,
//    covered by 4·DBL_EPSILON = 8·2^−53. Hence
//        |read − g·x| ≤ (½·10^(1−p) + 4ε)·|g·x| + DBL_MIN,
//    the DBL_MIN absolute term for values so near 0 that the relative bounds of normal numbers
//    no longer hold (IEEE 754 gradual underflow). Round-to-nearest is monotone, so the same
//    bound holds for the minimum and maximum of a channel.
//  * Sample rate from a time column that resolves each step: the reader fits t = a + b·k by
//    least squares (text_reader.cpp, TimeFit). If row k is off by e_k, the slope is off by
//    Σ(k − k̄)e_k / Σ(k − k̄)² (normal equations), at most Σ|k − k̄|·|e_k| / Σ(k − k̄)², with
//    |e_k| ≤ ½·10^(1−d)·|t_k| for d printed time digits (ISO C 7.21.6.1 as above). That bound is
//    computed per case (time_fit_bound) and must itself stay below 1e-9.
#include <gtest/gtest.h>

#include <algorithm>
#include <cfloat>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/channel_stats.hpp"
#include "lopside/error.hpp"
#include "lopside/reader_options.hpp"
#include "lopside/sample_source.hpp"
#include "synth/synth.hpp"

namespace lopside {
namespace {

using synth::CaptureSpec;
using synth::Delimiter;
using synth::Generator;
using synth::Shape;
using synth::TextFormat;
using synth::UnitStyle;
using synth::Waveform;

constexpr double kRateHz = 192e3;  // 1/rate = 5.2083…e-6 s: no exact decimal, so printing rounds

// A Brightwell Tubeworks bench capture: an electronic cold-cathode supply near 20 kHz
// (DOMAIN.md: electronic supplies run at 20–50 kHz), a glow-lobe current of 8 mA peak with a
// slightly weaker negative lobe and noise, and the tube voltage. 960 frames.
CaptureSpec bench_spec(bool with_voltage, double start_time_s, bool noise) {
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = kRateHz;
  spec.timebase.duration_s = 5e-3;
  spec.timebase.start_time_s = start_time_s;
  spec.timebase.start_frequency_hz = 20e3;
  spec.timebase.end_frequency_hz = 20.4e3;
  spec.timebase.start_phase_deg = 17.0;
  spec.current.shape = Shape::lobed;
  spec.current.peak = 8e-3;
  spec.current.dc = noise ? 0.12e-3 : 0.0;  // noise-free and dc 0: the lobe's gaps print "0"
  spec.current.negative_ratio = 0.93;
  spec.noise_rms_a = noise ? 0.15e-3 : 0.0;
  if (with_voltage) {
    Waveform u;
    u.shape = Shape::sine;
    u.peak = 1.6e3;
    u.dc = 2.5;
    spec.voltage = u;
  }
  spec.seed = 20240611;
  return spec;
}

// See the file comment: the printing bound plus binary rounding.
double value_bound(double x, int digits) {
  return (0.5 * std::pow(10.0, 1 - digits) + 4 * DBL_EPSILON) * std::fabs(x) + DBL_MIN;
}

// Worst-case relative error of the least-squares sample interval (file comment): rows k =
// 0…n−1 at t_k = t0 + k·dt, each printed with `digits` significant digits.
double time_fit_bound(std::uint64_t n, double t0, double dt, int digits) {
  const double half_digit = 0.5 * std::pow(10.0, 1 - digits);
  const double k_mean = 0.5 * static_cast<double>(n - 1);
  double weighted = 0.0, sum_sq = 0.0;
  for (std::uint64_t i = 0; i < n; ++i) {
    const double k = static_cast<double>(i);
    weighted += std::fabs(k - k_mean) * half_digit * std::fabs(t0 + k * dt);
    sum_sq += (k - k_mean) * (k - k_mean);
  }
  // + 1e-13: the fit's own arithmetic (long double sums, then 1/slope in double).
  return weighted / sum_sq / dt + 1e-13;
}

struct Outcome {
  CaptureInfo info;  // after read() returned 0 (frames and rate final)
  std::vector<std::string> warnings;
  std::vector<ChannelSummary> summaries;
};

// Reads `source` to the end in blocks of `block_frames`, comparing each sample with a fresh
// Generator of `spec` times `gains` (per channel), within value_bound.
Outcome read_and_compare(SampleSource& source, const CaptureSpec& spec,
                         const std::vector<double>& gains, int value_digits,
                         std::size_t block_frames) {
  Outcome out;
  Generator reference(spec);
  const std::size_t ch = reference.channels();
  if (source.info().channels.size() != ch) {
    ADD_FAILURE() << "reader has " << source.info().channels.size() << " channels, written " << ch;
    out.info = source.info();
    return out;
  }
  ChannelStats stats(ch);
  std::vector<double> ref_min(ch, std::numeric_limits<double>::infinity());
  std::vector<double> ref_max(ch, -std::numeric_limits<double>::infinity());
  SampleBlock block;
  std::vector<double> expected;
  std::uint64_t frame = 0, bad = 0;
  while (const std::size_t n = source.read(block, block_frames)) {
    const std::size_t got = reference.read(expected, n);
    if (got != n) {
      ADD_FAILURE() << "reader returned more frames than were written (" << frame + n << " > "
                    << reference.frames() << ")";
      break;
    }
    stats.add(block);
    for (std::size_t f = 0; f < n; ++f, ++frame) {
      for (std::size_t c = 0; c < ch; ++c) {
        const double x = gains[c] * expected[f * ch + c];
        ref_min[c] = std::min(ref_min[c], x);
        ref_max[c] = std::max(ref_max[c], x);
        const double y = block.value(f, c);
        if (!(std::fabs(y - x) <= value_bound(x, value_digits)) && ++bad <= 3) {
          ADD_FAILURE() << "frame " << frame << " channel " << c + 1 << ": read " << y
                        << ", written " << x << " (|error| " << std::fabs(y - x) << " > bound "
                        << value_bound(x, value_digits) << ")";
        }
      }
    }
  }
  EXPECT_EQ(bad, 0u) << "samples outside the printing bound";
  EXPECT_EQ(reference.read(expected, 1), 0u)
      << "reader ended after " << frame << " of " << reference.frames() << " frames";
  out.info = source.info();
  out.warnings = source.warnings();
  out.summaries = stats.summaries();
  // Extremes in SI (monotone rounding, file comment).
  for (std::size_t c = 0; c < ch && c < out.summaries.size(); ++c) {
    EXPECT_NEAR(out.summaries[c].min, ref_min[c], value_bound(ref_min[c], value_digits))
        << "min of channel " << c + 1;
    EXPECT_NEAR(out.summaries[c].max, ref_max[c], value_bound(ref_max[c], value_digits))
        << "max of channel " << c + 1;
  }
  return out;
}

// --- the variants ----------------------------------------------------------------------------

struct Case {
  std::string name;  // GoogleTest parameter name
  TextFormat format;
  bool voltage = true;
  double start_time_s = 0.0;
  bool noise = true;
  ReaderOptions options;
  double current_gain = 1.0;  // what options.gains should multiply each channel by
  double voltage_gain = 1.0;
  bool via_file = false;  // through open_capture on a temp file instead of a stream
};

// GoogleTest prints a failing parameter with this instead of its bytes.
void PrintTo(const Case& c, std::ostream* os) {
  *os << c.name;
}

Case make(const std::string& name, const std::function<void(Case&)>& edit) {
  Case c;
  c.name = name;
  edit(c);
  return c;
}

void no_time_column(Case& c) {
  c.format.time_column = false;
  c.options.rate_hz = kRateHz;
}

void no_header(Case& c) {
  c.format.header = false;
  c.format.time_column = false;  // without a header nothing marks a column as time
  c.options.rate_hz = kRateHz;
  // --unit 1=<written unit>: the reader cannot know it otherwise.
  c.options.units["1"] = c.format.current_unit;
  if (c.voltage) c.options.units["2"] = c.format.voltage_unit;
}

std::vector<Case> all_cases() {
  std::vector<Case> v;
  const std::vector<std::pair<std::string, Delimiter>> delimiters{
      {"comma", Delimiter::comma},
      {"semicolon", Delimiter::semicolon},
      {"tab", Delimiter::tab},
      {"whitespace", Delimiter::whitespace}};
  for (const auto& [dname, d] : delimiters) {
    const Delimiter delim = d;
    v.push_back(make(dname, [&](Case& c) { c.format.delimiter = delim; }));
    v.push_back(make("preamble_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.preamble = true;
      c.format.metadata = {{"Unit under test", "BT-32K serial 0042"},
                           {"Operator note", "probe on lead A, \"normal\" leads; 10 mV/A"}};
    }));
    v.push_back(make("comments_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.comments = true;
    }));
    v.push_back(make("crlf_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.crlf = true;
    }));
    v.push_back(make("quoted_header_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.quote_header = true;
      c.format.current_name = "tube current";  // a blank inside quotes stays in the name
      c.format.voltage_name = "tube voltage";
    }));
    v.push_back(make("brackets_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.unit_style = UnitStyle::brackets;
    }));
    // No time column: the rate from --rate, then from the preamble's "Sample interval" line
    // (synth.cpp writes "Sample interval" = 1/rate with 12 significant digits).
    v.push_back(make("no_time_rate_option_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      no_time_column(c);
    }));
    v.push_back(make("no_time_preamble_interval_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.time_column = false;
      c.format.preamble = true;
    }));
    v.push_back(make("no_header_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.format.current_unit = "mA";
      c.format.voltage_unit = "kV";
      no_header(c);
    }));
    v.push_back(make("current_only_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.voltage = false;
    }));
    v.push_back(make("current_only_no_time_" + dname, [&](Case& c) {
      c.format.delimiter = delim;
      c.voltage = false;
      no_time_column(c);
    }));
  }
  v.push_back(make("spaced_names_whitespace", [](Case& c) {
    c.format.delimiter = Delimiter::whitespace;  // unquoted: synth writes "tube_current"
    c.format.current_name = "tube current";
    c.format.voltage_name = "tube voltage";
  }));
  for (const auto& [uname, unit] : std::vector<std::pair<std::string, std::string>>{{"mA", "mA"},
                                                                                    {"uA", "uA"},
                                                                                    {"microsign_A",
                                                                                     "\xC2\xB5"
                                                                                     "A"},
                                                                                    {"kA", "kA"}}) {
    const std::string u = unit;
    v.push_back(make("current_unit_" + uname, [&](Case& c) { c.format.current_unit = u; }));
  }
  for (const std::string& u : std::vector<std::string>{"mV", "kV"}) {
    v.push_back(make("voltage_unit_" + u, [&](Case& c) { c.format.voltage_unit = u; }));
  }
  for (const auto& [tname, unit] : std::vector<std::pair<std::string, std::string>>{{"ms", "ms"},
                                                                                    {"us", "us"},
                                                                                    {"microsign_s",
                                                                                     "\xC2\xB5"
                                                                                     "s"},
                                                                                    {"ns", "ns"}}) {
    const std::string u = unit;
    v.push_back(make("time_unit_" + tname, [&](Case& c) { c.format.time_unit = u; }));
  }
  v.push_back(make("unit_style_none_with_unit_options", [](Case& c) {
    c.format.unit_style = UnitStyle::none;  // "time" by name is seconds; --unit gives the rest
    c.format.current_unit = "mA";
    c.format.voltage_unit = "kV";
    c.options.units["current"] = "mA";
    c.options.units["voltage"] = "kV";
  }));
  v.push_back(make("gain_by_number_and_name", [](Case& c) {
    // --gain 1=10 (a 100 mV/A probe read as if in A) and --gain voltage=1000 (a 1000:1 divider).
    c.options.gains["1"] = 10.0;
    c.options.gains["voltage"] = 1000.0;
    c.current_gain = 10.0;
    c.voltage_gain = 1000.0;
  }));
  v.push_back(make("gain_on_milliamperes_semicolon", [](Case& c) {
    c.format.delimiter = Delimiter::semicolon;
    c.format.current_unit = "mA";  // the header's prefix applies first, then the gain
    c.options.gains["current"] = 2.5;
    c.current_gain = 2.5;
  }));
  v.push_back(make("digits_17", [](Case& c) {
    c.format.value_digits = 17;  // round-trip precision of a double: error only 4ε
    c.format.time_digits = 17;
  }));
  v.push_back(make("digits_3_whitespace", [](Case& c) {
    c.format.delimiter = Delimiter::whitespace;
    c.format.value_digits = 3;
  }));
  v.push_back(make("noise_free_lobe_zeros", [](Case& c) { c.noise = false; }));
  v.push_back(make("start_time_250ms_in_ms", [](Case& c) {
    c.start_time_s = 0.25;
    c.format.time_unit = "ms";
    c.format.time_digits = 13;  // bound 0.25 s offset: time_fit_bound ≈ 7.6e-11
  }));
  const auto everything = [](Case& c) {
    c.format.delimiter = Delimiter::semicolon;
    c.format.preamble = true;
    c.format.metadata = {{"Supply", "BT-32K; 32 kHz class"}};
    c.format.comments = true;
    c.format.crlf = true;
    c.format.quote_header = true;
    c.format.unit_style = UnitStyle::brackets;
    c.format.time_unit =
        "\xC2\xB5"
        "s";
    c.format.current_unit =
        "\xC2\xB5"
        "A";
    c.format.voltage_unit = "kV";
  };
  v.push_back(make("everything_semicolon_stream", everything));
  v.push_back(make("everything_semicolon_file", [&](Case& c) {
    everything(c);
    c.via_file = true;
  }));
  v.push_back(make("everything_whitespace_file", [](Case& c) {
    c.format.delimiter = Delimiter::whitespace;
    c.format.preamble = true;
    c.format.comments = true;
    c.format.crlf = true;
    c.format.time_unit = "ns";
    c.format.current_unit = "uA";
    c.format.voltage_unit = "mV";
    c.via_file = true;
  }));
  return v;
}

class TextRoundTrip : public ::testing::TestWithParam<Case> {};

TEST_P(TextRoundTrip, ReadsBackWhatWasWritten) {
  const Case& c = GetParam();
  const CaptureSpec spec = bench_spec(c.voltage, c.start_time_s, c.noise);
  Generator writer(spec);
  const std::uint64_t frames = writer.frames();
  ASSERT_EQ(frames, 960u);  // round(5 ms × 192 kHz), synth.hpp Timebase::duration_s

  std::stringstream text;
  synth::write_text(writer, c.format, text);

  std::unique_ptr<SampleSource> source;
  std::filesystem::path file;
  if (c.via_file) {
    file = std::filesystem::path(::testing::TempDir()) / ("lopside_roundtrip_" + c.name + ".txt");
    {
      std::ofstream out(file, std::ios::binary);  // binary: CR LF reaches the reader as written
      out << text.rdbuf();
      ASSERT_TRUE(out.good());
    }
    source = open_capture(file, c.options);
    EXPECT_EQ(source->info().path, file.string());
  } else {
    source = open_text_capture(text, "roundtrip.txt", c.options);
  }

  std::vector<double> gains{c.current_gain};
  if (c.voltage) gains.push_back(c.voltage_gain);
  const Outcome r = read_and_compare(*source, spec, gains, c.format.value_digits, 257);
  source.reset();
  if (!file.empty()) std::filesystem::remove(file);

  // Sample count: one frame per data row written (synth.cpp write_text).
  ASSERT_TRUE(r.info.frames.has_value());
  EXPECT_EQ(*r.info.frames, frames);

  // Sample rate.
  if (c.format.time_column) {
    const double bound =
        time_fit_bound(frames, c.start_time_s, 1.0 / kRateHz, c.format.time_digits);
    EXPECT_LE(bound, 1e-9) << "the case should print enough time digits to resolve each step";
    EXPECT_NEAR(r.info.sample_rate_hz, kRateHz, kRateHz * bound);
    // The first printed time is within half its last digit of the true start (ISO C
    // 7.21.6.1), and the reader keeps the printed value when the fit agrees with it.
    EXPECT_NEAR(r.info.start_time_s, c.start_time_s,
                value_bound(c.start_time_s, c.format.time_digits));
  } else if (c.options.rate_hz) {
    // --rate is taken as given (reader_options.hpp).
    EXPECT_EQ(r.info.sample_rate_hz, *c.options.rate_hz);
    EXPECT_EQ(r.info.start_time_s, 0.0);  // sample_source.hpp: 0 without a time column
  } else {
    // "Sample interval" printed with 12 digits: relative error ≤ ½·10^−11 (ISO C 7.21.6.1),
    // the same for its reciprocal to first order, plus the parse and the division (2ε).
    EXPECT_NEAR(r.info.sample_rate_hz, kRateHz, kRateHz * (0.5e-11 + 4 * DBL_EPSILON));
    EXPECT_NE(r.info.detail.find("preamble"), std::string::npos) << r.info.detail;
  }

  // Channels: names as written (blanks become '_' in unquoted whitespace headers, synth.cpp
  // header_cell; "chN" without a header, sample_source.hpp), SI units, roles from the units
  // (channel_roles.hpp: A → current, V → voltage).
  const std::size_t ch = c.voltage ? 2 : 1;
  ASSERT_EQ(r.info.channels.size(), ch);
  const auto expected_name = [&](const std::string& name, std::size_t index) {
    if (!c.format.header) return "ch" + std::to_string(index);
    std::string n = name;
    if (c.format.delimiter == Delimiter::whitespace && !c.format.quote_header) {
      std::replace(n.begin(), n.end(), ' ', '_');
    }
    return n;
  };
  EXPECT_EQ(r.info.channels[0].name, expected_name(c.format.current_name, 1));
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[0].index, 1u);
  if (c.voltage) {
    EXPECT_EQ(r.info.channels[1].name, expected_name(c.format.voltage_name, 2));
    EXPECT_EQ(r.info.channels[1].unit, "V");
    EXPECT_EQ(r.info.channels[1].role, ChannelRole::voltage);
    EXPECT_EQ(r.info.channels[1].index, 2u);
  }

  // Format names (sample_source.hpp CaptureInfo::format; "csv-semicolon" is the reader's
  // name for ';' with decimal comma). A single column has no delimiter to tell, so skipped.
  const std::size_t columns = ch + (c.format.time_column ? 1 : 0);
  if (columns > 1) {
    const char* expected_format = "csv";
    switch (c.format.delimiter) {
      case Delimiter::comma:
        expected_format = "csv";
        break;
      case Delimiter::semicolon:
        expected_format = "csv-semicolon";
        break;
      case Delimiter::tab:
        expected_format = "tsv";
        break;
      case Delimiter::whitespace:
        expected_format = "text";
        break;
    }
    EXPECT_EQ(r.info.format, expected_format);
  }

  // A perfect clock printed to 10+ digits: nothing is off the grid, no row skipped.
  for (const auto& w : r.warnings) {
    EXPECT_EQ(w.find("off the uniform time grid"), std::string::npos) << w;
    EXPECT_EQ(w.find("skipped"), std::string::npos) << w;
  }
}

INSTANTIATE_TEST_SUITE_P(Variants, TextRoundTrip, ::testing::ValuesIn(all_cases()),
                         [](const ::testing::TestParamInfo<Case>& p) { return p.param.name; });

// A long capture printed with 8 significant time digits from t = 10 s in 100 ns steps: the
// last printed digit is 1 µs, ten steps, so consecutive rows repeat or jump (the printing
// cannot resolve a step). The reader must fit the interval instead of calling it a gap.
TEST(TextRoundTripCoarseTime, EightDigitTimesFromTenSecondsFitTheInterval) {
  CaptureSpec spec;
  spec.timebase.sample_rate_hz = 10e6;  // 100 ns
  spec.timebase.duration_s = 0.015;     // 150000 rows: beyond the reader's 65536-row look-ahead
  spec.timebase.start_time_s = 10.0;
  spec.timebase.start_frequency_hz = 40e3;
  spec.timebase.end_frequency_hz = 40e3;
  spec.current.shape = Shape::sine;
  spec.current.peak = 6e-3;
  spec.current.dc = 0.05e-3;
  spec.noise_rms_a = 0.1e-3;
  Waveform u;
  u.peak = 1.2e3;
  spec.voltage = u;
  spec.seed = 7;

  TextFormat format;
  format.time_digits = 8;
  format.current_unit = "mA";
  format.voltage_unit = "kV";
  Generator writer(spec);
  ASSERT_EQ(writer.frames(), 150000u);
  std::stringstream text;
  synth::write_text(writer, format, text);

  std::unique_ptr<SampleSource> source;
  Outcome r;
  ASSERT_NO_THROW({
    source = open_text_capture(text, "long.csv", {});
    r = read_and_compare(*source, spec, {1.0, 1.0}, format.value_digits, 4096);
  });  // no gap error: every printed time is within ½ µs of its slot
  ASSERT_TRUE(r.info.frames.has_value());
  EXPECT_EQ(*r.info.frames, 150000u);
  // Why 1e-6: the printed time's error e_k (printed − true, rounded to 1 µs by ISO C
  // 7.21.6.1) is a sawtooth of period P = 10 rows, within E' = 1 µs of its mean (the mean only
  // moves the intercept). Each whole period adds the same Σ j·e_j to Σ(k − k̄)e_k, so the
  // least-squares slope is off by at most 12·P·E'/n² = 5e-15 s, 5e-8 of 100 ns. Only the ties
  // (7th decimal 5, one row in ten) round by the last binary digit of 10 + k/1e7, a
  // pseudo-random sign: standard deviation ½ µs·sqrt(12/(P·n³)) = 9e-15 s, 9e-8 relative.
  // 1e-6 lies ten of those above; the median of neighbour differences (0 or 1 µs) would miss
  // by 100 %.
  EXPECT_NEAR(r.info.sample_rate_hz, 10e6, 10e6 * 1e-6);
  EXPECT_NEAR(r.info.start_time_s, 10.0, 0.5e-6);  // "10" printed exactly; ½ digit allowed
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[1].unit, "V");
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::voltage);
  // The clock is perfect (synth times are frame / rate): printing explains every row.
  for (const auto& w : r.warnings) {
    EXPECT_EQ(w.find("off the uniform time grid"), std::string::npos) << w;
  }
}

}  // namespace
}  // namespace lopside
