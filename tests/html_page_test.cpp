// The HTML page frame (html_page.hpp): self-contained (no request of any kind), escaped, and
// printable on A4.
#include "lopside/html_page.hpp"

#include <gtest/gtest.h>

#include <sstream>
#include <string>
#include <vector>

#include "lopside/svg_plot.hpp"

namespace lopside::html {
namespace {

std::size_t count(const std::string& text, const std::string& what) {
  std::size_t n = 0;
  for (std::size_t p = text.find(what); p != std::string::npos; p = text.find(what, p + 1)) ++n;
  return n;
}

// A page with every part the reports use, a chart included, and hostile text everywhere.
std::string sample_page() {
  std::ostringstream out;
  page_begin(out, "Bench <QA> & \"lot\" 7", "Supply 'B' of 2 lamps");
  verdict_banner(out, "fail", "DC offset <above> limit", {"<b>kept as given</b>"});
  verdict_banner(out, "pass", "All within limits", {});
  verdict_banner(out, "bogus", "Unknown tone", {});
  caution(out, "Mains & 2 kV <present>");
  section_begin(out, "dc", "DC offset & <drift>");
  table(out, {"figure", "value", "u95"}, {{"DC <offset>", "+4.98 mA", "0.21 mA"}, {"RMS"}});
  key_values(out, {{"file", "a<b>.csv"}, {"rate", "1 MS/s"}});
  bullet_list(out, {"clipping & <noise>"});
  bullet_list(out, {});
  row_begin(out);
  svg::Chart chart(400, 200);
  chart.x_axis({0, 0.02}, "time", "s");
  chart.y_axis({-0.03, 0.03}, "current", "A");
  chart.line({0, 0.01, 0.02}, {0, 0.02, 0}, "s-current", "current");
  chart.markers({0.01}, {0.02}, "s-flag", "flag");
  out << chart.render("wave", "Average cycle", "One cycle.");
  row_end(out);
  section_end(out);
  page_end(out, "Sign: positive is <anode> first.\nSchema 1 & 2");
  return out.str();
}

TEST(HtmlPage, RequestsNothing) {
  const std::string page = sample_page();
  // The only URL is the SVG namespace name, which is never fetched.
  EXPECT_EQ(count(page, "http://"), count(page, "xmlns=\"http://www.w3.org/2000/svg\""));
  EXPECT_EQ(count(page, "xmlns=\"http://www.w3.org/2000/svg\""), 1u);
  EXPECT_EQ(page.find("https://"), std::string::npos);
  EXPECT_EQ(page.find("<link"), std::string::npos);
  EXPECT_EQ(page.find("src="), std::string::npos);
  EXPECT_EQ(page.find("@import"), std::string::npos);
  EXPECT_EQ(page.find("@font-face"), std::string::npos);
  EXPECT_NE(page.find("<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
                      "style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:\">"),
            std::string::npos);
}

TEST(HtmlPage, HeadAndFrame) {
  const std::string page = sample_page();
  EXPECT_EQ(page.rfind("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">", 0),
            0u);
  EXPECT_NE(page.find("<meta name=\"viewport\""), std::string::npos);
  EXPECT_NE(page.find("<title>Bench &lt;QA&gt; &amp; &quot;lot&quot; 7</title>"),
            std::string::npos);
  EXPECT_EQ(count(page, "<style>"), 1u);
  EXPECT_EQ(count(page, "<script>"), 1u);
  // page_end: footer, then the script, then the end of the document.
  const std::size_t footer = page.find("<footer");
  const std::size_t script = page.find("<script>");
  ASSERT_NE(footer, std::string::npos);
  EXPECT_LT(footer, script);
  EXPECT_EQ(page.substr(page.size() - 16), "</body>\n</html>\n");
  EXPECT_NE(page.find("Sign: positive is &lt;anode&gt; first.<br>Schema 1 &amp; 2"),
            std::string::npos);
}

TEST(HtmlPage, EscapesText) {
  const std::string page = sample_page();
  EXPECT_NE(page.find("<h1>Bench &lt;QA&gt; &amp; &quot;lot&quot; 7</h1>"), std::string::npos);
  EXPECT_NE(page.find("Supply &#39;B&#39; of 2 lamps"), std::string::npos);
  EXPECT_NE(page.find("<p class=\"headline\">DC offset &lt;above&gt; limit</p>"),
            std::string::npos);
  EXPECT_NE(page.find("<p><b>kept as given</b></p>"), std::string::npos);  // lines as given
  EXPECT_NE(page.find("Mains &amp; 2 kV &lt;present&gt;"), std::string::npos);
  EXPECT_NE(page.find("<section id=\"dc\">\n<h2>DC offset &amp; &lt;drift&gt;</h2>"),
            std::string::npos);
  EXPECT_NE(page.find("<td>DC &lt;offset&gt;</td>"), std::string::npos);
  EXPECT_NE(page.find("<dd>a&lt;b&gt;.csv</dd>"), std::string::npos);
  EXPECT_NE(page.find("<li>clipping &amp; &lt;noise&gt;</li>"), std::string::npos);
  EXPECT_EQ(page.find("<QA>"), std::string::npos);
  EXPECT_EQ(page.find("<drift>"), std::string::npos);
  EXPECT_EQ(count(page, "<ul"), 1u);  // the empty list writes nothing
}

TEST(HtmlPage, VerdictTonesAndTables) {
  const std::string page = sample_page();
  EXPECT_NE(page.find("class=\"verdict verdict-fail\""), std::string::npos);
  EXPECT_NE(page.find("class=\"verdict verdict-pass\""), std::string::npos);
  EXPECT_NE(page.find("class=\"verdict verdict-info\""), std::string::npos);  // unknown tone
  EXPECT_EQ(page.find("verdict-bogus"), std::string::npos);
  EXPECT_NE(page.find("<p class=\"verdict-label\">Fail</p>"), std::string::npos);
  // Columns from numeric_from (1) on are right-aligned figures.
  EXPECT_NE(page.find("<th scope=\"col\">figure</th><th scope=\"col\" class=\"num\">value</th>"),
            std::string::npos);
  EXPECT_NE(page.find("<td class=\"num\">+4.98 mA</td>"), std::string::npos);
  EXPECT_NE(page.find("<table class=\"figures\">"), std::string::npos);
  EXPECT_NE(page.find("<div class=\"chart-row\">\n<figure class=\"chart\" id=\"wave\">"),
            std::string::npos);
}

TEST(HtmlPage, StyleSheetPrintsOnA4AndDefinesSeries) {
  const std::string page = sample_page();
  EXPECT_NE(page.find("@page{size:A4;margin:15mm}"), std::string::npos);
  EXPECT_NE(page.find("@media print{"), std::string::npos);
  EXPECT_NE(page.find("break-inside:avoid"), std::string::npos);
  EXPECT_NE(page.find("max-width:100%;height:auto"), std::string::npos);
  EXPECT_NE(page.find("font-variant-numeric:tabular-nums"), std::string::npos);
  for (const char* cls :
       {".s-current{",    ".s-mirror{", ".s-voltage{",    ".s-even{",       ".s-odd{",
        ".s-floor{",      ".s-band{",   ".s-envelope{",   ".s-fit{",        ".s-flip{",
        ".s-limit{",      ".s-target{", ".s-flag{",       ".s-point{",      ".s-hist{",
        ".s-ok{",         ".s-bad{",    ".verdict-pass{", ".verdict-warn{", ".verdict-fail{",
        ".verdict-info{", ".caution{",  ".chart-row{"})
    EXPECT_NE(page.find(cls), std::string::npos) << cls;
  // Okabe–Ito colours for the main series.
  EXPECT_NE(page.find(".s-current{stroke:#0072B2"), std::string::npos);
  EXPECT_NE(page.find(".s-mirror{stroke:#D55E00"), std::string::npos);
  EXPECT_NE(page.find(".s-voltage{stroke:#009E73"), std::string::npos);
}

TEST(HtmlPage, EmptyPageStillCloses) {
  std::ostringstream out;
  page_begin(out, "", "");
  page_end(out, "");
  const std::string page = out.str();
  EXPECT_NE(page.find("<main>"), std::string::npos);
  EXPECT_NE(page.find("</main>"), std::string::npos);
  EXPECT_EQ(page.find("subtitle\">"), std::string::npos);
  EXPECT_EQ(page.find("http:"), std::string::npos);  // no chart: no URL of any kind
  EXPECT_EQ(page.find("https:"), std::string::npos);
}

}  // namespace
}  // namespace lopside::html
