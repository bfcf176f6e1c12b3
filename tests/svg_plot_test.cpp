// SVG charts (svg_plot.hpp): the fixed geometry maps known data to known pixels, ticks fall on
// 1-2-5 steps in one SI prefix, and degenerate data never puts "nan" or "inf" into the markup.
#include "lopside/svg_plot.hpp"

#include <gtest/gtest.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

namespace lopside::svg {
namespace {

const double kNaN = std::numeric_limits<double>::quiet_NaN();
const double kInf = std::numeric_limits<double>::infinity();
const std::string kMinus = "\xE2\x88\x92";  // U+2212

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (std::size_t p = text.find(what); p != std::string::npos; p = text.find(what, p + 1)) ++n;
  return n;
}

std::string lower(std::string s) {
  std::transform(s.begin(), s.end(), s.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return s;
}

// The "points" attribute of the first <polyline> in `svg`.
std::string first_points(const std::string& svg) {
  const std::size_t at = svg.find("<polyline");
  if (at == std::string::npos) return {};
  const std::size_t p = svg.find("points=\"", at);
  const std::size_t end = svg.find('"', p + 8);
  return svg.substr(p + 8, end - p - 8);
}

std::vector<std::string> labels(const std::vector<Tick>& ticks) {
  std::vector<std::string> out;
  for (const Tick& t : ticks) out.push_back(t.label);
  return out;
}

TEST(SvgScale, LinearMapsEndsAndMiddle) {
  const Scale s{0, 10, 64, 384, false};
  EXPECT_DOUBLE_EQ(s(0), 64);
  EXPECT_DOUBLE_EQ(s(10), 384);
  EXPECT_DOUBLE_EQ(s(5), 224);
}

TEST(SvgScale, LogMapsDecadesEvenly) {
  // [1, 100] on 64…384 px: one decade is 160 px, so 10 sits in the middle.
  const Scale s{1, 100, 64, 384, true};
  EXPECT_NEAR(s(1), 64, 1e-9);  // 1e-9 px: rounding of log10 only
  EXPECT_NEAR(s(10), 224, 1e-9);
  EXPECT_NEAR(s(100), 384, 1e-9);
  EXPECT_NEAR(s(0), 64, 1e-9);  // ≤ 0 clamps to the lower end
  EXPECT_NEAR(s(-5), 64, 1e-9);
}

TEST(SvgChart, KnownSeriesMapsToKnownCoordinates) {
  // W = 400, H = 200: plot x from 64 to 384, y from 156 (bottom) to 28 (top).
  Chart chart(400, 200);
  chart.x_axis({0, 10}, "time", "s");
  chart.y_axis({-1, 1}, "current", "A");
  EXPECT_DOUBLE_EQ(chart.x_scale().p0, 64);
  EXPECT_DOUBLE_EQ(chart.x_scale().p1, 384);
  EXPECT_DOUBLE_EQ(chart.y_scale().p0, 156);
  EXPECT_DOUBLE_EQ(chart.y_scale().p1, 28);
  chart.line({0, 5, 10}, {-1, 0, 1}, "s-current", "current");
  const std::string svg = chart.render("c1", "Current", "A straight line.");
  EXPECT_EQ(first_points(svg), "64.00,156.00 224.00,92.00 384.00,28.00");
  EXPECT_EQ(count(svg, "<polyline"), 1u);
  EXPECT_NE(svg.find("class=\"line s-current\""), std::string::npos);
}

TEST(SvgChart, LogAxisPointsAndBarsFromLowerEnd) {
  Chart chart(400, 200);
  chart.x_axis({1, 100}, "frequency", "Hz", true);
  chart.y_axis({1e-6, 1e-2}, "amplitude", "A", true);
  chart.line({1, 10, 100}, {1e-6, 1e-4, 1e-2}, "s-odd");
  const std::string svg = chart.render("c2", "Spectrum", "Log-log.");
  // y: four decades over 128 px, so 1e-4 is half-way (92 px).
  EXPECT_EQ(first_points(svg), "64.00,156.00 224.00,92.00 384.00,28.00");

  Chart bars(400, 200);
  bars.x_axis({0, 10}, "harmonic", "");
  bars.y_axis({1e-6, 1e-2}, "amplitude", "A", true);
  bars.bars({5}, {1e-4}, 2, "s-even", "even");
  const std::string b = bars.render("c3", "Bars", "One bar.");
  // x 4…6 → 192…256 px; from the axis's lower end (156 px) up to 1e-4 (92 px).
  EXPECT_NE(b.find("d=\"M192.00,156.00V92.00H256.00V156.00Z\""), std::string::npos) << b;
}

TEST(SvgTicks, UnitSpanInFifths) {
  const std::vector<Tick> t = nice_ticks(0, 1, axis_unit(0, 1, ""));
  ASSERT_EQ(t.size(), 6u);
  for (std::size_t i = 0; i < t.size(); ++i)
    EXPECT_NEAR(t[i].value, 0.2 * static_cast<double>(i), 1e-12);  // 1e-12: k·step rounding
  EXPECT_EQ(labels(t), (std::vector<std::string>{"0.0", "0.2", "0.4", "0.6", "0.8", "1.0"}));
}

TEST(SvgTicks, MilliampereLabelsWithRealMinus) {
  const AxisUnit u = axis_unit(-0.0123, 0.0456, "A");
  EXPECT_EQ(u.exponent, -3);
  EXPECT_EQ(u.text, "mA");
  const std::vector<Tick> t = nice_ticks(-0.0123, 0.0456, u);
  EXPECT_EQ(labels(t), (std::vector<std::string>{kMinus + "10", "0", "10", "20", "30", "40"}));
  EXPECT_NEAR(t.front().value, -0.01, 1e-15);
}

TEST(SvgTicks, LogDecadesAndDegenerateSpans) {
  const std::vector<Tick> t = nice_ticks(1e-6, 1e-2, axis_unit(1e-6, 1e-2, "A"), true);
  EXPECT_EQ(labels(t), (std::vector<std::string>{"0.001", "0.01", "0.1", "1", "10"}));
  // Fewer than three decades: 1, 2, 5 steps.
  EXPECT_EQ(labels(nice_ticks(1, 100, axis_unit(1, 100, ""), true)),
            (std::vector<std::string>{"1", "2", "5", "10", "20", "50", "100"}));
  EXPECT_GE(nice_ticks(3, 4, AxisUnit{}, true).size(), 2u);  // within one decade: linear
  EXPECT_TRUE(nice_ticks(kNaN, 1, AxisUnit{}).empty());
  EXPECT_EQ(nice_ticks(2, 2, AxisUnit{}).size(), 1u);
  EXPECT_GE(nice_ticks(0, 1, AxisUnit{}, false, 1).size(), 2u);
}

TEST(SvgUnits, AxisUnitPrefixes) {
  EXPECT_EQ(axis_unit(0, 0.0234, "A").text, "mA");
  EXPECT_EQ(axis_unit(0, 32000, "Hz").text, "kHz");
  EXPECT_EQ(axis_unit(0, 32000, "Hz").exponent, 3);
  EXPECT_EQ(axis_unit(0, 4.5e-5, "A").text,
            "\xC2\xB5"
            "A");  // µ as U+00B5
  EXPECT_EQ(axis_unit(0, 0.0234, "").text, "");
  EXPECT_EQ(axis_unit(0, 0.0234, "%").text, "%");
  EXPECT_EQ(axis_unit(0, 0.0234, "%").exponent, 0);
  EXPECT_EQ(axis_unit(kNaN, kNaN, "A").text, "A");
}

TEST(SvgSpan, WidenedToTickSteps) {
  const Span s = nice_span({-0.0123, 0.0456});
  EXPECT_NEAR(s.lo, -0.02, 1e-15);
  EXPECT_NEAR(s.hi, 0.05, 1e-15);
  const Span z = nice_span({3, 4}, true);
  EXPECT_DOUBLE_EQ(z.lo, 0);
  EXPECT_NEAR(z.hi, 4, 1e-12);
  const Span one = nice_span({5});  // ±1 % of 5, then tick steps
  EXPECT_LT(one.lo, 5);
  EXPECT_GT(one.hi, 5);
  const Span zero = nice_span({0, 0});
  EXPECT_LT(zero.lo, 0);
  EXPECT_GT(zero.hi, 0);
  const Span none = nice_span({kNaN, kInf});
  EXPECT_DOUBLE_EQ(none.lo, 0);
  EXPECT_DOUBLE_EQ(none.hi, 1);
  const Span huge = nice_span({-1.7e308, 1.7e308});
  EXPECT_TRUE(std::isfinite(huge.lo) && std::isfinite(huge.hi) && huge.hi > huge.lo);
}

TEST(SvgMinMax, SawtoothKeepsItsExtremes) {
  // Ten teeth of 100 samples rising from 0 to 1, one spike of 5 and one dip of −3, into ten
  // columns: each column holds one tooth.
  std::vector<double> x(1000), y(1000);
  for (std::size_t i = 0; i < x.size(); ++i) {
    x[i] = static_cast<double>(i);
    y[i] = static_cast<double>(i % 100) / 99.0;
  }
  y[537] = 5;
  y[912] = -3;
  const MinMax m = min_max_columns(x, y, 10);
  ASSERT_EQ(m.x.size(), 10u);
  for (std::size_t k = 0; k < 10; ++k) {
    EXPECT_NEAR(m.x[k], (static_cast<double>(k) + 0.5) * 99.9, 1e-9);
    EXPECT_DOUBLE_EQ(m.lo[k], k == 9 ? -3.0 : 0.0);
    EXPECT_DOUBLE_EQ(m.hi[k], k == 5 ? 5.0 : 1.0);
  }
}

TEST(SvgMinMax, SkipsNaNAndHandlesEmpty) {
  EXPECT_TRUE(min_max_columns({}, {}, 10).x.empty());
  EXPECT_TRUE(min_max_columns({1, 2}, {1, 2}, 0).x.empty());
  EXPECT_TRUE(min_max_columns({1, 2}, {kNaN, kNaN}, 4).x.empty());
  const MinMax one = min_max_columns({2, 2}, {1, 3}, 4);
  ASSERT_EQ(one.x.size(), 1u);
  EXPECT_DOUBLE_EQ(one.lo[0], 1);
  EXPECT_DOUBLE_EQ(one.hi[0], 3);
  // Two points into four columns: the empty middle columns are left out.
  const MinMax gap = min_max_columns({0, 1, 2, 4}, {1, kNaN, 2, 3}, 4);
  EXPECT_EQ(gap.x.size(), 3u);
}

TEST(SvgChart, NaNBreaksTheLine) {
  Chart chart(400, 200);
  chart.x_axis({0, 10}, "time", "s");
  chart.y_axis({-1, 1}, "current", "A");
  chart.line({0, 5, 6, 10}, {-1, 0, kNaN, 1}, "s-current");
  const std::string svg = chart.render("c4", "Broken", "A line with a gap.");
  EXPECT_EQ(count(svg, "<polyline"), 2u);
  EXPECT_EQ(first_points(svg), "64.00,156.00 224.00,92.00");
  // The lone last point is drawn as a zero-length (round-capped) line, not dropped.
  EXPECT_NE(svg.find("points=\"384.00,28.00 384.00,28.00\""), std::string::npos);
}

TEST(SvgChart, DegenerateInputsNeverWriteNanOrInf) {
  const std::vector<std::vector<double>> cases = {{},
                                                  {kNaN, kNaN},
                                                  {0.5},
                                                  {2, 2, 2},
                                                  {1e300, -1e300},
                                                  {1e-300, 2e-300},
                                                  {kInf, -kInf, 1},
                                                  {1.7e308, -1.7e308}};
  int n = 0;
  for (const auto& v : cases) {
    for (bool log : {false, true}) {
      Chart chart(400, 200);
      const Span s = nice_span(v);
      chart.x_axis(s, "time", "s", log);
      chart.y_axis(s, "current", "A", log);
      std::vector<double> x(v.size());
      for (std::size_t i = 0; i < x.size(); ++i) x[i] = v[i];
      chart.line(x, v, "s-current", "line");
      chart.area(x, v, v, "s-band", "band");
      chart.bars(x, v, 1, "s-hist", "bars");
      chart.markers(x, v, "s-point", "points");
      chart.whiskers(x, v, v, "s-point");
      chart.y_band(s.lo, s.hi, "s-band");
      chart.y_rule(v.empty() ? kNaN : v[0], "s-limit", "limit");
      chart.x_rule(v.empty() ? kInf : v[0], "s-flip", "flip");
      const std::string svg = lower(chart.render("d" + std::to_string(n++), "T", "D"));
      EXPECT_EQ(svg.find("nan"), std::string::npos) << svg;
      EXPECT_EQ(svg.find("inf"), std::string::npos) << svg;
      EXPECT_NE(svg.find("</figure>"), std::string::npos);
    }
  }
  Chart blank(0, kNaN);  // no axes, no layers, unusable size
  const std::string b = lower(blank.render("blank", "", ""));
  EXPECT_EQ(b.find("nan"), std::string::npos);
  EXPECT_EQ(b.find("inf"), std::string::npos);
}

TEST(SvgChart, AxisNamesCarryThePrefixedUnit) {
  Chart chart(480, 240);
  chart.x_axis({0, 0.02}, "time", "s");
  chart.y_axis({-0.03, 0.03}, "current", "A");
  chart.markers({0.01}, {0.0125}, "s-flag", "flagged");
  const std::string svg = chart.render("c5", "Cycle", "One point.");
  EXPECT_NE(svg.find(">time [ms]</text>"), std::string::npos);
  EXPECT_NE(svg.find(">current [mA]</text>"), std::string::npos);
  EXPECT_NE(svg.find("<title>10 ms, 12.5 mA</title>"), std::string::npos);  // hover read-out
  EXPECT_NE(svg.find(">" + kMinus + "20</text>"), std::string::npos);       // ticks 20 mA apart
  EXPECT_NE(svg.find("class=\"legend\""), std::string::npos);
  EXPECT_NE(svg.find("<circle class=\"marker s-flag\""), std::string::npos);

  Chart plain(480, 240);
  plain.x_axis({0, 1}, "ratio", "");
  EXPECT_NE(plain.render("c6", "R", "R").find(">ratio</text>"), std::string::npos);
}

TEST(SvgChart, CategoricalLabelsReplaceTicks) {
  Chart chart(400, 200);
  chart.x_axis({0, 3}, "unit", "");
  chart.y_axis({0, 1}, "share", "");
  chart.x_labels({1, 2}, {"U-17", "U<18>"});
  const std::string svg = chart.render("c7", "Units", "Two units.");
  EXPECT_NE(svg.find(">U-17</text>"), std::string::npos);
  EXPECT_NE(svg.find(">U&lt;18&gt;</text>"), std::string::npos);
  EXPECT_EQ(count(svg, "class=\"tick\""), 2u + 3u);  // two x labels; y ticks 0, 0.5, 1
}

TEST(SvgText, EscapesMarkupCharacters) {
  EXPECT_EQ(escape("<&>\"'"), "&lt;&amp;&gt;&quot;&#39;");
  EXPECT_EQ(escape("4.98 \xC2\xB5"
                   "A"),
            "4.98 \xC2\xB5"
            "A");  // UTF-8 passes through
}

TEST(SvgChart, RenderHasAccessibleNameAndClip) {
  Chart chart(400, 200);
  chart.x_axis({0, 10}, "time", "s");
  chart.y_axis({-1, 1}, "current", "A");
  chart.line({0, 10}, {0, 1}, "s-current", "I");
  const std::string svg = chart.render("dc", "DC <offset>", "Rises & falls.");
  EXPECT_EQ(svg.rfind("<figure class=\"chart\" id=\"dc\"><svg xmlns=\"http://www.w3.org/2000/svg\" "
                      "viewBox=\"0 0 400 200\" width=\"400\" height=\"200\" role=\"img\" "
                      "aria-labelledby=\"dc-title dc-desc\"",
                      0),
            0u);
  EXPECT_NE(svg.find("<title id=\"dc-title\">DC &lt;offset&gt;</title>"), std::string::npos);
  EXPECT_NE(svg.find("<desc id=\"dc-desc\">Rises &amp; falls.</desc>"), std::string::npos);
  EXPECT_NE(svg.find("<clipPath id=\"dc-clip\"><rect x=\"64.00\" y=\"28.00\" width=\"320.00\" "
                     "height=\"128.00\"/></clipPath>"),
            std::string::npos);
  EXPECT_NE(svg.find("<g clip-path=\"url(#dc-clip)\"><polyline"), std::string::npos);
  EXPECT_NE(svg.find("</svg><figcaption>DC &lt;offset&gt;</figcaption></figure>"),
            std::string::npos);
  EXPECT_EQ(svg.find("fill=\"#"), std::string::npos);  // colours live in the style sheet
  EXPECT_EQ(svg.find("stroke=\"#"), std::string::npos);
}

}  // namespace
}  // namespace lopside::svg
