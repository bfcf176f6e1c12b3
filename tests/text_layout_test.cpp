// The text reader against synthetic files, one per layout feature of issue 8 (headers,
// preambles, rows, roles and units, messages). Every file is built here from numbers whose
// truth is exact: times k·step printed in decimal, values multiples of 1/8 printed with three
// decimals (exact in binary and in decimal). Expected values come from the file as written,
// scaled by the SI prefixes (BIPM SI Brochure, 9th ed., table 7), unless a comment says
// otherwise. Names belong to the invented Brightwell Tubeworks bench.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <optional>
#include <sstream>
#include <string>
#include <utility>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "text_support.hpp"

namespace lopside {
namespace {

using test::Read;

Read read_all(const std::string& text, const ReaderOptions& options = {}) {
  return test::read_text(text, options, 1000, "layout.csv");
}

InputError error_of(const std::string& text, const ReaderOptions& options = {}) {
  return test::text_error(text, options, "layout.csv");
}

bool contains(const std::string& s, const std::string& part) {
  return s.find(part) != std::string::npos;
}

bool any_warning(const Read& r, const std::string& part) {
  for (const auto& w : r.warnings) {
    if (contains(w, part)) return true;
  }
  return false;
}

std::optional<std::string> meta(const CaptureInfo& info, const std::string& key) {
  for (const auto& [k, v] : info.metadata) {
    if (k == key) return v;
  }
  return std::nullopt;
}

using Pairs = std::vector<std::pair<std::string, std::string>>;

// Channel c of row k as printed: a multiple of 1/8 plus c, exact in binary and printed exactly
// with three decimals, so the printed number is the truth.
double printed_value(std::size_t c, std::size_t k) {
  return static_cast<double>((k * (c + 3)) % 11) * 0.125 - 0.5 + static_cast<double>(c);
}

std::string fmt(const char* format, double v) {
  char buf[64];
  std::snprintf(buf, sizeof buf, format, v);
  return buf;
}

// n data rows: `lead` cells first (e.g. one empty cell), then the time k·step (in the printed
// unit, "%.10g", so it is the decimal k·step exactly) unless step is 0, then `channels` values.
std::string rows(std::size_t n, std::size_t channels, double step, const std::string& delim = ",",
                 const std::string& eol = "\n", const std::vector<std::string>& lead = {}) {
  std::string out;
  for (std::size_t k = 0; k < n; ++k) {
    std::vector<std::string> cells = lead;
    if (step != 0) cells.push_back(fmt("%.10g", static_cast<double>(k) * step));
    for (std::size_t c = 0; c < channels; ++c) cells.push_back(fmt("%.3f", printed_value(c, k)));
    for (std::size_t i = 0; i < cells.size(); ++i) out += (i ? delim : "") + cells[i];
    out += eol;
  }
  return out;
}

// Every sample equals the printed value times its channel's factor (one multiplication of an
// exact decimal: EXPECT_DOUBLE_EQ's 4 ulp is ample).
void expect_values(const Read& r, const std::vector<double>& factors, std::size_t n) {
  ASSERT_EQ(r.columns.size(), factors.size());
  for (std::size_t c = 0; c < factors.size(); ++c) {
    ASSERT_EQ(r.columns[c].size(), n) << "channel " << c + 1;
    for (std::size_t k = 0; k < n; ++k) {
      EXPECT_DOUBLE_EQ(r.columns[c][k], printed_value(c, k) * factors[c])
          << "channel " << c + 1 << " row " << k;
      if (r.columns[c][k] != printed_value(c, k) * factors[c]) return;  // one report is enough
    }
  }
}

// A sample rate from a decimal interval: decimal-to-binary conversion and the least-squares fit
// over exact decimal times leave ~1e-13 relative; 1e-9 is the tolerance throughout.
constexpr double kRel = 1e-9;

// --- 1. headers ---------------------------------------------------------------------------

struct HeaderCase {
  const char* header;
  double time_unit_s;  // seconds per printed time unit
  std::vector<std::string> names;
  std::vector<std::string> units;
  std::vector<double> factors;  // SI value per printed unit
  bool name_may_carry_symbol = false;
};

class HeaderForms : public ::testing::TestWithParam<HeaderCase> {};

TEST_P(HeaderForms, NamesUnitsAndScaling) {
  const HeaderCase& h = GetParam();
  const std::size_t n = 12;
  const Read r = read_all(std::string(h.header) + "\n" + rows(n, h.names.size(), 0.5));
  ASSERT_EQ(r.info.channels.size(), h.names.size()) << h.header;
  for (std::size_t c = 0; c < h.names.size(); ++c) {
    if (h.name_may_carry_symbol) {
      EXPECT_EQ(r.info.channels[c].name.rfind(h.names[c], 0), 0u) << r.info.channels[c].name;
    } else {
      EXPECT_EQ(r.info.channels[c].name, h.names[c]);
    }
    EXPECT_EQ(r.info.channels[c].unit, h.units[c]);
    EXPECT_EQ(r.info.channels[c].unit_text, "");
    EXPECT_EQ(r.info.channels[c].index, c + 1);
  }
  // The time steps by 0.5 printed units.
  EXPECT_NEAR(r.info.sample_rate_hz, 1.0 / (0.5 * h.time_unit_s), kRel / (0.5 * h.time_unit_s));
  EXPECT_EQ(r.info.start_time_s, 0.0);
  ASSERT_EQ(r.info.frames.value_or(0), n);
  expect_values(r, h.factors, n);
}

INSTANTIATE_TEST_SUITE_P(
    TextLayout, HeaderForms,
    ::testing::Values(
        HeaderCase{
            "time (s),current (A),voltage (V)", 1, {"current", "voltage"}, {"A", "V"}, {1, 1}},
        HeaderCase{"time [ms],current [mA]", 1e-3, {"current"}, {"A"}, {1e-3}},
        HeaderCase{"time_s,current_A,voltage_V", 1, {"current", "voltage"}, {"A", "V"}, {1, 1}},
        HeaderCase{"t_ms,I_mA", 1e-3, {"I"}, {"A"}, {1e-3}},
        HeaderCase{"time_s,CH1_V", 1, {"CH1"}, {"V"}, {1}},
        HeaderCase{"time (s),CH1_Voltage(mV)", 1, {"CH1_Voltage"}, {"V"}, {1e-3}},
        // "quantity" symbol / unit: whether the symbol stays in the name is not specified.
        HeaderCase{"\"Time\" t / us,\"Current\" I / mA,\"Voltage\" U / kV",
                   1e-6,
                   {"Current", "Voltage"},
                   {"A", "V"},
                   {1e-3, 1e3},
                   true},
        HeaderCase{"time / ms,current / A", 1e-3, {"current"}, {"A"}, {1}},
        HeaderCase{"time (seconds),current (amps),voltage (VOLTS)",
                   1,
                   {"current", "voltage"},
                   {"A", "V"},
                   {1, 1}},
        HeaderCase{"Time (Second),I (Ampere),U (Volt)", 1, {"I", "U"}, {"A", "V"}, {1, 1}},
        HeaderCase{"t (s),I (milliampere)", 1, {"I"}, {"A"}, {1e-3}},
        HeaderCase{"T (SECONDS),i (AMPERES),u (volt)", 1, {"i", "u"}, {"A", "V"}, {1, 1}}));

struct UnitsRowCase {
  const char* names;
  const char* units;
  double time_unit_s;
  std::vector<std::string> channel_names;
  std::vector<std::string> channel_units;
  std::vector<double> factors;
};

class UnitsRow : public ::testing::TestWithParam<UnitsRowCase> {};

TEST_P(UnitsRow, UnitsUnderTheNames) {
  const UnitsRowCase& u = GetParam();
  const std::size_t n = 10;
  const Read r =
      read_all(std::string(u.names) + "\n" + u.units + "\n" + rows(n, u.channel_names.size(), 0.5));
  ASSERT_EQ(r.info.channels.size(), u.channel_names.size());
  for (std::size_t c = 0; c < u.channel_names.size(); ++c) {
    EXPECT_EQ(r.info.channels[c].name, u.channel_names[c]);
    EXPECT_EQ(r.info.channels[c].unit, u.channel_units[c]);
  }
  EXPECT_NEAR(r.info.sample_rate_hz, 1.0 / (0.5 * u.time_unit_s), kRel / (0.5 * u.time_unit_s));
  ASSERT_EQ(r.info.frames.value_or(0), n);
  expect_values(r, u.factors, n);
  EXPECT_TRUE(contains(r.info.detail, "units row")) << r.info.detail;
}

INSTANTIATE_TEST_SUITE_P(
    TextLayout, UnitsRow,
    ::testing::Values(
        UnitsRowCase{"time,current,voltage",
                     "second,Ampere,Volt",
                     1,
                     {"current", "voltage"},
                     {"A", "V"},
                     {1, 1}},
        UnitsRowCase{"Time,CH1,CH2", "second,Volt,Volt", 1, {"CH1", "CH2"}, {"V", "V"}, {1, 1}},
        UnitsRowCase{"t,CH1", "(ms),(V)", 1e-3, {"CH1"}, {"V"}, {1}},
        UnitsRowCase{
            "TIME,I,U", "SECONDS,milliamperes,VOLTS", 1, {"I", "U"}, {"A", "V"}, {1e-3, 1}}));

TEST(TextLayout, BlankLineBetweenHeaderAndData) {
  const Read r = read_all("time (ms),current (mA)\n\n" + rows(10, 1, 0.25));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "current");
  EXPECT_NEAR(r.info.sample_rate_hz, 4000.0, 4000.0 * kRel);  // 0.25 ms steps
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1e-3}, 10);
  EXPECT_TRUE(contains(r.info.detail, "header at line 1")) << r.info.detail;
  EXPECT_TRUE(contains(r.info.detail, "data from line 3")) << r.info.detail;
}

