// The named figures a limits file may name (figures.hpp) are measure's JSON figures: the same
// names, the same values and u95, bit for bit, for a capture with a voltage and harmonics.
#include "lopside/figures.hpp"

#include <gtest/gtest.h>

#include <cmath>
#include <memory>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "lopside/measure_report.hpp"
#include "lopside/memory_source.hpp"

namespace lopside {
namespace {

// 1 kHz at 1 MS/s for 0.1 s: a current of 20 mA peak with +0.5 mA DC and a 5 % second
// harmonic, and a 300 V voltage in phase, so every figure (burning voltage included) exists.
MeasureResult measured() {
  CaptureInfo info;
  info.path = "memory";
  info.format = "test";
  info.sample_rate_hz = 1e6;
  for (std::size_t c = 0; c < 2; ++c) {
    ChannelInfo ch;
    ch.index = c + 1;
    ch.name = c == 0 ? "current" : "voltage";
    ch.unit = c == 0 ? "A" : "V";
    ch.role = c == 0 ? ChannelRole::current : ChannelRole::voltage;
    info.channels.push_back(ch);
  }
  std::vector<double> v(2 * 100000);
  for (std::size_t n = 0; n < 100000; ++n) {
    const double ph = 2 * M_PI * 1000 * static_cast<double>(n) / 1e6;
    v[2 * n] = 0.0005 + 0.02 * std::sin(ph) + 0.001 * std::sin(2 * ph);
    v[2 * n + 1] = 300 * std::sin(ph);
  }
  MeasureSettings s;
  s.capture_name = "memory";
  return measure_capture([&] { return std::make_unique<MemorySource>(info, v); }, s);
}

// The JSON value at a dotted key, and its u95 when it is an estimate object.
const nlohmann::json& at(const nlohmann::json& doc, const std::string& name) {
  const auto dot = name.find('.');
  if (dot == std::string::npos) return doc.at(name);
  return doc.at(name.substr(0, dot)).at(name.substr(dot + 1));
}

TEST(Figures, EveryLimitableFigureIsMeasuresJsonFigure) {
  const MeasureResult r = measured();
  std::ostringstream out;
  write_measure_json(out, r);
  const nlohmann::json doc = nlohmann::json::parse(out.str());
  const std::vector<NamedFigure> figures = measure_figures(r);
  std::vector<std::string> names;
  for (const NamedFigure& f : figures) names.push_back(f.name);
  EXPECT_EQ(names, limitable_figures());
  for (const NamedFigure& f : figures) {
    const nlohmann::json& j = at(doc, f.name);
    if (j.is_object()) {
      EXPECT_EQ(j.at("value").get<double>(), f.value) << f.name;
      ASSERT_TRUE(f.u95.has_value()) << f.name;
      EXPECT_EQ(j.at("u95").get<double>(), *f.u95) << f.name;
    } else {
      EXPECT_EQ(j.get<double>(), f.value) << f.name;
      EXPECT_FALSE(f.u95.has_value()) << f.name;
    }
  }
  // And the values are this capture's: DC 0.5 mA (the sine's mean over whole cycles is 0).
  EXPECT_NEAR(figures[2].value, 0.0005, 1e-6);
  EXPECT_EQ(figures[2].name, "dc_offset_a");
}

TEST(Figures, ACaptureWithoutVoltageOrHarmonicsHasNoneOfTheirFigures) {
  CaptureInfo info;
  info.path = "memory";
  info.format = "test";
  info.sample_rate_hz = 1e6;
  ChannelInfo ch;
  ch.index = 1;
  ch.name = "current";
  ch.unit = "A";
  ch.role = ChannelRole::current;
  info.channels.push_back(ch);
  std::vector<double> v(100000);
  for (std::size_t n = 0; n < v.size(); ++n)
    v[n] = 0.02 * std::sin(2 * M_PI * 1000 * static_cast<double>(n) / 1e6);
  MeasureSettings s;
  s.capture_name = "memory";
  s.max_order = 0;
  const MeasureResult r =
      measure_capture([&] { return std::make_unique<MemorySource>(info, v); }, s);
  for (const NamedFigure& f : measure_figures(r)) {
    EXPECT_NE(f.name.rfind("voltage.", 0), 0u) << f.name;
    EXPECT_NE(f.name, "thd");
  }
}

}  // namespace
}  // namespace lopside
