// Hostile delimited-text captures (issue 14): files of many columns, endless preambles, time
// columns that step back, skip or repeat, absurd sample rates, and bytes that are no capture at
// all. Every file is generated here, byte by byte. Each must end in the exact outcome stated:
// an InputError naming the place (line or byte) and what was expected, or (through the real
// binary) exit status 2 with a message naming the file; never a crash, a hang, exit 1 or a
// silent number.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <functional>
#include <sstream>
#include <string>
#include <tuple>
#include <vector>

#include "cli_support.hpp"
#include "compress_support.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "text_support.hpp"

namespace lopside {
namespace {

using test::Read;

Read read_all(const std::string& text, const ReaderOptions& options = {},
              std::size_t block_frames = 4096) {
  return test::read_text(text, options, block_frames, "hostile.csv");
}

InputError error_of(const std::string& text, const ReaderOptions& options = {}) {
  return test::text_error(text, options, "hostile.csv");
}

bool contains(const std::string& s, const std::string& part) {
  return s.find(part) != std::string::npos;
}

std::uint64_t line_of(const InputError& e) {
  return e.where().line.value_or(0);
}

// printf-style "%g" (six significant digits, trailing zeros dropped: "0.003" for 0.00300,
// "0" for 0): how spreadsheets and scripts print a time column.
std::string g(double v) {
  char buf[32];
  std::snprintf(buf, sizeof buf, "%g", v);
  return buf;
}

// "time,current" and `rows` rows at 100 kHz, time n·10 µs printed with "%g", a 50 Hz sine;
// `edit` may drop or change a row (it gets n and the row, and returns false to drop it).
std::string sine_csv(int rows, const std::function<bool(int, std::string&)>& edit = nullptr) {
  std::string text = "time,current\n";
  for (int n = 0; n < rows; ++n) {
    std::string row = g(n * 1e-5) + "," + g(std::sin(2 * M_PI * 50 * n * 1e-5)) + "\n";
    if (edit && !edit(n, row)) continue;
    text += row;
  }
  return text;
}

// ---------------------------------------------------------------------------------------------
// 1. Columns: at most 1024 per row or header; a read block at most 2^20 values.

TEST(HostileText, DataRowsOfMoreThan1024ColumnsAreRefusedAtTheFirstRow) {
  for (const std::size_t columns : {std::size_t{1025}, std::size_t{100000}}) {
    std::string text = "time";
    for (std::size_t c = 1; c < columns; ++c) text += ",c" + std::to_string(c);
    text += "\n";
    for (int n = 0; n < 3; ++n) {
      text += g(n * 1e-5);
      for (std::size_t c = 1; c < columns; ++c) text += ",0.1";
      text += "\n";
    }
    const InputError e = error_of(text);
    EXPECT_EQ(line_of(e), 2u) << columns;  // the first data row
    EXPECT_TRUE(contains(e.what(), "expected at most 1024 columns")) << e.what();
    EXPECT_TRUE(contains(e.what(), std::to_string(columns) + " columns")) << e.what();
  }
}

TEST(HostileText, AHeaderOfMoreThan1024CellsIsRefusedAtItsLine) {
  std::string text = "Note,keep this\n";
  for (int c = 0; c < 5000; ++c) text += (c ? ",name" : "name") + std::to_string(c);
  text += "\n";
  for (int n = 0; n < 20; ++n) text += g(n * 1e-5) + ",0.5\n";
  const InputError e = error_of(text);
  EXPECT_EQ(line_of(e), 2u);
  EXPECT_TRUE(contains(e.what(), "the header has 5000 cells")) << e.what();
  EXPECT_TRUE(contains(e.what(), "expected at most 1024 columns")) << e.what();
}

TEST(HostileText, ExactlyThe1024ColumnsAllowedAreRead) {
  std::string text = "time";
  for (int c = 1; c < 1024; ++c) text += ",c" + std::to_string(c);
  text += "\n";
  for (int n = 0; n < 40; ++n) {
    text += g(n * 1e-5);
    for (int c = 1; c < 1024; ++c) text += "," + std::to_string(c % 7);
    text += "\n";
  }
  ReaderOptions o;
  o.current = "1";
  const Read r = read_all(text, o);
  ASSERT_EQ(r.info.channels.size(), 1023u);
  EXPECT_EQ(r.info.frames.value(), 40u);
  EXPECT_EQ(r.columns[1022][39], 1023 % 7);
}

// A 1000-column capture long enough to pass through the look-ahead (2^20 / 1000 rows), the
// row-by-row path and the batch path whose runs are parsed in two halves on two threads.
// Every block the reader hands out, asked for 65536 frames, holds at most 2^20 values: its
// storage (capacity) is what the reader allocated for it.
TEST(HostileText, ABlockHoldsAtMost2To20ValuesWhateverTheColumnCount) {
  constexpr int kChannels = 999, kRows = 3000;
  std::string text = "time";
  for (int c = 0; c < kChannels; ++c) text += ",ch" + std::to_string(c);
  text += "\n";
  const auto value = [](int n, int c) { return ((n * 7 + c) % 19) * 0.5 - 4; };
  for (int n = 0; n < kRows; ++n) {
    text += g(n * 1e-6);
    for (int c = 0; c < kChannels; ++c) text += "," + g(value(n, c));
    text += "\n";
  }
  ReaderOptions o;
  o.current = "1";
  std::istringstream in(text);
  auto source = open_text_capture(in, "wide.csv", o);
  ASSERT_EQ(source->info().channels.size(), static_cast<std::size_t>(kChannels));
  SampleBlock block;
  std::size_t frames = 0, blocks = 0;
  while (const std::size_t n = source->read(block, 65536)) {
    ++blocks;
    EXPECT_LE(block.data.capacity(), std::size_t{1} << 20) << "block " << blocks;
    EXPECT_LE(n, (std::size_t{1} << 20) / kChannels);
    for (std::size_t f = 0; f < n; f += 97) {
      const int row = static_cast<int>(frames + f);
      for (int c = 0; c < kChannels; c += 101)
        ASSERT_EQ(block.value(f, static_cast<std::size_t>(c)), value(row, c)) << row << "," << c;
    }
    frames += n;
  }
  EXPECT_EQ(frames, static_cast<std::size_t>(kRows));
  EXPECT_GE(blocks, 3u);  // 3000 rows of 999 channels cannot fit fewer 2^20-value blocks
  EXPECT_NEAR(source->info().sample_rate_hz, 1e6, 1e6 * 1e-9);  // exact 1 µs steps
}

// ---------------------------------------------------------------------------------------------
// 2. The look-ahead before the data is bounded; no data within the bound is refused.

TEST(HostileText, NoDataInTheFirstMillionLinesIsRefusedThere) {
  std::string text;
  for (int n = 0; n < 1000100; ++n) text += "no numbers here\n";
  text += "time,current\n0,1\n1e-05,2\n2e-05,1\n";
  const InputError e = error_of(text);
  EXPECT_EQ(line_of(e), 1000000u);
  EXPECT_TRUE(contains(e.what(), "no data rows in the first 1000000 lines")) << e.what();
}

TEST(HostileText, NoDataInTheFirst64MiBIsRefusedThere) {
  // Lines of 65535 bytes and their LF: line n starts at byte (n − 1)·65536, so line 1025 is
  // the first that starts 64 MiB in.
  const std::string line = std::string(65535, 'a') + "\n";
  std::string text;
  for (int n = 0; n < 1100; ++n) text += line;
  text += "time,current\n0,1\n1e-05,2\n2e-05,1\n";
  const InputError e = error_of(text);
  EXPECT_EQ(line_of(e), 1025u);
  EXPECT_TRUE(contains(e.what(), "no data rows in the first 1025 lines (64 MiB)")) << e.what();
}

TEST(HostileText, ALongPreambleWithinTheBoundIsReadAndItsMetadataStaysBounded) {
  // 300 000 key/value lines, far beyond the metadata's bounds (65536 pairs or 4 MiB).
  std::string text;
  for (int n = 0; n < 300000; ++n)
    text += n == 150000 ? "Sample interval,1e-05\n" : "Note " + std::to_string(n) + ",text\n";
  text += "current\n";
  for (int n = 0; n < 1000; ++n) text += g(std::sin(n * 0.01)) + "\n";
  const Read r = read_all(text);
  EXPECT_EQ(r.info.frames.value(), 1000u);
  // The interval is read although it stands past the bounds.
  EXPECT_NEAR(r.info.sample_rate_hz, 1e5, 1e5 * 1e-12);
  EXPECT_EQ(r.info.metadata.size(), 65536u + 1u);
  bool said = false;
  for (const auto& w : r.warnings) said = said || contains(w, "not kept in the metadata");
  EXPECT_TRUE(said);
}

TEST(HostileText, APreambleRepeatingAFactKeepsAtMostOneMiBMore) {
  // Past 65536 pairs, lines stating the time base are still kept, but only for 1 MiB more:
  // "Sample interval" (15 bytes) and "1e-05" (5 bytes) are 20 bytes a pair, and the pair
  // that crosses 1 MiB is the last kept: 65536 + ⌈2^20 / 20⌉ = 65536 + 52429.
  std::string text;
  for (int n = 0; n < 200000; ++n) text += "Sample interval,1e-05\n";
  text += "current\n";
  for (int n = 0; n < 100; ++n) text += g(std::sin(n * 0.01)) + "\n";
  const Read r = read_all(text);
  EXPECT_EQ(r.info.metadata.size(), 65536u + 52429u);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e5, 1e5 * 1e-12);
}

TEST(HostileText, AFirstRowFollowedByThousandsOfCommentsIsStillTheData) {
  // The window of lines fills with comments before the first row is confirmed: it is judged
  // by what the window holds (a names row above it).
  std::string text = "time,current\n0,0.5\n";
  for (int n = 0; n < 10000; ++n) text += "# probe check " + std::to_string(n) + "\n";
  for (int n = 1; n < 500; ++n) text += g(n * 1e-5) + ",0.25\n";
  const Read r = read_all(text);
  EXPECT_EQ(r.info.frames.value(), 500u);
  ASSERT_EQ(r.info.channels.size(), 1u);
  EXPECT_EQ(r.info.channels[0].name, "current");  // the names row above was kept
  EXPECT_EQ(r.columns[0][0], 0.5);
  EXPECT_NEAR(r.info.sample_rate_hz, 1e5, 1e5 * 1e-9);
}

TEST(HostileText, LinesOverOneMiBAreRefusedAtTheirLineOnEveryPath) {
  const std::size_t kMiB = std::size_t{1} << 20;
  // A line of exactly 1 MiB is read (its 1 MiB-digit number is beyond the double range); one
  // byte more is refused as too long. In the look-ahead (row 100) and after it (row 70000,
  // read in batches).
  for (const int at : {100, 70000}) {
    for (const std::size_t extra : {std::size_t{0}, std::size_t{1}, kMiB / 2}) {
      const std::string head = g(at * 1e-5) + ",";
      const std::string long_row = head + std::string(kMiB - head.size() + extra, '1');
      const std::string text = sine_csv(at + 10, [&](int n, std::string& row) {
        if (n == at) row = long_row + "\n";
        return true;
      });
      const InputError e = error_of(text);
      EXPECT_EQ(line_of(e), static_cast<std::uint64_t>(at) + 2) << at << " " << extra;
      EXPECT_TRUE(contains(e.what(), extra == 0 ? "expected a number" : "longer than 1 MiB"))
          << e.what();
    }
  }
}

// ---------------------------------------------------------------------------------------------
// 3. Every row's time on the uniform grid, the last and the look-ahead's by the same rule.

TEST(HostileText, ATimeSteppingBackToZeroOnTheLastRowIsRefused) {
  // Within the look-ahead (4000 rows) and after it (70000 rows).
  for (const int rows : {4000, 70000}) {
    const std::string text = sine_csv(rows, [&](int n, std::string& row) {
      if (n == rows - 1) row = "0,0.1\n";
      return true;
    });
    const InputError e = error_of(text);
    EXPECT_EQ(line_of(e), static_cast<std::uint64_t>(rows) + 1) << rows;
    EXPECT_TRUE(contains(e.what(), "time goes backwards: 0 s after " + g((rows - 2) * 1e-5)))
        << e.what();
    EXPECT_TRUE(contains(e.what(), "expected about " + g((rows - 1) * 1e-5))) << e.what();
  }
}

TEST(HostileText, OneMissingSampleIsRefusedWhereverItIs) {
  // Printed to one step's resolution ("0.00299", then "0.003" for 0.00300): row 299 missing
  // makes a step of two. Also right after the first row, among the first rows, beyond the
  // 512 rows a line is first fitted through, beyond the look-ahead, and in a short capture.
  for (const auto& [rows, missing] : std::vector<std::pair<int, int>>{{70000, 1},
                                                                      {70000, 5},
                                                                      {70000, 20},
                                                                      {70000, 299},
                                                                      {70000, 800},
                                                                      {70000, 68000},
                                                                      {200, 3}}) {
    const std::string text = sine_csv(rows, [&](int n, std::string&) { return n != missing; });
    const InputError e = error_of(text);
    // Row n is on line n + 2; the row after the gap takes the missing row's line.
    EXPECT_EQ(line_of(e), static_cast<std::uint64_t>(missing) + 2) << missing;
    EXPECT_TRUE(contains(e.what(), "1 sample(s) missing")) << e.what();
    EXPECT_TRUE(contains(e.what(), "time " + g((missing + 1) * 1e-5) + " s, expected about " +
                                       g(missing * 1e-5) + " s"))
        << e.what();
  }
}

TEST(HostileText, ARepeatedTimeIsRefused) {
  for (const int repeated : {2, 300, 69000}) {
    const std::string text = sine_csv(70000, [&](int n, std::string& row) {
      if (n == repeated) row = g((n - 1) * 1e-5) + ",0.5\n";
      return true;
    });
    const InputError e = error_of(text);
    EXPECT_EQ(line_of(e), static_cast<std::uint64_t>(repeated) + 2) << repeated;
    EXPECT_TRUE(contains(e.what(), "repeats or steps back")) << e.what();
  }
}

TEST(HostileText, TimesPrintedWithDroppedZerosAndFewDigitsAreAccepted) {
  // "%g" drops trailing zeros, and "%.6g" from t = 1 s prints a 2 µs step to 10 µs, five
  // steps: consecutive rows repeat or jump. Neither is a gap.
  for (const char* format : {"%g", "%.6g"}) {
    std::string text = "time,current\n";
    const double step = format[1] == 'g' ? 1e-5 : 2e-6;
    const double start = format[1] == 'g' ? 0.0 : 1.0;
    for (int n = 0; n < 70000; ++n) {
      char t[32];
      std::snprintf(t, sizeof t, format, start + n * step);
      text += std::string(t) + "," + g(std::sin(2 * M_PI * 50 * n * step)) + "\n";
    }
    Read r;
    ASSERT_NO_THROW(r = read_all(text)) << format;
    EXPECT_EQ(r.info.frames.value(), 70000u);
    // "%g": every printed time is exact to its digits, so only double rounding remains;
    // "%.6g": the fit through 70000 rows of 10 µs printing resolves 2 µs to better than 1e-6
    // (the sawtooth bound of text_roundtrip_test, 12·P·E'/n² with P = 5, E' = 10 µs).
    EXPECT_NEAR(r.info.sample_rate_hz, 1 / step, (1 / step) * 1e-6) << format;
    for (const auto& w : r.warnings) EXPECT_FALSE(contains(w, "off the uniform time grid")) << w;
  }
}

TEST(HostileText, ASampleIndexThatSkipsIsRefusedInTheLookAheadToo) {
  std::string text = "index,current\n";
  for (int n = 0; n < 1000; ++n)
    if (n != 300) text += std::to_string(n) + "," + g(std::sin(n * 0.1)) + "\n";
  ReaderOptions o;
  o.rate_hz = 1e5;
  const InputError e = error_of(text, o);
  EXPECT_EQ(line_of(e), 302u);  // the row that says 301 where 300 belongs
  EXPECT_TRUE(contains(e.what(), "the sample index")) << e.what();
  EXPECT_TRUE(contains(e.what(), "is 301 where 300 was expected")) << e.what();
  EXPECT_TRUE(contains(e.what(), "samples are missing")) << e.what();
}

// ---------------------------------------------------------------------------------------------
// 4. Sample rates outside 1 Hz … 100 GHz, from wherever they come.

TEST(HostileText, ATimeColumnGivingARateOutsideTheRangeIsRefused) {
  for (const double step : {1e-12, 2.0}) {
    std::string text = "time,current\n";
    for (int n = 0; n < 100; ++n) text += g(n * step) + "," + g(std::sin(n * 0.1)) + "\n";
    const InputError e = error_of(text);
    EXPECT_EQ(line_of(e), 2u) << step;
    EXPECT_TRUE(contains(e.what(), "expected 1 Hz to 100 GHz")) << e.what();
  }
  // Times 0, 1 µs, 0: no rate (once "sample rate inf Hz"), but a refusal at a line.
  const InputError back = error_of("time,current\n0,0.5\n1e-06,-0.2\n0,0.3\n");
  EXPECT_GE(line_of(back), 2u);
  EXPECT_LE(line_of(back), 4u);
}

TEST(HostileText, AStatedRateOutsideTheRangeIsRefusedAtItsLine) {
  std::string samples;
  for (int n = 0; n < 100; ++n) samples += g(std::sin(n * 0.1)) + "\n";
  for (const char* line : {"Sample interval,1e-15", "Sample rate,0.01 Hz", "Sample rate: 1e300 GHz",
                           "Sampling period = 2 s"}) {
    const InputError e = error_of("Model,X1\n" + std::string(line) + "\n\n" + samples);
    EXPECT_EQ(line_of(e), 2u) << line;
    EXPECT_TRUE(contains(e.what(), "expected 1 Hz to 100 GHz")) << e.what();
  }
  // The bounds themselves are rates.
  EXPECT_NEAR(read_all("Sample rate,1 Hz\n\n" + samples).info.sample_rate_hz, 1.0, 1e-12);
  EXPECT_NEAR(read_all("Sample rate,100 GHz\n\n" + samples).info.sample_rate_hz, 100e9, 1.0);
}

TEST(HostileText, ARateOptionOutsideTheRangeIsRefusedNamingTheOption) {
  std::string text;
  for (int n = 0; n < 100; ++n) text += g(std::sin(n * 0.1)) + "\n";
  for (const double rate : {1e12, 0.5, 0.0}) {
    ReaderOptions o;
    o.rate_hz = rate;
    const InputError e = error_of(text, o);
    EXPECT_FALSE(e.where().line.has_value());
    EXPECT_TRUE(contains(e.what(), "--rate")) << e.what();
    EXPECT_TRUE(contains(e.what(), "expected 1 Hz to 100 GHz")) << e.what();
  }
}

// ---------------------------------------------------------------------------------------------
// 5. Bytes that are no capture, or odd ones: the outcome of each, exactly.

// The sine capture as UTF-16 little endian with a byte order mark.
std::string utf16le(const std::string& ascii) {
  std::string out = "\xFF\xFE";
  for (const char c : ascii) {
    out += c;
    out += '\0';
  }
  return out;
}

TEST(HostileText, OddButValidBytesReadAsTheirPlainForm) {
  const std::string plain = sine_csv(2000);
  const Read reference = read_all(plain);
  std::string cr_only = plain, crlf;
  for (char& c : cr_only) c = c == '\n' ? '\r' : c;
  for (const char c : plain) crlf += c == '\n' ? std::string("\r\n") : std::string(1, c);
  const std::string no_final_lf = plain.substr(0, plain.size() - 1);
  for (const std::string& text : {cr_only, crlf, no_final_lf}) {
    const Read r = read_all(text);
    EXPECT_EQ(r.columns, reference.columns);
    EXPECT_EQ(r.info.sample_rate_hz, reference.info.sample_rate_hz);
  }
  // UTF-16 is transcoded by open_capture (the file path), compared in the CLI test below.
  // "-0" is zero; a number underflowing the double range is 0 (as strtod); a fraction of
  // 5000 digits is its nearest double.
  const std::string odd = sine_csv(100, [](int n, std::string& row) {
    if (n == 10) row = g(n * 1e-5) + ",-0\n";
    if (n == 11) row = g(n * 1e-5) + ",1e-400\n";
    if (n == 12) row = g(n * 1e-5) + ",0." + std::string(5000, '1') + "\n";
    return true;
  });
  const Read r = read_all(odd);
  EXPECT_EQ(r.columns[0][10], 0.0);
  EXPECT_EQ(r.columns[0][11], 0.0);
  EXPECT_EQ(r.columns[0][12], 1.0 / 9.0);  // 0.111… rounds to the double nearest 1/9
}

struct Bad {
  const char* name;
  std::string text;
  std::uint64_t line;  // 0: a byte offset or no place
  const char* fragment;
};

std::vector<Bad> bad_cells() {
  const auto cell = [](const char* c) {
    return sine_csv(1000, [c](int n, std::string& row) {
      if (n == 500) row = g(n * 1e-5) + "," + c + "\n";
      return true;
    });
  };
  return {
      {"1e400", cell("1e400"), 502, "expected a number, found '1e400'"},
      {"nan", cell("nan"), 502, "not a finite number"},
      {"inf", cell("inf"), 502, "not a finite number"},
      {"hex", cell("0x10"), 502, "expected a number, found '0x10'"},
      {"5000 digits", cell(std::string(5000, '9').c_str()), 502, "expected a number"},
      {"header only", "time,current\n", 1, "no data rows after this line"},
      {"lone delimiter", ",\n", 1, "no data rows"},
      {"lone delimiter, no LF", ",", 1, "no data rows"},
      {"quote left open", sine_csv(1000) + "\"0.01,0.5\n", 1002, "expected 2 cells"},
      {"2 MiB line", "time,current\n" + std::string(2 << 20, '1') + "\n" + sine_csv(10), 2,
       "longer than 1 MiB"},
  };
}

TEST(HostileText, BadCellsAndShapesNameTheirLine) {
  for (const Bad& b : bad_cells()) {
    const InputError e = error_of(b.text);
    EXPECT_EQ(line_of(e), b.line) << b.name << ": " << e.what();
    EXPECT_TRUE(contains(e.what(), b.fragment)) << b.name << ": " << e.what();
  }
}

TEST(HostileText, AQuoteLeftOpenInACutLastLineIsLeftOutAndSaid) {
  const Read r = read_all(sine_csv(1000) + "0.01,\"0.5");
  EXPECT_EQ(r.info.frames.value(), 1000u);
  bool said = false;
  for (const auto& w : r.warnings)
    said = said || contains(w, "line 1002, the last, has no line end");
  EXPECT_TRUE(said);
}

TEST(HostileText, BytesThatAreNoTextNameTheirOffset) {
  std::string nul = sine_csv(100);
  nul.insert(300, std::string("\0\0", 2));
  EXPECT_EQ(error_of(nul).where().byte_offset.value_or(0), 300u);
  std::string mixed = sine_csv(100);
  for (std::size_t i = 0; i < 200; ++i) mixed[i] = mixed[i] == '\n' ? '\r' : mixed[i];
  const InputError m = error_of(mixed);  // CR alone, then LF: rows would run together
  EXPECT_EQ(m.where().byte_offset.value_or(0), sine_csv(100).find('\n'));
  EXPECT_TRUE(contains(m.what(), "line ends of two kinds")) << m.what();
  EXPECT_TRUE(contains(error_of(std::string("\x01\x02\x03garbage", 10)).what(), "binary data"));
  // A hundred thousand lines of one cell, no time base: refused at the first line…
  std::string tiny;
  for (int n = 0; n < 100000; ++n) tiny += "1\n";
  EXPECT_TRUE(contains(error_of(tiny).what(), "no time column and no sample rate"));
  // …and with one, read whole.
  ReaderOptions o;
  o.rate_hz = 1000;
  EXPECT_EQ(read_all(tiny, o).info.frames.value(), 100000u);
}

// ---------------------------------------------------------------------------------------------
// Through the binary: exit status 2, the file named, never "internal error"; compressed and
// standard input paths included.

using test::gzip_bytes;
using test::xz_bytes;
using test::zstd_bytes;

class HostileCli : public test::Cli {
 protected:
  void expect_bad_input(const test::RunResult& r, const std::string& name, const std::string& place,
                        const std::string& fragment) {
    EXPECT_EQ(r.status, 2) << name << "\nstderr:\n" << r.err;
    EXPECT_EQ(r.err.rfind("lopside: ", 0), 0u) << r.err;
    EXPECT_TRUE(contains(r.err, place)) << "expected '" << place << "' in:\n" << r.err;
    EXPECT_TRUE(contains(r.err, fragment)) << "expected '" << fragment << "' in:\n" << r.err;
    EXPECT_FALSE(contains(r.err, "internal error")) << r.err;
  }