class TimeByName : public ::testing::TestWithParam<const char*> {};

TEST_P(TimeByName, NameWithoutUnitIsTheTimeInSeconds) {
  const Read r = read_all(std::string(GetParam()) + ",current (A)\n" + rows(10, 1, 0.001));
  ASSERT_EQ(r.info.channels.size(), 1u) << GetParam();
  EXPECT_EQ(r.info.channels[0].name, "current");
  EXPECT_NEAR(r.info.sample_rate_hz, 1000.0, 1000.0 * kRel);
  expect_values(r, {1}, 10);
  // No unit in the header: seconds are assumed and said (the reader's stated rule).
  EXPECT_TRUE(any_warning(r, "taken as time in seconds"));
}

INSTANTIATE_TEST_SUITE_P(TextLayout, TimeByName,
                         ::testing::Values("time", "t", "x-axis", "Zeit", "TIME"));

TEST(TextLayout, TimeFoundByItsUnitUnderAnotherName) {
  const Read r = read_all("Stamp (us),Tube current (mA)\n" + rows(10, 1, 2.5));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "Tube current");
  EXPECT_NEAR(r.info.sample_rate_hz, 4e5, 4e5 * kRel);  // 2.5 us steps
  expect_values(r, {1e-3}, 10);
}

// A column 0, 1, 2, … is the sample index, not a channel; `--current 1` is the first real one.
TEST(TextLayout, IndexColumnNamedIndexIsNotAChannel) {
  ReaderOptions o;
  o.current = "1";
  std::string text = "index,time (s),a (V),b (V)\n";
  for (std::size_t k = 0; k < 10; ++k) {
    text += std::to_string(k) + "," + fmt("%.10g", static_cast<double>(k) * 1e-6) + "," +
            fmt("%.3f", printed_value(0, k)) + "," + fmt("%.3f", printed_value(1, k)) + "\n";
  }
  const Read r = read_all(text, o);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "a");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[1].name, "b");
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  expect_values(r, {1, 1}, 10);
}

TEST(TextLayout, IndexColumnNoDotTimeBaseFromPreamble) {
  ReaderOptions o;
  o.current = "1";
  std::string text = "Sample Interval,4e-07\nNo.,I (mA),U (V)\n";
  for (std::size_t k = 0; k < 10; ++k) {
    text += std::to_string(k + 1) + "," + fmt("%.3f", printed_value(0, k)) + "," +
            fmt("%.3f", printed_value(1, k)) + "\n";
  }
  const Read r = read_all(text, o);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "I");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::voltage);
  EXPECT_NEAR(r.info.sample_rate_hz, 2.5e6, 2.5e6 * kRel);  // 1 / 4e-7 s
  expect_values(r, {1e-3, 1}, 10);
}

TEST(TextLayout, UnnamedIndexColumn) {
  std::string text = "Sample rate,2 MS/s\n,I (A),U (V)\n";
  for (std::size_t k = 0; k < 10; ++k) {
    text += std::to_string(k) + "," + fmt("%.3f", printed_value(0, k)) + "," +
            fmt("%.3f", printed_value(1, k)) + "\n";
  }
  const Read r = read_all(text);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "I");
  EXPECT_NEAR(r.info.sample_rate_hz, 2e6, 2e6 * kRel);
  expect_values(r, {1, 1}, 10);
}

