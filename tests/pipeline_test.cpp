// The measuring pipeline as one library call (issue 10, item 1): measure_capture() on sources
// built here in memory, against analytic values.
#include "lopside/pipeline.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <string>
#include <vector>

#include "lopside/error.hpp"
#include "lopside/memory_source.hpp"

namespace lopside {
namespace {

// A one-channel capture in memory (MemorySource), its channel the current in `unit`.
std::unique_ptr<SampleSource> source(const std::vector<double>& values, const std::string& unit) {
  CaptureInfo info;
  info.path = "memory";
  info.format = "test";
  info.sample_rate_hz = 1e6;
  ChannelInfo c;
  c.name = "current";
  c.unit = unit;
  c.role = ChannelRole::current;
  c.index = 1;
  info.channels.push_back(c);
  return std::make_unique<MemorySource>(info, values);
}

// 1 kHz, 20 mA peak at 1 MS/s for 0.2 s (200 periods), +1 mA DC; before t = 20 ms the discharge
// is off and only the probe's offset of +0.4 mA is recorded, after it the offset adds to the DC.
std::vector<double> capture(bool with_lead_in) {
  std::vector<double> v(200000);
  for (std::size_t n = 0; n < v.size(); ++n) {
    const double t = static_cast<double>(n) / 1e6;
    const bool on = !with_lead_in || t >= 0.02;
    v[n] = (with_lead_in ? 0.0004 : 0.0) +
           (on ? 0.001 + 0.02 * std::sin(2 * M_PI * 1000 * t + 0.3) : 0.0);
  }
  return v;
}

SourceOpener opener(std::vector<double> values, std::string unit = "A") {
  return [values = std::move(values), unit] { return source(values, unit); };
}

TEST(Pipeline, OneCallGivesTheAnalyticFigures) {
  MeasureSettings s;
  s.capture_name = "memory";
  std::size_t cycles_seen = 0;
  MeasureCallbacks cb;
  cb.per_cycle = [&cycles_seen](const CycleRecord&) { ++cycles_seen; };
  const MeasureResult r = measure_capture(opener(capture(false)), s, cb);
  // The mean of a sine over whole cycles is 0, so the DC is the 1 mA added; RMS² = D² + A²/2
  // (Parseval).
  EXPECT_NEAR(r.summary.dc_offset_a.value, 0.001, 1e-8);
  EXPECT_NEAR(r.summary.rms_a.value, std::sqrt(0.001 * 0.001 + 0.02 * 0.02 / 2), 1e-8);
  EXPECT_NEAR(r.summary.fundamental_hz.value, 1000, 1e-3);
  EXPECT_EQ(cycles_seen, r.summary.cycles);
  ASSERT_TRUE(r.summary.harmonics);
  EXPECT_NEAR(r.summary.harmonics->orders[1].amplitude_a, 0.02, 0.02 * 1e-4);
  EXPECT_EQ(r.current_name, "current");
}

// The zero stretch is read first (the opener is called twice) and its mean, the probe's
// 0.4 mA, is subtracted: the DC is the discharge's 1 mA again, the lead-in's cycles left out.
TEST(Pipeline, TheZeroStretchIsMeasuredFirstAndSubtracted) {
  MeasureSettings s;
  s.capture_name = "memory";
  s.zero_stretch_s = std::pair{0.0, 0.015};
  s.zero_text = "0:0.015";
  int opened = 0;
  const std::vector<double> values = capture(true);
  const SourceOpener open = [&opened, &values] {
    ++opened;
    return source(values, "A");
  };
  const MeasureResult r = measure_capture(open, s);
  EXPECT_EQ(opened, 2);
  EXPECT_NEAR(r.summary.current_zero_a, 0.0004, 1e-9);
  EXPECT_NEAR(r.summary.dc_offset_a.value, 0.001, 1e-6);
}

// The current must be in amperes (issue 8): a channel in volts is refused naming the capture.
TEST(Pipeline, ACurrentInVoltsIsRefused) {
  MeasureSettings s;
  s.capture_name = "bench-7.csv";
  try {
    measure_capture(opener(capture(false), "V"), s);
    FAIL() << "expected an InputError";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("bench-7.csv"), std::string::npos) << e.what();
    EXPECT_NE(std::string(e.what()).find("not amperes"), std::string::npos) << e.what();
  }
}

}  // namespace
}  // namespace lopside
