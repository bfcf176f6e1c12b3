// Reading in parallel (issue 10, item 2): the text reader parses runs of rows in two halves on
// two threads, and the pipeline reads one block ahead of the measurement on a second thread.
// Both must give exactly what reading row by row gives: the same samples, bit for bit, and
// the same error at the same line or byte, wherever in a run the fault lies.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/edge_weights.hpp"
#include "lopside/error.hpp"
#include "lopside/read_ahead.hpp"
#include "lopside/reader_options.hpp"

namespace lopside::test {
namespace {

// Rows of a 1 MS/s capture, "time,current,voltage", numbers of our own: enough rows that the
// reader's runs (256 KiB) are split in halves and there are several runs.
constexpr int kRows = 120000;

std::string row(int n) {
  char buf[96];
  const double ph = 2 * M_PI * 20e3 * n * 1e-6;
  std::snprintf(buf, sizeof buf, "%.7f,%.5f,%.2f\n", n * 1e-6, 0.1 * std::sin(ph) + 0.002,
                600 * std::sin(ph + 0.1));
  return buf;
}

std::string capture(int rows = kRows) {
  std::string s = "time_s,current_A,voltage_V\n";
  for (int n = 0; n < rows; ++n) s += row(n);
  return s;
}

std::vector<double> read_all(const std::string& text, ReaderOptions options = {},
                             std::vector<std::string>* warnings = nullptr) {
  std::istringstream in(text);
  const auto source = open_text_capture(in, "t.csv", options);
  std::vector<double> out;
  SampleBlock block;
  while (source->read(block, 4096) > 0) out.insert(out.end(), block.data.begin(), block.data.end());
  if (warnings) *warnings = source->warnings();
  return out;
}

// The line a reading error names, or 0 when reading succeeded.
std::uint64_t error_line(const std::string& text, std::string* message = nullptr) {
  try {
    read_all(text);
  } catch (const InputError& e) {
    if (message) *message = e.message();
    return e.where().line.value_or(0);
  }
  return 0;
}

TEST(ParallelReading, EverySampleEqualsItsPrintedValue) {
  const std::vector<double> v = read_all(capture());
  ASSERT_EQ(v.size(), 2u * kRows);
  // Each value is the correctly rounded double of its printed text (strtod, ISO C 7.22.1.3),
  // whichever half of whichever run it came from.
  for (int n = 0; n < kRows; n += 997) {
    double t = 0, i = 0, u = 0;
    ASSERT_EQ(std::sscanf(row(n).c_str(), "%lf,%lf,%lf", &t, &i, &u), 3);
    EXPECT_EQ(v[2 * static_cast<std::size_t>(n)], i) << "row " << n;
    EXPECT_EQ(v[2 * static_cast<std::size_t>(n) + 1], u) << "row " << n;
  }
}

TEST(ParallelReading, CommentsBlankLinesAndQuotedRowsInsideARunReadAsAlone) {
  // The same rows with a comment, a blank line, CRLF ends and a quoted row in the second half
  // of the first run: the batch leaves those lines to the row-by-row path.
  std::string text = "time_s,current_A,voltage_V\n";
  for (int n = 0; n < kRows; ++n) {
    if (n == 30000) text += "# probe re-zeroed\n\n";
    std::string r = row(n);
    if (n == 30001) {
      r.pop_back();
      r += "\r\n";
    }
    if (n == 30002) {
      // "t","i","v" with quotes
      double t = 0, i = 0, u = 0;
      std::sscanf(r.c_str(), "%lf,%lf,%lf", &t, &i, &u);
      char buf[96];
      std::snprintf(buf, sizeof buf, "\"%.7f\",\"%.5f\",\"%.2f\"\n", t, i, u);
      r = buf;
    }
    text += r;
  }
  EXPECT_EQ(read_all(text), read_all(capture()));
}

TEST(ParallelReading, AGapNamesItsLineInEitherHalfOfARun) {
  // A missing row at several places: the first run's first and second half, and a later run.
  for (const int missing : {2000, 25000, 70000, kRows - 3}) {
    std::string text = "time_s,current_A,voltage_V\n";
    for (int n = 0; n < kRows; ++n)
      if (n != missing) text += row(n);
    std::string message;
    // Line 1 is the header, so row n is on line n + 2; the row after the gap is at line
    // missing + 2.
    EXPECT_EQ(error_line(text, &message), static_cast<std::uint64_t>(missing) + 2) << missing;
    EXPECT_NE(message.find("gap in the time column"), std::string::npos) << message;
  }
}

TEST(ParallelReading, ABadCellNamesItsLineInEitherHalfOfARun) {
  for (const int bad : {1000, 40000, 100000}) {
    std::string text = "time_s,current_A,voltage_V\n";
    for (int n = 0; n < kRows; ++n) text += n == bad ? "0.0400000,0.01x,5.00\n" : row(n);
    if (bad != 40000) {
      EXPECT_EQ(error_line(text), static_cast<std::uint64_t>(bad) + 2) << bad;
    } else {
      // The same row with --skip-bad-rows: read on, the row counted and said.
      ReaderOptions options;
      options.skip_bad_rows = true;
      std::vector<std::string> warnings;
      const auto v = read_all(text, options, &warnings);
      EXPECT_EQ(v.size(), 2u * (kRows - 1));
      ASSERT_FALSE(warnings.empty());
      EXPECT_NE(warnings.front().find("line " + std::to_string(bad + 2)), std::string::npos)
          << warnings.front();
    }
  }
}

TEST(ParallelReading, AControlByteIsPlacedAtItsByte) {
  std::string text = capture();
  const std::size_t at = text.size() / 2 + 7;
  text[at] = '\x01';
  std::istringstream in(text);
  try {
    read_all(text);
    FAIL() << "a control byte was read as text";
  } catch (const InputError& e) {
    ASSERT_TRUE(e.where().byte_offset.has_value());
    EXPECT_EQ(*e.where().byte_offset, at);
  }
}

// A source whose blocks count up, failing at a chosen block.
class CountingSource final : public SampleSource {
 public:
  CountingSource(std::size_t blocks, std::size_t fail_at) : blocks_(blocks), fail_at_(fail_at) {
    info_.channels.resize(1);
  }
  const CaptureInfo& info() const override { return info_; }
  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    if (served_ == fail_at_) throw InputError("c", InputLocation::at_line(served_), "broken");
    if (served_ == blocks_) return 0;
    block.channels = 1;
    block.frames = max_frames;
    block.data.assign(max_frames, static_cast<double>(served_++));
    return max_frames;
  }
  const std::vector<std::string>& warnings() const override { return warnings_; }