TEST(TextLayout, HeaderlessIndexColumn) {
  ReaderOptions o;
  o.current = "1";
  std::string text = "Sample Interval,1e-06\n";
  for (std::size_t k = 0; k < 10; ++k) {
    text += std::to_string(k) + "," + fmt("%.3f", printed_value(0, k)) + "," +
            fmt("%.3f", printed_value(1, k)) + "\n";
  }
  const Read r = read_all(text, o);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  expect_values(r, {1, 1}, 10);
}

// Names over units, with a key/value pair beside them: "Start" and "Increment" over their values.
TEST(TextLayout, IndexWithStartAndIncrementInTheHeaderRows) {
  ReaderOptions o;
  o.current = "1";
  std::string text = "X,CH1,Start,Increment,\nSequence,Volt,-1e-05,2e-09,\n";
  for (std::size_t k = 0; k < 10; ++k)
    text += std::to_string(k) + "," + fmt("%.3f", printed_value(0, k)) + ",,\n";
  const Read r = read_all(text, o);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "CH1");
  EXPECT_EQ(r.info.channels[0].unit, "V");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_NEAR(r.info.sample_rate_hz, 5e8, 5e8 * kRel);  // 1 / 2e-9 s
  EXPECT_NEAR(r.info.start_time_s, -1e-5, 1e-5 * kRel);
  EXPECT_EQ(meta(r.info, "Start").value_or("?"), "-1e-05");
  EXPECT_EQ(meta(r.info, "Increment").value_or("?"), "2e-09");
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1}, 10);
}

TEST(TextLayout, BlankLinesAroundTheUnitsRow) {
  const Read r = read_all("time,current\n\nsecond,milliampere\n\n" + rows(10, 1, 0.5));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "current");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_NEAR(r.info.sample_rate_hz, 2.0, 2.0 * kRel);
  expect_values(r, {1e-3}, 10);
}

// --- 2. preambles -------------------------------------------------------------------------

TEST(TextLayout, PreambleSeparatorsPaddingAndOrder) {
  const std::string text =
      "Maker,Brightwell Tubeworks\n"
      "Model;BT-32K\n"
      "Serial\tBW-0042-17\n"
      "Probe : 100 mV/A\n"
      "Bench=QA-2\n"
      "  Record Length ,   12  ,,,\n"
      "# Operator: night shift\n"
      "Sample Interval,CH1:0.000002\n"
      "current (A),voltage (V)\n" +
      rows(12, 2, 0);
  const Read r = read_all(text);
  const Pairs expected{{"Maker", "Brightwell Tubeworks"},
                       {"Model", "BT-32K"},
                       {"Serial", "BW-0042-17"},
                       {"Probe", "100 mV/A"},
                       {"Bench", "QA-2"},
                       {"Record Length", "12"},
                       {"Operator", "night shift"},
                       {"Sample Interval", "CH1:0.000002"}};
  EXPECT_EQ(r.info.metadata, expected);
  EXPECT_NEAR(r.info.sample_rate_hz, 5e5, 5e5 * kRel);  // CH1:0.000002 s → 500 kHz
  ASSERT_EQ(r.info.channels.size(), 2u);
  expect_values(r, {1, 1}, 12);
}

struct WordingCase {
  const char* line;
  double rate_hz;  // 1 / interval, or the rate, as the line states it
};

class TimeBaseWording : public ::testing::TestWithParam<WordingCase> {};

TEST_P(TimeBaseWording, ReadFromThePreamble) {
  const WordingCase& w = GetParam();
  const Read r = read_all("Maker,Brightwell Tubeworks\n" + std::string(w.line) +
                          "\ncurrent (A),voltage (V)\n" + rows(10, 2, 0));
  EXPECT_NEAR(r.info.sample_rate_hz, w.rate_hz, w.rate_hz * kRel) << w.line;
  EXPECT_EQ(r.info.metadata.size(), 2u);
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1, 1}, 10);
}

INSTANTIATE_TEST_SUITE_P(TextLayout, TimeBaseWording,
                         ::testing::Values(WordingCase{"Sample Interval,2e-06", 5e5},
                                           WordingCase{"  Sample interval  ;  2.5e-6 s ;;", 4e5},
                                           WordingCase{"Sampling Period\t5e-07", 2e6},
                                           WordingCase{"Time interval: 20.00uS", 5e4},
                                           WordingCase{"Increment,2e-09", 5e8},
                                           WordingCase{"Resolution (horizontal) = 80000000(ps)",
                                                       12500},
                                           WordingCase{"Horizontal Resolution,1e-08", 1e8},
                                           WordingCase{"Timebase: 4e-7 s", 2.5e6},
                                           WordingCase{"Sample rate;1,25 MS/s", 1.25e6},
                                           WordingCase{"#Sample rate: 1.5873e+06Hz", 1.5873e6},
                                           WordingCase{"Sampling rate = 250 kHz", 2.5e5},
                                           WordingCase{"# Sample Interval = 4e-8", 2.5e7}));

TEST(TextLayout, VerticalUnitFromThePreambleForAllChannels) {
  const Read r = read_all("Sample Interval,1e-06\nVertical Units,A\nCH1\n" + rows(10, 1, 0));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "CH1");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  expect_values(r, {1}, 10);
}

TEST(TextLayout, VerticalUnitPerChannelFromThePreamble) {
  const Read r = read_all("Sample Interval,1e-06\nVUnit,V,A\nCH1,CH2\n" + rows(10, 2, 0));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "V");
  EXPECT_EQ(r.info.channels[1].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::voltage);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
  expect_values(r, {1, 1}, 10);
}

TEST(TextLayout, PreambleUnitOnlyWhereTheHeaderHasNone) {
  const Read r = read_all("Sample Interval,1e-06\nVertical Units,V\nCH1,I (mA)\n" + rows(10, 2, 0));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "V");
  EXPECT_EQ(r.info.channels[1].unit, "A");  // its header says mA: the preamble does not apply
  expect_values(r, {1, 1e-3}, 10);
}

