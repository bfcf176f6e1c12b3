// The delimited-text reader, fed strings (ninja's ParseTest habit): dialects, preambles,
// headers with units, the time column, and every bad input with its line number.
#include <gtest/gtest.h>

#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "text_support.hpp"

namespace lopside {
namespace {

using test::Read;

Read read_all(const std::string& text, const ReaderOptions& options = {},
              std::size_t block_frames = 4096) {
  return test::read_text(text, options, block_frames, "capture.csv");
}

// Runs the reader and returns the InputError it must raise.
InputError error_of(const std::string& text, const ReaderOptions& options = {}) {
  return test::text_error(text, options, "capture.csv");
}

TEST(TextReader, CommaWithTimeColumnAndUnitsInBrackets) {
  const Read r = read_all("time [us],current (mA),U [kV]\n0,1.5,2\n0.1,2.5,-3\n0.2,-1,1\n");
  EXPECT_EQ(r.info.format, "csv");
  ASSERT_EQ(r.info.channels.size(), 2u);  // the time column is not a channel
  EXPECT_EQ(r.info.channels[0].name, "current");
  EXPECT_EQ(r.info.channels[0].unit, "A");
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::current);
  EXPECT_EQ(r.info.channels[1].unit, "V");
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::voltage);
  // 0.1 us steps: 10 MHz. The rows are exact decimal, so only rounding (1e-15 relative) remains.
  EXPECT_NEAR(r.info.sample_rate_hz, 1e7, 1e7 * 1e-12);
  ASSERT_EQ(r.info.frames.value(), 3u);
  // SI scaling: 1.5 mA = 0.0015 A, -3 kV = -3000 V (BIPM SI Brochure prefixes).
  EXPECT_DOUBLE_EQ(r.columns[0][0], 0.0015);
  EXPECT_DOUBLE_EQ(r.columns[1][1], -3000.0);
}

TEST(TextReader, SemicolonMeansDecimalCommaAndCrlf) {
  const Read r =
      read_all("Zeit (ms);Strom (uA);U (mV)\r\n0,0;1,5;-2,25\r\n0,5;2,5;7\r\n1,0;-3,75;0\r\n");
  EXPECT_EQ(r.info.format, "csv-semicolon");
  EXPECT_NEAR(r.info.sample_rate_hz, 2000.0, 1e-9);
  EXPECT_DOUBLE_EQ(r.columns[0][2], -3.75e-6);
  EXPECT_DOUBLE_EQ(r.columns[1][0], -2.25e-3);
}

TEST(TextReader, TabAndWhitespaceDelimiters) {
  const Read tsv = read_all("t (s)\tI (A)\tV (V)\n0\t1\t2\n1e-3\t3\t4\n2e-3\t5\t6\n");
  EXPECT_EQ(tsv.info.format, "tsv");
  EXPECT_NEAR(tsv.info.sample_rate_hz, 1000.0, 1e-9);
  EXPECT_DOUBLE_EQ(tsv.columns[1][2], 6.0);
  const Read ws = read_all("  time(s)   i(A)\n 0.0   -1.0\n 0.5    2.0 \n 1.0   3.5\n");
  EXPECT_EQ(ws.info.format, "text");
  EXPECT_NEAR(ws.info.sample_rate_hz, 2.0, 1e-12);
  EXPECT_DOUBLE_EQ(ws.columns[0][2], 3.5);
  // Blank-separated cells with a decimal comma (a European locale's text export).
  const Read wsc = read_all("t(s) i(A)\n0,0 -1,5\n0,5 2,25\n");
  EXPECT_DOUBLE_EQ(wsc.columns[0][0], -1.5);
}

TEST(TextReader, PreambleCommentsQuotedHeaderAndMicroSigns) {
  const std::string text =
      "Bench: Brightwell Tubeworks QA-2\n"
      "Unit,BT-32K serial 0042\n"
      "\n"
      "# operator note: probe on lead A\n"
      "\"time (\xC2\xB5s)\",\"current (\xCE\xBC"
      "A)\"\n"
      "0,10\n"
      "# mid-file comment\n"
      "0.25,20\n"
      "0.5,30\n";
  const Read r = read_all(text);
  EXPECT_NEAR(r.info.sample_rate_hz, 4e6, 4e6 * 1e-12);
  ASSERT_EQ(r.info.frames.value(), 3u);
  EXPECT_DOUBLE_EQ(r.columns[0][2], 30e-6);  // both micro code points mean 1e-6
  EXPECT_NE(r.info.detail.find("2 preamble lines"), std::string::npos) << r.info.detail;
}

