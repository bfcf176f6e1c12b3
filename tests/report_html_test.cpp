// The HTML reports of `swap`, `lot` and `trend` (issue 12, item 3) built from results made in
// memory: every data-key/data-value pair equals the command's own JSON at that path, the unit
// table and the charts are there, a known series lands on known SVG coordinates (svg_plot.hpp's
// fixed geometry: plot area x from kMarginLeft to W − kMarginRight, y from H − kMarginBottom up
// to kMarginTop), flagged points carry their class and hover title, and the page holds no NaN,
// no infinity and no address but the SVG namespace.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <optional>
#include <regex>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "lopside/lead_swap.hpp"
#include "lopside/lot_judge.hpp"
#include "lopside/lot_report.hpp"
#include "lopside/svg_plot.hpp"
#include "lopside/swap_report.hpp"
#include "lopside/trend.hpp"
#include "lopside/trend_report.hpp"

namespace lopside {
namespace {

using nlohmann::json;

// The chart sizes the reports use (lot_html.cpp, trend_html.cpp): the geometry checks below
// need them.
constexpr double kLotChartW = 520, kLotChartH = 280;
constexpr double kTrendChartW = 1000, kTrendChartH = 300;

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (std::size_t p = text.find(what); p != std::string::npos; p = text.find(what, p + 1)) ++n;
  return n;
}

std::string coord(double px) {
  char buf[48];
  std::snprintf(buf, sizeof buf, "%.2f", px);
  return buf;
}

std::string unescape(std::string s) {
  const std::vector<std::pair<std::string, std::string>> entities{
      {"&lt;", "<"}, {"&gt;", ">"}, {"&quot;", "\""}, {"&#39;", "'"}, {"&amp;", "&"}};
  for (const auto& [from, to] : entities)
    for (std::size_t p = s.find(from); p != std::string::npos; p = s.find(from, p + to.size()))
      s.replace(p, from.size(), to);
  return s;
}

/// The JSON value at a dot path ("units.3.figures.dc_to_rms.value"), or nullptr if absent.
const json* lookup(const json& doc, const std::string& path) {
  const json* cur = &doc;
  std::stringstream parts(path);
  std::string part;
  while (std::getline(parts, part, '.')) {
    if (cur->is_object() && cur->contains(part)) {
      cur = &(*cur)[part];
    } else if (cur->is_array() && !part.empty() &&
               part.find_first_not_of("0123456789") == std::string::npos &&
               std::stoul(part) < cur->size()) {
      cur = &(*cur)[std::stoul(part)];
    } else {
      return nullptr;
    }
  }
  return cur;
}

/// Every data-key/data-value pair of the page equals the JSON at that path; returns how many.
std::size_t expect_keys_match_json(const std::string& html, const json& doc) {
  static const std::regex pair_re("data-key=\"([^\"]*)\" data-value=\"([^\"]*)\"");
  std::size_t n = 0;
  for (auto it = std::sregex_iterator(html.begin(), html.end(), pair_re);
       it != std::sregex_iterator(); ++it) {
    const std::string key = unescape((*it)[1]), value = unescape((*it)[2]);
    ++n;
    const json* want = lookup(doc, key);
    if (!want) {
      ADD_FAILURE() << "data-key " << key << " is not in the JSON";
      continue;
    }
    if (want->is_number()) {
      const double w = want->get<double>(), got = std::stod(value);
      EXPECT_NEAR(got, w, 1e-12 * std::fabs(w)) << key;
    } else if (want->is_string()) {
      EXPECT_EQ(value, want->get<std::string>()) << key;
    } else {
      ADD_FAILURE() << "data-key " << key << " is neither a number nor a string: " << *want;
    }
  }
  // Every data-key has its data-value right after it.
  EXPECT_EQ(count(html, "data-key="), n);
  return n;
}

/// The page without its style sheet and script: what a reader sees, SVG text included.
std::string content(std::string html) {
  for (const auto& [open, close] :
       {std::pair<std::string, std::string>{"<style>", "</style>"}, {"<script>", "</script>"}}) {
    const std::size_t a = html.find(open), b = html.find(close);
    if (a != std::string::npos && b != std::string::npos) html.erase(a, b + close.size() - a);
  }
  return html;
}

/// Checks every report kind must pass.
void expect_sound_page(const std::string& html) {
  EXPECT_EQ(html.rfind("<!DOCTYPE html>", 0), 0u);
  EXPECT_NE(html.find("</html>"), std::string::npos);
  const std::string text = content(html);
  // No NaN or infinity as a word (the browser checker's rule).
  static const std::regex bad("(^|[^A-Za-z0-9_])[-+]?(nan|inf|infinity)([^A-Za-z0-9_]|$)",
                              std::regex::icase);
  std::smatch m;
  EXPECT_FALSE(std::regex_search(text, m, bad)) << "found \"" << m.str(0) << "\"";
  // No address other than the SVG namespace; no reference to another file.
  const std::size_t xmlns = count(html, "xmlns=\"http://www.w3.org/2000/svg\"");
  EXPECT_EQ(count(html, "http:") + count(html, "https:"), xmlns);
  EXPECT_EQ(count(html, "href="), 0u);
  EXPECT_EQ(count(html, "src="), 0u);
  EXPECT_EQ(count(html, "url("), count(html, "url(#"));
  // Every <svg> with a non-empty <title> and <desc>.
  std::size_t svgs = 0;
  for (std::size_t p = html.find("<svg"); p != std::string::npos; p = html.find("<svg", p + 1)) {
    ++svgs;
    const std::size_t end = html.find("</svg>", p);
    ASSERT_NE(end, std::string::npos);
    const std::string svg = html.substr(p, end - p);
    static const std::regex title("<title id=\"[^\"]+\">[^<]+</title>");
    static const std::regex desc("<desc id=\"[^\"]+\">[^<]+</desc>");
    EXPECT_TRUE(std::regex_search(svg, title)) << svg.substr(0, 200);
    EXPECT_TRUE(std::regex_search(svg, desc)) << svg.substr(0, 200);
  }
  EXPECT_EQ(svgs, xmlns);
  EXPECT_NE(html.find("positive current flows from the probed lead into electrode A"),
            std::string::npos);
}

/// The y span of the control charts (lot_html.cpp, trend_html.cpp): the values widened by 4 % of
/// their range on both sides, then to 1-2-5 steps.
svg::Span padded_span(const std::vector<double>& values) {
  const auto [lo, hi] = std::minmax_element(values.begin(), values.end());
  const double pad = 0.04 * (*hi - *lo);
  std::vector<double> ends = values;
  ends.push_back(*lo - pad);
  ends.push_back(*hi + pad);
  return svg::nice_span(ends);
}

/// The <svg …>…</svg> of the chart whose figure has `id`.
std::string chart_svg(const std::string& html, const std::string& id) {
  const std::size_t at = html.find("<figure class=\"chart\" id=\"" + id + "\"");
  if (at == std::string::npos) return {};
  const std::size_t end = html.find("</figure>", at);
  return html.substr(at, end - at);
}

// ---------------------------------------------------------------------------------------------
// swap

// A 32 kHz capture of 17 mA AC RMS with the given DC and asymmetry (as lead_swap_test.cpp).
SwapCapture capture(double dc_a, double u_dc_a, double asymmetry, double u_asym) {
  SwapCapture c;
  CycleSummary& s = c.summary;
  s.cycles = 160;
  s.fundamental_hz = {32000, 0.1, 2};
  s.dc_offset_a = {dc_a, 2 * u_dc_a, 2};
  s.charge_asymmetry = {asymmetry, 2 * u_asym, 2};
  s.ac_rms_a = {0.017, 1e-5, 2};
  s.rms_a = {0.017, 1e-5, 2};
  c.dc_type_a = {u_dc_a, 1e300};
  c.asymmetry_type_a = {u_asym, 1e300};
  return c;
}

SwapReport swap_report() {
  // N = D + E = +1.2 mA, S = −D + E = −0.8 mA: D = +1.0 mA, E = +0.2 mA (probe on the electrode).
  const SwapCapture n = capture(0.0012, 2e-6, 0.06, 1e-4);
  const SwapCapture s = capture(-0.0008, 2e-6, -0.04, 1e-4);
  SwapReport rep;
  rep.normal.path = "bench/unit7-normal.csv";
  rep.normal.summary = n.summary;
  rep.normal.metadata = {{"Serial", "INV-0007"}};
  rep.swapped.path = "bench/unit7-swapped.csv";
  rep.swapped.summary = s.summary;
  rep.swapped.warnings = {"a test warning <with> markup & more"};
  SwapProbe probe;
  probe.on = ProbeOn::electrode;
  rep.result = analyse_lead_swap(n, s, probe);
  return rep;
}

TEST(SwapHtml, CapturesSideBySidePartsWithU95AndEveryKeyEqualsTheJson) {
  const SwapReport rep = swap_report();
  std::ostringstream h, j;
  write_swap_html(h, rep);
  write_swap_json(j, rep);
  const std::string html = h.str();
  const json doc = json::parse(j.str());
  expect_sound_page(html);
  EXPECT_GE(expect_keys_match_json(html, doc), 20u);

  // The two captures side by side, each figure with its u95.
  for (const char* key :
       {"normal.dc_offset_a.value", "normal.dc_offset_a.u95", "swapped.dc_offset_a.value",
        "swapped.dc_offset_a.u95", "normal.charge_asymmetry.value", "normal.ac_rms_a",
        "normal.fundamental_hz", "swapped.cycle_count"})
    EXPECT_NE(html.find(std::string("data-key=\"") + key + "\""), std::string::npos) << key;
  EXPECT_NE(html.find("bench/unit7-normal.csv"), std::string::npos);
  EXPECT_NE(html.find("bench/unit7-swapped.csv"), std::string::npos);
  // The supply and electrode parts with their u95 and what they mean.
  for (const char* key : {"driver_bias_a.value", "driver_bias_a.u95", "electrode_bias_a.value",
                          "electrode_bias_a.u95", "driver_asymmetry.u95", "verdict", "confidence"})
    EXPECT_NE(html.find(std::string("data-key=\"") + key + "\""), std::string::npos) << key;
  EXPECT_NE(html.find("supply part D"), std::string::npos);
  EXPECT_NE(html.find("electrode part E"), std::string::npos);
  EXPECT_NE(html.find("reverses with the leads"), std::string::npos);
  EXPECT_NE(html.find("\xC2\xB1"), std::string::npos);  // ±
  // The verdict first, then the caution; the warning escaped.
  const std::size_t verdict = html.find("class=\"verdict verdict-");
  ASSERT_NE(verdict, std::string::npos);
  EXPECT_LT(verdict, html.find("<section"));
  EXPECT_NE(html.find("class=\"caution\""), std::string::npos);
  EXPECT_NE(html.find("a test warning &lt;with&gt; markup &amp; more"), std::string::npos);
  EXPECT_NE(html.find("INV-0007"), std::string::npos);
  EXPECT_NE(html.find("lopside.swap/1"), std::string::npos);

  // The bar chart: N, S, D, E with u95 whiskers, bars drawn from zero.
  const std::string dc = chart_svg(html, "swap-dc");
  ASSERT_FALSE(dc.empty());
  EXPECT_NE(dc.find("class=\"whisker"), std::string::npos);
  EXPECT_NE(dc.find("class=\"bars s-current\""), std::string::npos);
  EXPECT_NE(dc.find("class=\"bars s-fit\""), std::string::npos);
  EXPECT_NE(dc.find("class=\"bars s-voltage\""), std::string::npos);
  // Four categories at x = 1…4 on [0.4, 4.6]: the D bar (the third) is centred on
  // kMarginLeft + (3 − 0.4)/4.2 · (520 − 80) px and its top is at D on the y scale.
  const double plot_w = 520 - svg::kMarginLeft - svg::kMarginRight;
  const double cx = svg::kMarginLeft + (3 - 0.4) / 4.2 * plot_w;
  const double half = 0.28 / 4.2 * plot_w;
  EXPECT_NE(dc.find("M" + coord(cx - half) + ","), std::string::npos) << dc;
  EXPECT_NE(dc.find("H" + coord(cx + half)), std::string::npos);
}

// ---------------------------------------------------------------------------------------------
// lot

const LimitList kLimits{{"dc_to_rms", Limit{-0.01, 0.01}},
                        {"fundamental_hz", Limit{31500.0, 32500.0}}};

// Twelve units, the last with a DC far beyond the others (and beyond its limit); one more that
// could not be measured.
const std::vector<double> kDcToRms{0.001,  0.0012, 0.0009, 0.0011, 0.001,  0.0012,
                                   0.0009, 0.0011, 0.001,  0.0012, 0.0009, 0.02};

LotReport lot_report() {
  LotReport r;
  r.lot = "L2026-48";
  r.product = "CCFL inverter 32 kHz";
  r.limits_path = "limits.toml";
  r.rule = DecisionRule::guarded;
  r.limits = kLimits;
  for (std::size_t i = 0; i < kDcToRms.size(); ++i) {
    const std::vector<NamedFigure> measured{
        {"fundamental_hz", 32000.0 + 50.0 * static_cast<double>(i % 5), 0.2},
        {"dc_to_rms", kDcToRms[i], 0.0002}};
    r.units.push_back(judge_unit("inv-" + std::to_string(481 + i),
                                 "inv-" + std::to_string(481 + i) + ".csv", measured, r.limits,
                                 r.rule));
  }
  r.units.push_back(unmeasured_unit("inv-499", "inv-499.csv", "no two whole cycles"));
  r.summary = summarize_lot(r.units, r.limits);
  return r;
}

TEST(LotHtml, UnitTableHistogramsWithLimitsCpkAndControlChartAtKnownCoordinates) {
  const LotReport rep = lot_report();
  std::ostringstream h, j;
  write_lot_html(h, rep);
  write_lot_json(j, rep);
  const std::string html = h.str();
  const json doc = json::parse(j.str());
  expect_sound_page(html);
  EXPECT_GE(expect_keys_match_json(html, doc), 13u * 3);
  EXPECT_NE(html.find("<title>Lot L2026-48 \xE2\x80\x94 13 units, 11 passed</title>"),
            std::string::npos);
  EXPECT_NE(html.find("verdict verdict-fail"), std::string::npos);

  // The unit table: a row per unit, in input order, with its verdict; the failing cell marked
  // by a class and a text marker, not by colour alone.
  const std::size_t table = html.find("<table class=\"units\">");
  ASSERT_NE(table, std::string::npos);
  const std::string units = html.substr(table, html.find("</table>", table) - table);
  EXPECT_EQ(count(units, "<tr>"), 1 + rep.units.size());
  std::size_t at = 0;
  for (const LotUnit& u : rep.units) {
    const std::size_t p = units.find("<strong>" + u.id + "</strong>");
    ASSERT_NE(p, std::string::npos) << u.id;
    EXPECT_GT(p, at);
    at = p;
  }
  EXPECT_NE(units.find("data-key=\"units.11.verdict\" data-value=\"fail\""), std::string::npos);
  EXPECT_NE(units.find("data-key=\"units.12.verdict\" data-value=\"not_measured\""),
            std::string::npos);
  EXPECT_NE(units.find("data-key=\"units.3.figures.dc_to_rms.value\""), std::string::npos);
  EXPECT_NE(units.find("data-key=\"units.3.figures.dc_to_rms.u95\""), std::string::npos);
  EXPECT_EQ(count(units, "class=\"num cell-fail\""), 1u);
  EXPECT_EQ(count(units, "\xE2\x9C\x97 fail</strong>"), 1u);
  EXPECT_NE(html.find("<li>inv-499, not_measured: no two whole cycles</li>"), std::string::npos);

  // A histogram per limited figure, with both limits as rules at their place on the x scale.
  for (std::size_t k = 0; k < kLimits.size(); ++k) {
    const std::string svg = chart_svg(html, "hist-" + std::to_string(k + 1));
    ASSERT_FALSE(svg.empty()) << k;
    EXPECT_NE(svg.find("class=\"bars s-hist\""), std::string::npos);
    static const std::regex data_x("data-x=\"(\\S+) (\\S+) (\\S+) (\\S+) 0 ");
    std::smatch m;
    ASSERT_TRUE(std::regex_search(svg, m, data_x));
    const svg::Scale x{std::stod(m[1]), std::stod(m[2]), std::stod(m[3]), std::stod(m[4])};
    EXPECT_DOUBLE_EQ(x.p0, svg::kMarginLeft);
    EXPECT_DOUBLE_EQ(x.p1, kLotChartW - svg::kMarginRight);
    for (const double limit : {*kLimits[k].second.min, *kLimits[k].second.max}) {
      const std::string px = coord(x(limit));
      EXPECT_NE(svg.find("<line class=\"rule s-limit\" x1=\"" + px + "\""), std::string::npos)
          << kLimits[k].first << " " << limit << " at " << px;
    }
    // The Cpk (and Cp, mean, σ) in the caption and in the text alternative.
    const FigureStats& st = rep.summary.figures[k].second;
    ASSERT_TRUE(st.cpk);
    char cpk[32];
    std::snprintf(cpk, sizeof cpk, "Cpk %.2f", *st.cpk);
    EXPECT_NE(svg.find(std::string("<figcaption>")), std::string::npos);
    EXPECT_NE(svg.substr(svg.find("<figcaption>")).find(cpk), std::string::npos) << svg;
    EXPECT_NE(svg.substr(svg.find("<desc")).find(cpk), std::string::npos);
    EXPECT_NE(svg.find("Cp "), std::string::npos);
    EXPECT_NE(html.find("data-key=\"summary.figures." + kLimits[k].first + ".cpk\""),
              std::string::npos);
  }

  // The control chart of dc_to_rms: point i (unit i) at x = kMarginLeft + (i + ½)/n · plot
  // width, y on the scale of nice_span(values, LCL, UCL); the outlier flagged with its title.
  const FigureStats& st = rep.summary.figures[0].second;
  ASSERT_TRUE(st.chart);
  ASSERT_EQ(st.chart->beyond, std::vector<std::size_t>{11});
  const std::string svg = chart_svg(html, "control-1");
  ASSERT_FALSE(svg.empty());
  std::vector<double> ends = kDcToRms;
  ends.push_back(st.chart->lcl);
  ends.push_back(st.chart->ucl);
  const svg::Span span = padded_span(ends);
  const svg::Scale y{span.lo, span.hi, kLotChartH - svg::kMarginBottom, svg::kMarginTop};
  const double n = static_cast<double>(kDcToRms.size());
  const double plot_w = kLotChartW - svg::kMarginLeft - svg::kMarginRight;
  for (std::size_t i = 0; i < kDcToRms.size(); ++i) {
    const double x = svg::kMarginLeft + (static_cast<double>(i) + 0.5) / n * plot_w;
    const std::string cls = i == 11 ? "marker s-flag" : "marker s-point";
    const std::string marker = "<circle class=\"" + cls + "\" cx=\"" + coord(x) + "\" cy=\"" +
                               coord(y(kDcToRms[i])) + "\" r=\"3\"><title>" + rep.units[i].id +
                               ": ";
    EXPECT_NE(svg.find(marker), std::string::npos) << i << ": " << marker;
  }
  EXPECT_NE(svg.find("above the upper control limit"), std::string::npos);
  // One flagged point (the legend draws one more marker of the class, without a title).
  static const std::regex flag_point("<circle class=\"marker s-flag\"[^>]*><title>");
  EXPECT_EQ(std::distance(std::sregex_iterator(svg.begin(), svg.end(), flag_point),
                          std::sregex_iterator()),
            1);
  EXPECT_NE(svg.find("<line class=\"rule s-target\" x1=\"" + coord(svg::kMarginLeft) + "\" y1=\"" +
                     coord(y(st.chart->center)) + "\""),
            std::string::npos);
  EXPECT_NE(svg.find("<line class=\"rule s-fit\" x1=\"" + coord(svg::kMarginLeft) + "\" y1=\"" +
                     coord(y(st.chart->ucl)) + "\""),
            std::string::npos);
}

TEST(LotHtml, AllPassedIsAPassBannerWithoutCaution) {
  LotReport r;
  r.limits = {{"dc_to_rms", Limit{-0.01, 0.01}}};
  for (int i = 0; i < 3; ++i)
    r.units.push_back(judge_unit("u" + std::to_string(i), "u.csv",
                                 {{"dc_to_rms", 0.001 * i, std::nullopt}}, r.limits,
                                 DecisionRule::simple));
  r.summary = summarize_lot(r.units, r.limits);
  std::ostringstream h, j;
  write_lot_html(h, r);
  write_lot_json(j, r);
  expect_sound_page(h.str());
  expect_keys_match_json(h.str(), json::parse(j.str()));
  EXPECT_NE(h.str().find("verdict verdict-pass"), std::string::npos);
  EXPECT_EQ(h.str().find("class=\"caution\""), std::string::npos);
}

// ---------------------------------------------------------------------------------------------
// trend

RecordedUnit recorded(const std::string& lot, const std::string& id, double dc, double rms) {
  const bool fail = rms > 0.020;
  RecordedUnit u;
  u.lot = lot;
  u.product = "tube supply 32 kHz";
  u.station = "bench-7";
  u.lot_first_judged_utc = "2026-03-0" + lot.substr(1) + "T08:00:00Z";
  u.limits = "dc_offset_a min=-0.001 max=0.001\nrms_a min=0.015 max=0.020\n";
  u.unit_id = id;
  u.verdict = fail ? "fail" : "pass";
  u.deciding_figure = fail ? "rms_a" : "";
  u.judged_utc = u.lot_first_judged_utc;
  u.figures.push_back({"dc_offset_a", dc, 4e-6, "pass"});
  u.figures.push_back({"rms_a", rms, 2e-5, fail ? "fail" : "pass"});
  return u;
}

TEST(TrendHtml, LotMeansAtKnownCoordinatesTheShiftFlaggedAndRepeatFailuresListed) {
  // Six lots of three units (as trend_cli_test.cpp); lot 6's DC shifted by +0.6 mA, still
  // inside the limits; unit u7 fails on its RMS in lots 2 and 6.
  std::vector<RecordedUnit> units;
  for (int lot = 1; lot <= 6; ++lot) {
    const std::string name = "L" + std::to_string(lot);
    const double shift = lot == 6 ? 0.0006 : 0.0;
    const bool u7 = lot == 2 || lot == 6;
    units.push_back(recorded(name, "a" + std::to_string(lot), 2e-5 * lot + shift, 0.0177));
    units.push_back(recorded(name, "b" + std::to_string(lot), -3e-5 * lot + shift, 0.0176));
    units.push_back(
        recorded(name, u7 ? "u7" : "c" + std::to_string(lot), 1e-5 + shift, u7 ? 0.0226 : 0.0178));
  }
  const Trend t = build_trend(units);
  ASSERT_EQ(t.figures.size(), 2u);
  const TrendFigure& f = t.figures[0];
  ASSERT_TRUE(f.chart);
  bool rule1_at_l6 = false;
  for (const RunRuleHit& hit : f.hits)
    rule1_at_l6 = rule1_at_l6 || (hit.index == 5 && hit.rule == 1);
  ASSERT_TRUE(rule1_at_l6);

  std::ostringstream h, j;
  write_trend_html(h, t, "history.sqlite");
  write_trend_json(j, t, "history.sqlite", Provenance{});
  const std::string html = h.str();
  expect_sound_page(html);
  EXPECT_GE(expect_keys_match_json(html, json::parse(j.str())), 6u * 6);
  EXPECT_NE(html.find("verdict verdict-warn"), std::string::npos);

  // The means lot by lot: point i at x = kMarginLeft + (i + ½)/6 · plot width, y on the scale
  // of nice_span(means, LCL, UCL); L6 flagged with its rule in the title.
  const std::string svg = chart_svg(html, "trend-1");
  ASSERT_FALSE(svg.empty());
  std::vector<double> ends = f.means;
  ends.push_back(f.chart->lcl);
  ends.push_back(f.chart->ucl);
  const svg::Span span = padded_span(ends);
  const svg::Scale y{span.lo, span.hi, kTrendChartH - svg::kMarginBottom, svg::kMarginTop};
  const double plot_w = kTrendChartW - svg::kMarginLeft - svg::kMarginRight;
  std::set<std::size_t> flagged;
  for (const RunRuleHit& hit : f.hits) flagged.insert(hit.index);
  for (std::size_t i = 0; i < f.means.size(); ++i) {
    const double x = svg::kMarginLeft + (static_cast<double>(i) + 0.5) / 6 * plot_w;
    const std::string cls = flagged.count(i) ? "marker s-flag" : "marker s-point";
    const std::string marker = "<circle class=\"" + cls + "\" cx=\"" + coord(x) + "\" cy=\"" +
                               coord(y(f.means[i])) + "\" r=\"3\"><title>lot " + f.lots[i] +
                               ": mean ";
    EXPECT_NE(svg.find(marker), std::string::npos) << i << ": " << marker;
  }
  EXPECT_NE(svg.find("flagged by rule 1 (beyond 3 sigma)"), std::string::npos);
  EXPECT_NE(svg.find("<desc"), std::string::npos);
  EXPECT_NE(svg.substr(svg.find("<desc")).find("L6 by rule 1"), std::string::npos);
  // Lot names along the x axis.
  EXPECT_NE(svg.find(">L1</text>"), std::string::npos);
  EXPECT_NE(svg.find(">L6</text>"), std::string::npos);

  // The table of lots with Cpk and yield, the hits, and the repeat failures.
  EXPECT_NE(html.find("data-key=\"lots.5.figures.dc_offset_a.cpk\""), std::string::npos);
  EXPECT_NE(html.find("data-key=\"lots.5.figures.dc_offset_a.yield\""), std::string::npos);
  EXPECT_NE(html.find("data-key=\"figures.0.run_rule_hits.0.rule\""), std::string::npos);
  EXPECT_NE(html.find("data-key=\"failures.0.unit\" data-value=\"u7\""), std::string::npos);
  EXPECT_NE(html.find("data-key=\"failures.0.failed\" data-value=\"2\""), std::string::npos);
  EXPECT_NE(html.find("data-key=\"failing_figures.rms_a\" data-value=\"2\""), std::string::npos);
  EXPECT_NE(html.find("lopside.trend/1"), std::string::npos);
}

}  // namespace
}  // namespace lopside