TEST(TextLayout, CommentLinesHoldKeyValuesAndLatin1BecomesUtf8) {
  // \xFC is ü and \xB0 is ° in ISO 8859-1; their UTF-8 forms are C3 BC and C2 B0 (RFC 3629).
  const std::string text =
      "# Operator: M\xFCller\n"
      "# Serial: BW-0042-17\n"
      "Ambient,23 \xB0"
      "C\n"
      "Sample Interval,1e-06\n"
      "current (A)\n" +
      rows(10, 1, 0);
  const Read r = read_all(text);
  const Pairs expected{{"Operator", "M\xC3\xBCller"},
                       {"Serial", "BW-0042-17"},
                       {"Ambient",
                        "23 \xC2\xB0"
                        "C"},
                       {"Sample Interval", "1e-06"}};
  EXPECT_EQ(r.info.metadata, expected);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  expect_values(r, {1}, 10);
}

std::string long_preamble(std::size_t lines) {
  std::string out;
  for (std::size_t i = 1; i <= lines; ++i)
    out += "Setting " + std::to_string(i) + "," + std::to_string(i * 7) + "\n";
  return out;
}

TEST(TextLayout, LongPreambleStillReads) {
  const std::string text = "Sample Interval,1e-06\nSerial,BW-0042-17\n" + long_preamble(20000) +
                           "current (A),voltage (V)\n" + rows(10, 2, 0);
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  EXPECT_EQ(meta(r.info, "Serial").value_or("?"), "BW-0042-17");
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "current");
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1, 1}, 10);
}

// A time base and a serial number stated at the end of a long preamble are still found.
TEST(TextLayout, LongPreambleWithTheTimeBaseAtItsEnd) {
  const std::string text = long_preamble(20000) + "Serial,BW-0042-17\nSample Interval,1e-06\n" +
                           "current (A),voltage (V)\n" + rows(10, 2, 0);
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  EXPECT_EQ(meta(r.info, "Serial").value_or("?"), "BW-0042-17");
  EXPECT_EQ(meta(r.info, "Setting 20000").value_or("?"), "140000");
  expect_values(r, {1, 1}, 10);
}

// Metadata in file order: the preamble line comes before the key/values of the header rows.
TEST(TextLayout, MetadataOrderWithHeaderKeyValues) {
  std::string text =
      "Maker,Brightwell Tubeworks\nX,CH1,Start,Increment,\nSequence,Volt,-1e-05,2e-09,\n";
  for (std::size_t k = 0; k < 10; ++k)
    text += std::to_string(k) + "," + fmt("%.3f", printed_value(0, k)) + ",,\n";
  const Read r = read_all(text);
  const Pairs expected{
      {"Maker", "Brightwell Tubeworks"}, {"Start", "-1e-05"}, {"Increment", "2e-09"}};
  EXPECT_EQ(r.info.metadata, expected);
}

// --- 3. rows ------------------------------------------------------------------------------

// Key/values in the first two cells of the first rows, time and value in the last two of every
// row; later rows begin with empty cells.
TEST(TextLayout, MetadataMarginBesideTheData) {
  const char* margin[][2] = {
      {"Record Length", "12"}, {"Sample Interval", "1e-06"}, {"Serial", "BW-0042-17"}};
  std::string text;
  for (std::size_t k = 0; k < 12; ++k) {
    const std::string key = k < 3 ? margin[k][0] : "";
    const std::string value = k < 3 ? margin[k][1] : "";
    text += key + "," + value + ",," + fmt("%.6f", static_cast<double>(k) * 1e-6) + "," +
            fmt("%.3f", printed_value(0, k)) + "\n";
  }
  const Read r = read_all(text);
  const Pairs expected{
      {"Record Length", "12"}, {"Sample Interval", "1e-06"}, {"Serial", "BW-0042-17"}};
  EXPECT_EQ(r.info.metadata, expected);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  EXPECT_EQ(r.info.start_time_s, 0.0);
  ASSERT_EQ(r.info.frames.value_or(0), 12u);  // the margin rows are data too
  expect_values(r, {1}, 12);
}

TEST(TextLayout, EmptyFirstCellOnEveryRowAndNoTimeColumn) {
  // Every row is ",value,value": the first column is empty throughout.
  const Read e = read_all("Sample Interval,5e-07\n,current (A),voltage (V)\n" +
                          rows(10, 2, 0, ",", "\n", {""}));
  ASSERT_EQ(e.info.channels.size(), 2u);
  EXPECT_EQ(e.info.channels[0].name, "current");
  EXPECT_EQ(e.info.channels[1].name, "voltage");
  EXPECT_NEAR(e.info.sample_rate_hz, 2e6, 2e6 * kRel);
  ASSERT_EQ(e.info.frames.value_or(0), 10u);
  expect_values(e, {1, 1}, 10);
}

// Spellings of numbers in cells; each expected value is what strtod makes of the digits.
TEST(TextLayout, NumberSpellings) {
  const std::vector<std::pair<std::string, double>> cells{{"+1.5", 1.5},
                                                          {"-00.0123", -0.0123},
                                                          {"   2.5   ", 2.5},
                                                          {"\"3.25\"", 3.25},
                                                          {"\"-1,021.11\"", -1021.11},
                                                          {"1.5e-100", 1.5e-100},
                                                          {"0.", 0.0},
                                                          {"-7", -7.0},
                                                          {"+2.5E+02", 250.0},
                                                          {" \"-0.125\" ", -0.125}};
  std::string text = "time (ms),current (A)\n";
  for (std::size_t k = 0; k < cells.size(); ++k)
    text += std::to_string(k) + "," + cells[k].first + "\n";
  const Read r = read_all(text);
  ASSERT_EQ(r.info.channels.size(), 1u);
  ASSERT_EQ(r.columns[0].size(), cells.size());
  for (std::size_t k = 0; k < cells.size(); ++k)
    EXPECT_EQ(r.columns[0][k], cells[k].second) << cells[k].first;
  EXPECT_NEAR(r.info.sample_rate_hz, 1000.0, 1000.0 * kRel);
}

class LineEnds : public ::testing::TestWithParam<const char*> {};

TEST_P(LineEnds, SameReadWhateverTheLineEnd) {
  const std::string eol = GetParam();
  const std::string text =
      "Serial,BW-0042-17" + eol + "time (ms),current (mA)" + eol + rows(10, 1, 0.5, ",", eol);
  const Read r = read_all(text);
  EXPECT_EQ(meta(r.info, "Serial").value_or("?"), "BW-0042-17");
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "current");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_NEAR(r.info.sample_rate_hz, 2000.0, 2000.0 * kRel);
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1e-3}, 10);
  EXPECT_FALSE(any_warning(r, "cut short"));
}

INSTANTIATE_TEST_SUITE_P(TextLayout, LineEnds, ::testing::Values("\n", "\r\n", "\r", "\r\r\n"));