TEST(TextReader, AllPrefixesScaleToSi) {
  const Read r = read_all(
      "t (ns),a (kA),b (A),c (mA),d (uA),e (kV),f (V),g (mV)\n"
      "0,1,1,1,1,1,1,1\n"
      "100,2,2,2,2,2,2,2\n");
  EXPECT_NEAR(r.info.sample_rate_hz, 1e7, 1e-3);
  const std::vector<double> factor{1e3, 1, 1e-3, 1e-6, 1e3, 1, 1e-3};
  for (std::size_t c = 0; c < factor.size(); ++c) EXPECT_DOUBLE_EQ(r.columns[c][1], 2 * factor[c]);
}

TEST(TextReader, SampleRateFromPreambleOrOption) {
  const Read interval = read_all("Sample interval: 2e-7 s\ncurrent (A)\n1\n2\n3\n");
  EXPECT_NEAR(interval.info.sample_rate_hz, 5e6, 1e-6);
  const Read rate = read_all("Sample rate;1,25 MS/s\nI (A)\n1\n2\n");
  EXPECT_NEAR(rate.info.sample_rate_hz, 1.25e6, 1e-6);
  ReaderOptions o;
  o.rate_hz = 48000;
  EXPECT_NEAR(read_all("I (A)\n1\n2\n", o).info.sample_rate_hz, 48000, 0);
  const InputError e = error_of("current (A)\n1\n2\n");
  EXPECT_NE(std::string(e.what()).find("--rate"), std::string::npos) << e.what();
  EXPECT_EQ(e.where().line.value(), 1u);
}

// Long captures printed with 8 significant digits: at t ≥ 10 s a 100 ns step is a tenth of
// the last printed digit, so rows repeat; the fitted interval must still be exact to ~1e-6.
TEST(TextReader, CoarselyPrintedTimeGivesTheIntervalByFit) {
  std::string text = "time (s),current (A)\n";
  char row[64];
  for (int k = 0; k < 200000; ++k) {
    std::snprintf(row, sizeof row, "%.8g,%.6f\n", 10.0 + k * 1e-7, std::sin(k * 0.01));
    text += row;
  }
  const Read r = read_all(text);
  EXPECT_EQ(r.info.frames.value(), 200000u);
  // Slope error of a least-squares line with uniform rounding q = 1e-6 over n rows is about
  // q/n^1.5 (standard regression result), 1.1e-14 s here: 1e-7 relative; 1e-6 leaves margin.
  EXPECT_NEAR(r.info.sample_rate_hz, 1e7, 1e7 * 1e-6);
  EXPECT_NEAR(r.info.start_time_s, 10.0, 1e-7);
  for (const auto& w : r.warnings) {  // no jitter warning: printing explains every row
    EXPECT_EQ(w.find("off the uniform time grid"), std::string::npos) << w;
  }
}

TEST(TextReader, NoHeaderNamesColumnsAndWarns) {
  ReaderOptions o;
  o.rate_hz = 1000;
  const Read r = read_all("1,2\n3,4\n", o);
  ASSERT_EQ(r.info.channels.size(), 2u);
  EXPECT_EQ(r.info.channels[1].name, "ch2");
  EXPECT_FALSE(r.warnings.empty());
}

TEST(TextReader, GainAndUnitTurnShuntVoltsIntoAmperes) {
  // A 100 mV/A current probe recorded in volts: --gain 2=10 --unit 2=A.
  ReaderOptions o;
  o.gains["2"] = 10;
  o.units["2"] = "A";
  const Read r = read_all("t (s),U (V),probe (V)\n0,100,0.05\n1e-6,200,-0.025\n", o);
  EXPECT_EQ(r.info.channels[1].unit, "A");
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
  EXPECT_DOUBLE_EQ(r.columns[1][0], 0.5);
  EXPECT_DOUBLE_EQ(r.columns[1][1], -0.25);
  // A header in mV stays scaled first: 50 mV × 10 A/V = 0.5 A.
  o.gains.clear();
  o.gains["probe"] = 10;
  const Read m = read_all("t (s),U (V),probe (mV)\n0,100,50\n1e-6,200,-25\n", o);
  EXPECT_DOUBLE_EQ(m.columns[1][0], 0.5);
}

TEST(TextReader, ExplicitRolesByNameAndNumber) {
  ReaderOptions o;
  o.current = "b";
  o.voltage = "1";
  const Read r = read_all("t (s),a,b\n0,1,2\n1,3,4\n", o);
  EXPECT_EQ(r.info.channels[0].role, ChannelRole::voltage);
  EXPECT_EQ(r.info.channels[1].role, ChannelRole::current);
  o.current = "7";
  const InputError e = error_of("t (s),a,b\n0,1,2\n1,3,4\n", o);
  EXPECT_NE(std::string(e.what()).find("no channel 7"), std::string::npos) << e.what();
}