  // `lopside ARGS… -` with `bytes` on standard input.
  test::RunResult run_stdin(std::vector<std::string> args, const std::string& bytes) {
    const test::fs::path in = file("stdin.bin", bytes);
    std::string cmd = test::shell_quote(LOPSIDE_BINARY);
    for (const auto& a : args) cmd += " " + test::shell_quote(a);
    const test::fs::path out = dir_ / "stdout.txt", err = dir_ / "stderr.txt";
    cmd += " - <" + test::shell_quote(in.string()) + " >" + test::shell_quote(out.string()) +
           " 2>" + test::shell_quote(err.string());
    const int raw = std::system(cmd.c_str());
    test::RunResult r;
    r.status = (raw != -1 && WIFEXITED(raw)) ? WEXITSTATUS(raw) : -1;
    r.out = test::slurp(out);
    r.err = test::slurp(err);
    return r;
  }
};

TEST_F(HostileCli, HundredThousandColumnsExitTwoNamingTheLine) {
  std::string text;
  for (int c = 0; c < 100000; ++c) text += (c ? ",c" : "c") + std::to_string(c);
  text += "\n";
  for (int n = 0; n < 3; ++n) {
    for (int c = 0; c < 100000; ++c) text += c ? ",0.1" : "0.1";
    text += "\n";
  }
  const test::fs::path p = file("cols.csv", text);
  expect_bad_input(run({"inspect", p.string(), "--rate", "1000"}), "cols",
                   p.string() + ":2:", "expected at most 1024 columns");
}

TEST_F(HostileCli, TimeColumnFaultsExitTwoInMeasureAndInspect) {
  const std::string back = sine_csv(4000, [](int n, std::string& row) {
    if (n == 3999) row = "0,0.1\n";
    return true;
  });
  const std::string gap = sine_csv(4000, [](int n, std::string&) { return n != 299; });
  const test::fs::path b = file("tback.csv", back), m = file("tmiss.csv", gap);
  for (const char* command : {"inspect", "measure"}) {
    expect_bad_input(run({command, b.string()}), "tback",
                     b.string() + ":4001:", "time goes backwards");
    expect_bad_input(run({command, m.string()}), "tmiss",
                     m.string() + ":301:", "1 sample(s) missing");
  }
  const test::fs::path t3 = file("t3.csv", "time,current\n0,0.5\n1e-06,-0.2\n0,0.3\n");
  const test::RunResult r = run({"inspect", t3.string()});
  expect_bad_input(r, "t3", t3.string() + ":", "time");
  EXPECT_FALSE(contains(r.out + r.err, "inf Hz"));
  // --rate out of range: refused (by the option's own check or by the reader), exit 2.
  const test::fs::path rate = file("rate.csv", "0.1\n0.2\n0.3\n");
  for (const char* hz : {"1e12", "0.5"}) {
    const test::RunResult bad = run({"inspect", rate.string(), "--rate", hz});
    EXPECT_EQ(bad.status, 2) << bad.err;
    EXPECT_TRUE(contains(bad.err, "--rate")) << bad.err;
    EXPECT_FALSE(contains(bad.err, "internal error")) << bad.err;
  }
}

TEST_F(HostileCli, EveryPathEndsInExitTwoWithThePlace) {
  // The same faults plain, compressed three ways and on standard input.
  const std::string plain_back = sine_csv(2000, [](int n, std::string& row) {
    if (n == 1999) row = "0,0.1\n";
    return true;
  });
  const std::string long_line = sine_csv(200, [](int n, std::string& row) {
    if (n == 100) row = g(n * 1e-5) + "," + std::string(3 << 20, '5') + "\n";
    return true;
  });
  struct Case {
    std::string name, bytes, place, fragment;
  };
  std::vector<Case> cases;
  for (const auto& [what, text, line, fragment] :
       {std::tuple<std::string, std::string, int, std::string>{"back", plain_back, 2001,
                                                               "time goes backwards"},
        {"long", long_line, 102, "longer than 1 MiB"}}) {
    cases.push_back({what + ".csv", text, ":" + std::to_string(line) + ":", fragment});
    cases.push_back(
        {what + ".csv.gz", gzip_bytes(text), ":" + std::to_string(line) + ":", fragment});
    cases.push_back({what + ".csv.xz", xz_bytes(text), ":" + std::to_string(line) + ":", fragment});
    cases.push_back(
        {what + ".csv.zst", zstd_bytes(text), ":" + std::to_string(line) + ":", fragment});
  }
  cases.push_back({"empty.csv", "", ":", "empty"});
  cases.push_back({"blank.csv", std::string(1000, '\n'), ":", "no text"});
  // "time,current\n" and "0,1\n" are 17 bytes: the first NUL is byte 17.
  cases.push_back(
      {"nul.csv", std::string("time,current\n0,1\n\0\0\n", 20), ": byte 17:", "binary"});
  std::string garbage;
  for (int k = 0; k < 4096; ++k) garbage += static_cast<char>((k * 131 + 7) % 256);
  cases.push_back({"garbage.csv", garbage, ": byte 0:", "binary"});
  cases.push_back({"utf16_no_bom.csv", utf16le(sine_csv(50)).substr(2), ": byte 1:", "binary"});
  for (const Case& c : cases) {
    const test::fs::path p = file(c.name, c.bytes);
    expect_bad_input(run({"inspect", p.string()}), c.name, p.string() + c.place, c.fragment);
  }
  expect_bad_input(run_stdin({"inspect"}, plain_back), "stdin back",
                   "standard input:2001:", "time goes backwards");
  expect_bad_input(run_stdin({"inspect"}, long_line), "stdin long",
                   "standard input:102:", "longer than 1 MiB");
  expect_bad_input(run_stdin({"inspect"}, gzip_bytes(long_line)), "stdin gz long",
                   "standard input:102:", "longer than 1 MiB");
  // UTF-16 with its byte order mark is a capture like any other.
  const test::fs::path u = file("utf16.csv", utf16le(sine_csv(2000)));
  const test::RunResult r = run({"inspect", u.string(), "--json", "-"});
  EXPECT_EQ(r.status, 0) << r.err;
  EXPECT_TRUE(contains(r.out, "2000")) << r.out;
}

}  // namespace
}  // namespace lopside