TEST(TextLayout, ByteOrderMarkBeforeAPreambleOrAHeader) {
  // The time column is named without a unit: found only if the mark is not part of its name.
  const Read h = read_all("\xEF\xBB\xBFtime,current (A)\n" + rows(10, 1, 0.001));
  ASSERT_EQ(h.info.channels.size(), 1u);
  EXPECT_NEAR(h.info.sample_rate_hz, 1000.0, 1000.0 * kRel);
  expect_values(h, {1}, 10);
  const Read p =
      read_all("\xEF\xBB\xBFSerial,BW-0042-17\ntime (s),current (A)\n" + rows(10, 1, 0.001));
  ASSERT_FALSE(p.info.metadata.empty());
  EXPECT_EQ(p.info.metadata[0].first, "Serial");
  expect_values(p, {1}, 10);
}

// 100 kS/s printed to 0.01 s: each printed time covers 1000 rows. The reader's promise
// (snap_coarse_interval in text_reader.cpp): a fit through the printed value's crossings,
// snapped to a preferred interval (1, 2, 2.5, 4, 5, 8 × 10^n) when one lies within ±1.5 rows
// over the span, which 1e-5 s does here; so the rate is exact up to rounding.
TEST(TextLayout, CoarselyPrintedTimeStillGivesTheInterval) {
  std::string text = "time (s),current (A)\n";
  for (std::size_t k = 0; k < 2000; ++k)
    text +=
        fmt("%.2f", static_cast<double>(k) * 1e-5) + "," + fmt("%.3f", printed_value(0, k)) + "\n";
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e5, 1e5 * kRel);
  EXPECT_NEAR(r.info.start_time_s, 0.0, 0.005);  // half the printed resolution
  ASSERT_EQ(r.info.frames.value_or(0), 2000u);
  expect_values(r, {1}, 2000);
}

TEST(TextLayout, CutShortLastLineIsLeftOutAndSaid) {
  // Ten rows; the eleventh is cut inside its number ("881." of "881.25").
  std::string text = "time (ms),current (mA)\n" + rows(10, 1, 1);
  text += "10,881.";
  const Read r = read_all(text);
  ASSERT_EQ(r.info.frames.value_or(0), 10u);
  expect_values(r, {1e-3}, 10);
  EXPECT_TRUE(any_warning(r, "line 12")) << (r.warnings.empty() ? "" : r.warnings[0]);
  EXPECT_TRUE(any_warning(r, "cut short"));
}

TEST(TextLayout, CompleteLastLineWithoutLineEndIsKept) {
  std::string text = "time (ms),current (mA)\n" + rows(11, 1, 1);
  text.pop_back();  // the last row, "10,0.250", loses only its line end
  const Read r = read_all(text);
  ASSERT_EQ(r.info.frames.value_or(0), 11u);
  expect_values(r, {1e-3}, 11);
  EXPECT_FALSE(any_warning(r, "cut short"));
}

// --- 4. roles and units ---------------------------------------------------------------------

TEST(TextLayout, OneChannelIsTheCurrent) {
  const Read r = read_all("time (s),probe (V)\n" + rows(10, 1, 1e-6));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[0].unit, "V");  // the reader does not relabel it
}

TEST(TextLayout, UnitsGiveTheRoles) {
  const Read r = read_all("time (s),a (V),b (A)\n" + rows(10, 2, 1e-6));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::voltage);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
}

TEST(TextLayout, TwoChannelsOfTheSameName) {
  const std::string text = "time (s),CH1 (V),CH1 (V)\n" + rows(10, 2, 1e-6);
  ReaderOptions by_name;
  by_name.current = "CH1";
  const InputError e = error_of(text, by_name);
  EXPECT_TRUE(contains(e.what(), "ambiguous")) << e.what();
  ReaderOptions by_number;
  by_number.current = "2";
  const Read r = read_all(text, by_number);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
  EXPECT_NE(r.info.channels[0].role, ChannelRole::current);
}

TEST(TextLayout, GainOnAVoltsChannelChosenAsCurrentGivesAmperes) {
  // A 100 mV/A probe recorded in volts: --current 2 --gain 2=10.
  ReaderOptions o;
  o.current = "2";
  o.gains["2"] = 10;
  const Read r = read_all("time (s),U (V),probe (V)\n" + rows(10, 2, 1e-6), o);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[1].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::voltage);
  expect_values(r, {1, 10}, 10);
}

// --- 5. messages ----------------------------------------------------------------------------

TEST(TextLayout, NoTimeBaseNamesThePreambleAndTheWordings) {
  const std::string text =
      "Maker,Brightwell Tubeworks\nModel,BT-32K\nSerial,BW-0042-17\ncurrent (A),voltage (V)\n" +
      rows(10, 2, 0);
  const InputError e = error_of(text);
  const std::string m = e.what();
  EXPECT_EQ(e.where().line.value_or(0), 4u) << m;  // the header line
  for (const char* key : {"'Maker'", "'Model'", "'Serial'"}) EXPECT_TRUE(contains(m, key)) << m;
  for (const char* wording : {"Sample interval", "Sampling period", "Time interval", "Increment",
                              "Resolution", "Timebase", "Sample rate", "Sampling rate", "--rate"})
    EXPECT_TRUE(contains(m, wording)) << wording << " in: " << m;
}

struct LayoutCase {
  const char* name;
  std::string text;
  std::uint64_t first_numeric_line;
};

class NumbersInAnUnknownLayout : public ::testing::TestWithParam<LayoutCase> {};

TEST_P(NumbersInAnUnknownLayout, AreNeverCalledNoRowsOfNumbers) {
  const InputError e = error_of(GetParam().text);
  const std::string m = e.what();
  EXPECT_FALSE(contains(m, "no rows of numbers")) << m;
  EXPECT_FALSE(contains(m, "no data rows")) << m;
  EXPECT_EQ(e.where().line.value_or(0), GetParam().first_numeric_line) << m;
}

std::string repeat(const std::string& s, int n) {
  std::string out;
  for (int i = 0; i < n; ++i) out += s;
  return out;
}

std::string case_name(const ::testing::TestParamInfo<LayoutCase>& i) {
  return i.param.name;
}

// Each file ends with a line of words, so no row is the last of the file (see
// UnevenRowsUpToTheEndAreNotPreamble).
const std::string kEnd = "end of record\n";