TEST(TextReader, BlockSizeDoesNotChangeTheSamples) {
  std::string text = "t (s),i (A)\n";
  for (int k = 0; k < 1000; ++k)
    text += std::to_string(k * 1e-6) + "," + std::to_string(k % 17) + "\n";
  const Read a = read_all(text, {}, 7);
  const Read b = read_all(text, {}, 4096);
  EXPECT_EQ(a.columns, b.columns);
  EXPECT_EQ(a.columns[0].size(), 1000u);
}

// --- bad input: each names the line as an editor counts it (header = line 1) -------------
TEST(TextReaderErrors, EmptyAndHeaderOnly) {
  EXPECT_FALSE(error_of("").where().line.has_value());
  const InputError header_only = error_of("time (s),current (A)\n");
  EXPECT_EQ(header_only.where().line.value(), 1u);
  EXPECT_NE(std::string(header_only.what()).find("no data rows"), std::string::npos);
}

TEST(TextReaderErrors, MalformedCellMidFileAndSkipping) {
  const std::string text = "t (s),i (A)\n0,1\n1e-3,2\n2e-3,x7\n3e-3,4\n4e-3,5\n";
  const InputError e = error_of(text);
  EXPECT_EQ(e.where().line.value(), 4u);
  EXPECT_NE(std::string(e.what()).find("expected a number"), std::string::npos) << e.what();
  ReaderOptions skip;
  skip.skip_bad_rows = true;
  const Read r = read_all(text, skip);
  EXPECT_EQ(r.info.frames.value(), 4u);
  bool reported = false;
  for (const auto& w : r.warnings)
    reported = reported || w.find("skipped 1 malformed row") != std::string::npos;
  EXPECT_TRUE(reported);
  // The skipped row kept its slot on the time base: no gap is reported, the rate is exact.
  EXPECT_NEAR(r.info.sample_rate_hz, 1000.0, 1e-9);
}

TEST(TextReaderErrors, WrongCellCountNamesTheLine) {
  const InputError e = error_of("t (s),i (A),u (V)\n0,1,2\n1,2\n");
  EXPECT_EQ(e.where().line.value(), 3u);
  EXPECT_NE(std::string(e.what()).find("expected 3 cells"), std::string::npos) << e.what();
}

TEST(TextReaderErrors, NanAndInf) {
  EXPECT_EQ(error_of("t (s),i (A)\n0,1\n1,NaN\n").where().line.value(), 3u);
  EXPECT_EQ(error_of("t (s),i (A)\n0,1\n1,2\n2,-inf\n").where().line.value(), 4u);
}

TEST(TextReaderErrors, TimeGoingBackwards) {
  const InputError e = error_of("t (s),i (A)\n0,1\n0.001,1\n0.002,1\n0.0005,1\n0.004,1\n");
  EXPECT_EQ(e.where().line.value(), 5u);
  EXPECT_NE(std::string(e.what()).find("backwards"), std::string::npos) << e.what();
}

TEST(TextReaderErrors, GapInTimeColumn) {
  std::string text = "t (s),i (A)\n";
  for (int k = 0; k < 1000; ++k) {
    if (k == 600 || k == 601) continue;  // k = 0…599 on lines 2…601, then k = 602 on 602
    text += std::to_string(k) + "e-6,1\n";
  }
  const InputError e = error_of(text);
  EXPECT_EQ(e.where().line.value(), 602u);
  EXPECT_NE(std::string(e.what()).find("2 sample(s) missing"), std::string::npos) << e.what();
}

TEST(TextReaderErrors, BinaryGivenAsText) {
  const std::string bin("t,i\n0,1\n\x01\x02\x00\x7f", 13);
  const InputError e = error_of(bin);
  EXPECT_EQ(e.where().byte_offset.value(), 8u);  // the first control byte
  EXPECT_NE(std::string(e.what()).find("binary"), std::string::npos);
}

TEST(TextReaderErrors, HeaderCellCountMismatchWithUnits) {
  const InputError e = error_of("time (s),current (A),extra (V)\n0,1\n1,2\n");
  EXPECT_EQ(e.where().line.value(), 1u);
}

TEST(TextReaderErrors, MessageNamesTheFile) {
  const InputError e = error_of("t (s),i (A)\n0,1\n1,zz\n");
  EXPECT_EQ(std::string(e.what()).rfind("capture.csv:3: ", 0), 0u) << e.what();
}

}  // namespace
}  // namespace lopside