 private:
  CaptureInfo info_;
  std::vector<std::string> warnings_;
  std::size_t blocks_, fail_at_, served_ = 0;
};

TEST(ReadAhead, BlocksArriveInOrderAndTheErrorAtItsBlock) {
  CountingSource ok(50, 1000);
  ReadAhead all(ok, 16);
  const SampleBlock* b = nullptr;
  double expected = 0;
  while (all.next(b)) {
    ASSERT_EQ(b->frames, 16u);
    EXPECT_EQ(b->data.front(), expected);
    EXPECT_EQ(b->data.back(), expected);
    ++expected;
  }
  EXPECT_EQ(expected, 50);

  CountingSource broken(50, 7);
  ReadAhead some(broken, 16);
  int seen = 0;
  try {
    while (some.next(b)) ++seen;
    FAIL() << "the reader's error was lost";
  } catch (const InputError& e) {
    EXPECT_EQ(e.where().line.value_or(0), 7u);
  }
  EXPECT_EQ(seen, 7);  // blocks 0…6 were measured before the error
}

TEST(ReadAhead, StoppingEarlyEndsTheReader) {
  CountingSource endless(1000000, 2000000);
  {
    ReadAhead r(endless, 8);
    const SampleBlock* b = nullptr;
    ASSERT_TRUE(r.next(b));
  }  // the destructor stops and joins the reader after at most kSlots blocks
  SUCCEED();
}

TEST(EdgeWeights, TabulatedInterpolationWeightsMatchTheKernel) {
  // Against the normalised Kaiser-windowed sinc evaluated directly (Oppenheim & Schafer 7.6):
  // linear interpolation between 1024 phases is within (1/1024)²/8·π²/3 ≈ 4e-7.
  for (const double p : {0.0, 0.1234567, 0.5, 0.7777777, 0.9990234}) {
    const auto w = interpolation_weights(p);
    double sum = 0;
    std::array<double, kEdgeTaps> exact{};
    for (int j = -kEdgeHalfTaps + 1; j <= kEdgeHalfTaps; ++j) {
      exact[static_cast<std::size_t>(j + kEdgeHalfTaps - 1)] = kaiser_sinc(p - j, kEdgeHalfTaps);
      sum += exact[static_cast<std::size_t>(j + kEdgeHalfTaps - 1)];
    }
    double total = 0;
    for (std::size_t j = 0; j < kEdgeTaps; ++j) {
      EXPECT_NEAR(w[j], exact[j] / sum, 4e-7) << "p " << p << " tap " << j;
      total += w[j];
    }
    EXPECT_NEAR(total, 1.0, 1e-14);
  }
}

// The table views the engine reads inline give the weights the functions give, bit for bit
// (the engine's results are held to the last bit: tests/quick_path_test.cpp).
TEST(EdgeWeights, TableViewsGiveTheFunctionsWeights) {
  const InterpolationTableView iv = interpolation_table_view();
  for (const double p : {-0.5, 0.0, 1e-9, 0.1234567, 0.5, 0.7777777, 0.9990234, 1.0, 1.5}) {
    const InterpolationRows a = interpolation_rows(p), b = iv.rows_at(p);
    EXPECT_EQ(a.row, b.row) << p;
    EXPECT_EQ(a.step, b.step) << p;
    EXPECT_EQ(a.share, b.share) << p;
    for (const int half : {2, 4, 8, kEdgeHalfTaps}) {
      const auto w = edge_weights(p, half);
      const EdgeTableView ev = edge_table_view(half);
      const EdgeTableView::Position at = ev.at(p);
      for (std::size_t j = 0; j < kEdgeTaps; ++j)
        EXPECT_EQ(w[j], EdgeTableView::weight(at, j))
            << "p " << p << " half " << half << " tap " << j;
    }
  }
}

}  // namespace
}  // namespace lopside::test