INSTANTIATE_TEST_SUITE_P(
    TextLayout, NumbersInAnUnknownLayout,
    ::testing::Values(
        LayoutCase{"comma_3_and_2_cells", repeat("1.5,2.5,3.5\n4.5,5.5\n", 6) + kEnd, 1},
        LayoutCase{"semicolon_decimal_comma_3_and_2_cells",
                   repeat("1,5;2,5;3,5\n4,5;5,5\n", 6) + kEnd, 1},
        LayoutCase{"tab_3_and_2_cells", repeat("1.5\t2.5\t3.5\n4.5\t5.5\n", 6) + kEnd, 1},
        LayoutCase{"pipe_delimiter", "time (s)|current (A)\n" + rows(12, 1, 0.001, "|") + kEnd, 2}),
    case_name);

// Rows of uneven shape up to the end of the file: the last row alone must not become "the
// data" with every numeric row above it taken as preamble.
TEST(TextLayout, UnevenRowsUpToTheEndAreNotPreamble) {
  const std::string text = repeat("1.5,2.5,3.5\n4.5,5.5\n", 6);
  const InputError e = error_of(text);
  EXPECT_EQ(e.where().line.value_or(0), 1u) << e.what();
  EXPECT_TRUE(contains(e.what(), "layout")) << e.what();
  ReaderOptions o;
  o.rate_hz = 1000;  // with a rate, nothing else stops a one-row read of a twelve-row file
  const InputError with_rate = error_of(text, o);
  EXPECT_EQ(with_rate.where().line.value_or(0), 1u) << with_rate.what();
}

// --- features beyond the list that real recorders need ---------------------------

// A recorder's clock column beside a date column: the clock is the time (1 ms steps, the
// printed value exact), the date is a margin, and a time base across midnight stays uniform
// when the date is part of the cell (ISO 8601 date and time).
TEST(TextLayout, ClockColumnsGiveTheTime) {
  std::string text = "Date,Time,current (A)\n";
  for (std::size_t k = 0; k < 50; ++k) {
    text += "2026-11-30,12:30:" + fmt("%06.3f", 10.0 + 0.001 * static_cast<double>(k)) + "," +
            fmt("%.3f", printed_value(0, k)) + "\n";
  }
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1000.0, 1000.0 * kRel);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  expect_values(r, {1}, 50);

  std::string iso = "timestamp;I (mA)\n";
  for (std::size_t k = 0; k < 40; ++k) {
    const double s = 86399.99 + 0.0005 * static_cast<double>(k);  // crosses midnight
    const int day = s < 86400 ? 30 : 1, month = s < 86400 ? 11 : 12;
    const double d = s < 86400 ? s : s - 86400;
    const int h = static_cast<int>(d / 3600), m = static_cast<int>((d - h * 3600) / 60);
    char cell[64];
    std::snprintf(cell, sizeof cell, "2026-%02d-%02dT%02d:%02d:%07.4f", month, day, h, m,
                  d - h * 3600 - m * 60);
    iso += std::string(cell) + ";" + fmt("%.3f", printed_value(0, k)) + "\n";
  }
  for (char& c : iso) {
    if (c == '.') c = ',';  // the decimal comma that goes with ';'
  }
  const Read z = read_all(iso);
  // Seconds since 1970 are about 1.8e9 s, where a double resolves 2.4e-7 s (IEEE 754 binary64:
  // 2^-52 · 2^30): each time is off by up to 1.2e-7 s, so the slope over a 0.0195 s span may
  // be off by about 2 · 1.2e-7 / 0.0195 = 1.2e-5 relative; 2e-5 allows that.
  EXPECT_NEAR(z.info.sample_rate_hz, 2000.0, 2000.0 * 2e-5);
  expect_values(z, {1e-3}, 40);
}

// A units row alone ("Second,Volt" with no names above it, after a keyed preamble that names
// the source): units applied, the channel named from the preamble.
TEST(TextLayout, UnitsRowWithoutNames) {
  const std::string text =
      "Record Length,Analog:8,\nSample Interval,Analog:1.0E-06,\n"
      "Source,CH3,\nSecond,Volt,\n" +
      rows(8, 1, 1e-6, ",", ",\n");
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "CH3");
  EXPECT_EQ(r.info.channels[0].unit, "V");
  expect_values(r, {1}, 8);
}

// Headerless channels named by a "TraceName" list and a per-channel "VUnit" list, data rows
// with an empty first cell, the interval from "HResolution" and the start from "HOffset".
TEST(TextLayout, TraceNamesAndHorizontalKeys) {
  const std::string text =
      "Model,BT-REC8\nTraceName,,I1,U1\nVUnit,,A,V\nHResolution,2.0E-05\n"
      "HOffset,-1.0E-03\nHUnit,s\n\n" +
      rows(12, 2, 0, ",", "\n", {""});
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 5e4, 5e4 * kRel);
  EXPECT_NEAR(r.info.start_time_s, -1e-3, 1e-15);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "I1");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[1].name, "U1");
  EXPECT_EQ(r.info.channels[1].unit, "V");
  expect_values(r, {1, 1}, 12);
}

// A headerless first column that rises evenly is the time only when it agrees with a stated
// interval: a ramp signal next to "Sample Interval,1e-06" stays a channel.
TEST(TextLayout, RisingColumnAgainstAStatedInterval) {
  std::string text = "Sample Interval,1e-06\n";
  for (std::size_t k = 0; k < 20; ++k)
    text +=
        fmt("%.3f", 0.5 * static_cast<double>(k)) + "," + fmt("%.3f", printed_value(0, k)) + "\n";
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  EXPECT_EQ(r.info.channels.size(), 2u);  // the ramp is data
}

// A names row with a name over a column every row leaves empty ("Comment"): ignored and said;
// a unit over a missing column is still an error (TextReaderErrors.HeaderCellCountMismatch…).
TEST(TextLayout, NamedColumnWithoutDataIsIgnored) {
  const std::string text = "X_Value\tVoltage (V)\tComment\n" + rows(10, 1, 1e-4, "\t", "\t\n");
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e4, 1e4 * kRel);
  ASSERT_EQ(r.info.channels.size(), 1u);
  bool said = false;
  for (const auto& w : r.warnings) said = said || contains(w, "'Comment'");
  EXPECT_TRUE(said);
}

// The sample index is checked on every row, past the look-ahead too: a jump is a gap.
TEST(TextLayout, IndexJumpIsAGap) {
  std::string text = "Sample Interval,1e-06\nindex,current (A)\n";
  for (std::size_t k = 0; k < 70000; ++k)
    text += std::to_string(k < 69000 ? k : k + 1) + "," + fmt("%.3f", printed_value(0, k)) + "\n";
  const InputError e = error_of(text);
  EXPECT_EQ(e.where().line.value_or(0), 3u + 69000u) << e.what();
  EXPECT_TRUE(contains(e.what(), "missing")) << e.what();
}

// "∞", as some scope software writes a sample beyond its range, is not a finite number.
TEST(TextLayout, InfinitySignIsNotAFiniteNumber) {
  const std::string text = "time (s),current (A)\n0,0.5\n1e-6,0.25\n2e-6,\xE2\x88\x9E\n3e-6,0.5\n";
  const InputError e = error_of(text);
  EXPECT_EQ(e.where().line.value_or(0), 4u) << e.what();
  EXPECT_TRUE(contains(e.what(), "not a finite number")) << e.what();
}

// Blank-separated columns whose names hold blanks: a bracketed unit joins the word before it,
// else two or more blanks separate the names (fixed-width exports).
TEST(TextLayout, BlankSeparatedNamesWithBlanks) {
  const Read r = read_all("Time (ms)  Tube current (mA)  Voltage (V)\n" + rows(6, 2, 0.001, " "));
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "Tube current");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  expect_values(r, {1e-3, 1}, 6);
  const Read w = read_all("Time    Tube current    Lamp voltage\n" + rows(6, 2, 1e-6, " "));
  ASSERT_EQ(w.info.channels.size(), 2u);
  EXPECT_EQ(w.info.channels[1].name, "Lamp voltage");
}

// --- cases found by an adversarial review of the reader ---------------------------------

// A key with one value per channel ("Sample Interval,1e-6,1e-6", tab too) states the interval.
TEST(TextLayout, KeyWithOneValuePerChannel) {
  for (const std::string sep : {",", "\t", ";"}) {
    const std::string text =
        "Sample Interval" + sep + "1e-6" + sep + "1e-6\n\nCH1,CH2\n" + rows(8, 2, 0);
    const Read r = read_all(text);
    EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel) << "separator '" << sep << "'";
    EXPECT_EQ(r.info.frames.value_or(0), 8u);
  }
}

// Per-channel key rows above the data share its shape (empty margin cell, numbers under the
// channels); a blank line and the key alone in the margin tell them from data.
TEST(TextLayout, PerChannelKeyRowsAreNotData) {
  const std::string text =
      "Model,BT-REC8\nTraceName,,I1,U1\nVUnit,,A,V\n"
      "HResolution,,1.0E-06,1.0E-06\nHOffset,,-1.5E-04,-1.5E-04\n\n" +
      rows(10, 2, 0, ",", "\n", {"", ""});
  const Read r = read_all(text);
  EXPECT_EQ(r.info.frames.value_or(0), 10u);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  EXPECT_NEAR(r.info.start_time_s, -1.5e-4, 1e-15);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[1].unit, "V");
  expect_values(r, {1, 1}, 10);
}

// A logger's clock column beside its relative-time column is neither the time nor a channel.
TEST(TextLayout, ClockBesideARelativeTimeColumn) {
  std::string text = "No.,Date,Time,Relative Time(s),CH1(V),CH2(A)\n";
  for (std::size_t k = 0; k < 30; ++k) {
    text += std::to_string(k + 1) +
            ",2026/11/30,10:00:" + fmt("%06.3f", 0.01 * static_cast<double>(k)) + "," +
            fmt("%.2f", 0.01 * static_cast<double>(k)) + "," + fmt("%.3f", printed_value(0, k)) +
            "," + fmt("%.3f", printed_value(1, k)) + "\n";
  }
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 100.0, 100.0 * 1e-9);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "V");
  EXPECT_EQ(r.info.channels[1].unit, "A");
  expect_values(r, {1, 1}, 30);
}

// A clock with a decimal comma, in a ';' file, after a day-first date column.
TEST(TextLayout, ClockWithDecimalComma) {
  std::string text = "Datum;Uhrzeit;Spannung [V];Strom [A]\n";
  for (std::size_t k = 0; k < 30; ++k) {
    std::string row = "30.11.2026;10:00:" + fmt("%06.3f", 0.01 * static_cast<double>(k)) + ";" +
                      fmt("%.3f", printed_value(0, k)) + ";" + fmt("%.3f", printed_value(1, k));
    for (std::size_t i = 10; i < row.size(); ++i) {
      if (row[i] == '.') row[i] = ',';
    }
    text += row + "\n";
  }
  const Read r = read_all(text);
  // Times since midnight near 36 000 s carry the printed 1 ms exactly to ~1e-12 s.
  EXPECT_NEAR(r.info.sample_rate_hz, 100.0, 100.0 * 1e-9);
  ASSERT_EQ(r.info.channels.size(), 2u);
  expect_values(r, {1, 1}, 30);
}

// Units stated per channel by numbered keys, and names that are unit words.
TEST(TextLayout, NumberedUnitKeysAndUnitWordNames) {
  const Read r =
      read_all("CH1 Units,A\nCH2 Units,V\nSample Interval,1e-6\n\nCH1,CH2\n" + rows(6, 2, 0));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[1].unit, "V");
  const Read w = read_all("Time (msec),Volts,Amps\n" + rows(6, 2, 0.01));
  EXPECT_NEAR(w.info.sample_rate_hz, 1e5, 1e5 * kRel);  // 0.01 msec
  ASSERT_EQ(w.info.channels.size(), 2u);
  EXPECT_EQ(w.info.channels[0].unit, "V");
  EXPECT_EQ(w.info.channels[1].unit, "A");
}

// A Latin-1 micro sign (0xB5) in the time column's unit means micro.
TEST(TextLayout, Latin1MicroInTheHeader) {
  const Read r = read_all("Time (\xB5s),CH1 (V)\r\n" + rows(6, 1, 0.5, ",", "\r\n"));
  EXPECT_NEAR(r.info.sample_rate_hz, 2e6, 2e6 * kRel);
  ASSERT_EQ(r.info.channels.size(), 1u);
}

// Key/value lines in a single-column file are never its header.
TEST(TextLayout, KeyValueAboveOneColumnIsNotAName) {
  const Read r = read_all("Sample Interval,1e-6\nVertical Units,V\nPoints,6\n\n" + rows(6, 1, 0));
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "ch1");
  EXPECT_EQ(r.info.channels[0].unit, "V");
  bool kept = false;
  for (const auto& [k, v] : r.info.metadata) kept = kept || (k == "Points" && v == "6");
  EXPECT_TRUE(kept);
}

// Text after the data is a footer (left out, said, its key/values kept); text between rows of
// data is an error at its line.
TEST(TextLayout, TextAfterTheDataIsAFooter) {
  const Read r =
      read_all("time (s),current (A)\n" + rows(10, 1, 1e-6) + "\nMean,0.001\nEnd of data\n");
  EXPECT_EQ(r.info.frames.value_or(0), 10u);
  bool said = false;
  for (const auto& w : r.warnings) said = said || contains(w, "after the data");
  EXPECT_TRUE(said);
  const InputError e =
      error_of("time (s),current (A)\n" + rows(10, 1, 1e-6) + "Trigger here\n" + rows(3, 1, 1e-6));
  EXPECT_EQ(e.where().line.value_or(0), 12u) << e.what();
}

// 9.9E37, the marker instruments write for a sample beyond their range, is not a sample.
TEST(TextLayout, OverflowMarkerIsNotASample) {
  const InputError e = error_of("time (s),current (A)\n0,0.5\n1e-6,9.9E+37\n2e-6,0.5\n");
  EXPECT_EQ(e.where().line.value_or(0), 3u);
  EXPECT_TRUE(contains(e.what(), "overflow marker")) << e.what();
}

// --- cases found by the second review -------------------------------------------------------

// A number alone on a preamble line is not the data's first row.
TEST(TextLayout, LoneNumberInThePreamble) {
  const Read r = read_all("Model,BT-REC8\n2000\ntime (s),current (A)\n" + rows(12, 1, 1e-4));
  EXPECT_EQ(r.info.frames.value_or(0), 12u);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e4, 1e4 * kRel);
  expect_values(r, {1}, 12);
}

// "Record Length" and its value on two lines above one column: metadata, not a name and a
// sample.
TEST(TextLayout, KeyAndValueOnTwoLines) {
  const Read r =
      read_all("Sample Interval,1e-4\nVertical Units,A\nRecord Length\n12\n" + rows(12, 1, 0));
  EXPECT_EQ(r.info.frames.value_or(0), 12u);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  bool kept = false;
  for (const auto& [k, v] : r.info.metadata) kept = kept || (k == "Record Length" && v == "12");
  EXPECT_TRUE(kept);
  expect_values(r, {1}, 12);
}

// Tab-separated with a decimal comma whose first rows print no mark ("0\t0"): the rows below
// settle the mark, even when the first comma comes after the look-ahead.
TEST(TextLayout, DecimalCommaSettledByLaterRows) {
  std::string text = "Zeit (s)\tStrom (A)\n0\t0\n";
  for (std::size_t k = 1; k < 12; ++k) {
    std::string row =
        fmt("%.4f", 1e-4 * static_cast<double>(k)) + "\t" + fmt("%.3f", printed_value(0, k));
    for (char& c : row) {
      if (c == '.') c = ',';
    }
    text += row + "\n";
  }
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e4, 1e4 * 1e-9);
  EXPECT_DOUBLE_EQ(r.columns[0][5], printed_value(0, 5));
  std::string late = "t (us) I (A)\n";
  for (std::size_t k = 0; k < 70000; ++k) late += std::to_string(k) + " 0\n";
  late += "70000 0,125\n70001 0,25\n";
  const Read l = read_all(late);
  ASSERT_EQ(l.columns[0].size(), 70002u);
  EXPECT_DOUBLE_EQ(l.columns[0][70001], 0.25);
}

// A units row of units lopside does not convert (W, Ω, dB, %, °C, a.u.): kept as written.
TEST(TextLayout, UnitsRowOfOtherUnits) {
  const Read r = read_all(
      "Time,I,P,R,G,D,T\ns,A,W,\xCE\xA9,dB,%,\xC2\xB0"
      "C\n" +
      rows(6, 6, 1e-6));
  EXPECT_NEAR(r.info.sample_rate_hz, 1e6, 1e6 * kRel);
  ASSERT_EQ(r.info.channels.size(), 6u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  const std::vector<std::string> as_written{"W", "\xCE\xA9", "dB", "%",
                                            "\xC2\xB0"
                                            "C"};
  for (std::size_t c = 0; c < as_written.size(); ++c)
    EXPECT_EQ(r.info.channels[c + 1].unit_text, as_written[c]) << c;
  const Read iso = read_all("Time / s,I / A,P / W,S / a.u.\n" + rows(6, 3, 1e-6));
  ASSERT_EQ(iso.info.channels.size(), 3u);
  EXPECT_EQ(iso.info.channels[1].name, "P");
  EXPECT_EQ(iso.info.channels[1].unit_text, "W");
  EXPECT_EQ(iso.info.channels[2].unit_text, "a.u.");
}

// A units row ending in an empty cell, and typographic quotes (UTF-8 and Windows-1252).
TEST(TextLayout, EmptyLastUnitAndTypographicQuotes) {
  const Read r = read_all("Time,Current,Voltage\ns,A,\n" + rows(6, 2, 1e-6));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].name, "Current");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[1].name, "Voltage");
  EXPECT_EQ(r.info.channels[1].unit, "");
  for (const std::string& open_close :
       {std::string("\xE2\x80\x9C\xE2\x80\x9D"), std::string("\x93\x94")}) {
    const std::string o = open_close.substr(0, open_close.size() / 2);
    const std::string c = open_close.substr(open_close.size() / 2);
    const Read q =
        read_all(o + "Time (s)" + c + "," + o + "Current (A)" + c + "\n" + rows(6, 1, 1e-6));
    ASSERT_EQ(q.info.channels.size(), 1u);
    EXPECT_EQ(q.info.channels[0].name, "Current");
    EXPECT_EQ(q.info.channels[0].unit, "A");
  }
}

// A quiet lead-in of zeros under a stated unit is no sign of digitiser codes.
TEST(TextLayout, LeadingZerosAreNotCodes) {
  std::string text = "Sample Interval,1e-4\nVertical Units,A\n";
  for (std::size_t k = 0; k < 70000; ++k) text += "0\n";  // past the 65 536-row look-ahead
  text += rows(10, 1, 0);
  const Read r = read_all(text);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
}

// A fully quoted preamble ("Unit","A","V"): each list cell unquoted.
TEST(TextLayout, QuotedPreambleLists) {
  const Read r = read_all(
      "\"Model\",\"BT-REC8\"\n\"Unit\",\"A\",\"V\"\n\"Sample Rate\",\"1MS/s\"\n"
      "\"Time\",\"I1\",\"U1\"\n" +
      rows(6, 2, 1e-6));
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[1].unit, "V");
  bool listed = false;
  for (const auto& [k, v] : r.info.metadata) listed = listed || (k == "Unit" && v == "A,V");
  EXPECT_TRUE(listed);
}

}  // namespace
}  // namespace lopside
