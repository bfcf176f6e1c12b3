// The page frame of the HTML reports (html_page.hpp): one self-contained file that reads fully
// with scripts disabled and prints on A4. The style sheet below is the only place that knows a
// colour; svg_plot.cpp writes class names only.
#include "lopside/html_page.hpp"

#include "lopside/svg_plot.hpp"

namespace lopside::html {
namespace {

using svg::escape;

// Series colours are the Okabe–Ito palette (M. Okabe, K. Ito, "Color Universal Design (CUD):
// how to make figures and presentations that are friendly to colorblind people", 2008):
// blue #0072B2, vermillion #D55E00, bluish green #009E73, orange #E69F00, sky blue #56B4E9,
// reddish purple #CC79A7, yellow #F0E442. Pairs that must be told apart (even/odd harmonics,
// pass/fail markers, flagged points) also differ in fill or stroke, so a grey printout or a
// reader with any colour-vision deficiency still sees the difference.
//
// Rule order matters: the series classes (.s-…) set both stroke and fill; the element classes
// (.line, .rule, …) that follow them, at the same specificity, switch off what their element
// must not have (a polyline is never filled).
constexpr const char* kStyle = R"css(
:root{color-scheme:light;--ink:#1d2327;--muted:#5b6770;--rule:#d5dbe0;--paper:#fff;--tint:#f4f6f8}
*{box-sizing:border-box}
html{-webkit-text-size-adjust:100%;text-size-adjust:100%}
body{margin:0;background:var(--tint);color:var(--ink);font:15px/1.5 system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans","Liberation Sans","Helvetica Neue",Arial,sans-serif}
.page-head,main,.page-foot{max-width:1100px;margin:0 auto;padding:0 24px}
.page-head{padding-top:20px;padding-bottom:12px;border-bottom:1px solid var(--rule);background:var(--paper)}
.page-head h1{margin:0;font-size:1.6em;line-height:1.25;font-weight:600}
.page-head .subtitle{margin:.25em 0 0;color:var(--muted)}
.page-head .tool{margin:0 0 .2em;font-size:.8em;letter-spacing:.06em;text-transform:uppercase;color:var(--muted)}
main{background:var(--paper);padding-top:8px;padding-bottom:24px}
section{margin:0 0 28px}
h2{font-size:1.2em;font-weight:600;margin:1.2em 0 .5em;padding-bottom:.2em;border-bottom:1px solid var(--rule)}
h3{font-size:1.05em;font-weight:600;margin:1em 0 .4em}
p{margin:.4em 0}
code,kbd,samp,.mono{font-family:ui-monospace,SFMono-Regular,Menlo,Consolas,"Liberation Mono","DejaVu Sans Mono",monospace;font-size:.92em}
.page-foot{padding-top:12px;padding-bottom:24px;font-size:.85em;color:var(--muted)}
.page-foot p{margin:.2em 0}

.verdict{margin:16px 0;padding:12px 16px;border-left:8px solid #5b6770;background:#eef1f3}
.verdict .verdict-label{margin:0;font-size:.8em;font-weight:700;letter-spacing:.08em;text-transform:uppercase}
.verdict .headline{margin:.1em 0 .3em;font-size:1.35em;font-weight:600;line-height:1.3}
.verdict p{margin:.2em 0}
.verdict-pass{border-left-color:#009E73;background:#e5f4ee}
.verdict-pass .verdict-label{color:#00664a}
.verdict-warn{border-left-color:#E69F00;background:#fdf2dc}
.verdict-warn .verdict-label{color:#8a5a00}
.verdict-fail{border-left-color:#D55E00;background:#fbe7dc}
.verdict-fail .verdict-label{color:#a34700}
.verdict-info{border-left-color:#0072B2;background:#e3eff7}
.verdict-info .verdict-label{color:#005a8c}

.caution{margin:16px 0;padding:10px 14px;border:2px solid #1d2327;border-left-width:10px;background:#fcf8d4}
.caution .caution-label{display:block;font-weight:700;letter-spacing:.06em;text-transform:uppercase}
.caution p{margin:0}

.table-wrap{overflow-x:auto;margin:10px 0}
table{border-collapse:collapse;font-size:.93em}
th,td{padding:4px 10px;border-bottom:1px solid var(--rule);text-align:left;vertical-align:top}
thead th{border-bottom:2px solid #9aa5ad;font-weight:600;white-space:nowrap}
tbody tr:nth-child(even){background:#f7f9fa}
th.num,td.num{text-align:right;font-variant-numeric:tabular-nums lining-nums;white-space:nowrap}
td.cell-fail,td.cell-flag{background:#fbe3d6}
td.cell-conditional{background:#fdf3d0}
td.verdict-cell{font-weight:600}
strong.mark{font-weight:700}
table.units td:first-child{font-weight:600}

dl.meta{display:grid;grid-template-columns:max-content 1fr;gap:2px 16px;margin:10px 0;font-size:.93em}
dl.meta div{display:contents}
dl.meta dt{color:var(--muted)}
dl.meta dd{margin:0;overflow-wrap:anywhere}
ul.notes{margin:8px 0;padding-left:1.3em}
ul.notes li{margin:.15em 0}

.chart{margin:14px 0;max-width:100%}
.chart svg{display:block;max-width:100%;height:auto;background:var(--paper);font-family:system-ui,-apple-system,"Segoe UI",Roboto,"Noto Sans","Liberation Sans",Arial,sans-serif}
.chart figcaption{margin-top:4px;font-size:.88em;color:var(--muted)}
.chart-row{display:flex;flex-wrap:wrap;gap:16px;align-items:flex-start}
.chart-row>.chart{flex:1 1 340px;min-width:0}
.chart text{font-size:11px;fill:#1d2327}
.chart text.tick{fill:#3d474e;font-variant-numeric:tabular-nums}
.chart text.axis-name{font-size:12px}
.chart text.rule-text{font-size:10px;fill:#3d474e}
.chart .legend text{font-size:11px}
.grid{fill:none;stroke:#e4e8eb;stroke-width:1}
.axis{fill:none;stroke:#5b6770;stroke-width:1}
.zero{stroke:#9aa5ad;stroke-width:1}

.s-current{stroke:#0072B2;fill:#0072B2}
.s-mirror{stroke:#D55E00;fill:#D55E00;stroke-dasharray:6 3}
.s-voltage{stroke:#009E73;fill:#009E73}
.s-even{stroke:#D55E00;fill:#D55E00;fill-opacity:.3;stroke-width:1.5}
.s-odd{stroke:#0072B2;fill:#0072B2}
.s-floor{stroke:#8a949b;fill:#8a949b;stroke-dasharray:4 3}
.s-band{fill:#56B4E9;fill-opacity:.35;stroke:none}
.s-envelope{fill:#0072B2;fill-opacity:.12;stroke:none}
.s-fit{stroke:#E69F00;fill:#E69F00}
.s-flip{stroke:#CC79A7;fill:#CC79A7;stroke-dasharray:2 3}
.s-limit{stroke:#000;fill:#000;stroke-dasharray:7 4}
.s-target{stroke:#8a949b;fill:#8a949b}
.s-flag{fill:#D55E00;stroke:#000;stroke-width:1.5}
.s-point{fill:#0072B2;stroke:#fff;stroke-width:.75}
.s-hist{fill:#0072B2;fill-opacity:.7;stroke:#0072B2;stroke-width:.75}
.s-ok{fill:#009E73;stroke:#009E73}
.s-bad{fill:#fff;stroke:#D55E00;stroke-width:2}
.s-segment{stroke:#1d2327;fill:#1d2327;stroke-width:2.5;stroke-dasharray:8 3}
.s-boundary{stroke:#9aa5ad;fill:#9aa5ad;stroke-dasharray:1 3}
.s-zero{stroke:#9aa5ad;fill:#9aa5ad}
.s-whisker{stroke:#1d2327}
.s-current-fill{fill:#0072B2;fill-opacity:.45;stroke:#0072B2;stroke-width:.5}
.s-voltage-fill{fill:#009E73;fill-opacity:.45;stroke:#009E73;stroke-width:.5}

.line{fill:none;stroke-width:1.5;stroke-linejoin:round;stroke-linecap:round}
.rule{fill:none;stroke-width:1.25}
.whisker{fill:none;stroke-width:1}
.area,.band{stroke:none}
.marker{stroke-linejoin:round}

.readout{position:absolute;z-index:10;padding:3px 7px;border:1px solid #9aa5ad;background:#fff;color:#1d2327;font-size:12px;font-variant-numeric:tabular-nums;pointer-events:none;box-shadow:0 1px 3px rgba(0,0,0,.15)}
.readout[hidden]{display:none}

@page{size:A4;margin:15mm}
@media print{
body{background:#fff;color:#000;font-size:10pt}
.page-head,main,.page-foot{max-width:none;padding-left:0;padding-right:0;background:#fff}
.page-head{border-bottom:1px solid #000}
.chart-row{display:block}
.chart svg{width:100%;max-width:100%;height:auto}
.chart,figure,table,.table-wrap,.verdict,.caution,dl.meta{break-inside:avoid;page-break-inside:avoid}
h2,h3{break-after:avoid;page-break-after:avoid}
.table-wrap{overflow:visible}
.verdict,.caution,.chart svg,tbody tr{-webkit-print-color-adjust:exact;print-color-adjust:exact}
.readout,.no-print{display:none!important}
}
)css";

// The optional read-out: over a chart, the nearest marker's <title> (within 12 px), else the
// pointer's position in the axes' units from the svg's data-x/data-y maps. The page says
// everything without it (markers carry native <title> tool tips); with no chart it does nothing.
constexpr const char* kScript = R"js(
(function(){
"use strict";
var charts=document.querySelectorAll("figure.chart svg");
if(!charts.length)return;
var box=document.createElement("div");box.className="readout";box.hidden=true;
document.body.appendChild(box);
function axis(svg,n){var m=(svg.getAttribute("data-"+n)||"").split(" ");
if(m.length<6)return null;
return{d0:+m[0],d1:+m[1],p0:+m[2],p1:+m[3],log:m[4]==="1",e:+m[5],u:m.slice(6).join(" ")};}
function value(s,p){var t=(p-s.p0)/(s.p1-s.p0);
if(s.log){var a=Math.log10(s.d0),b=Math.log10(s.d1);return Math.pow(10,a+t*(b-a));}
return s.d0+t*(s.d1-s.d0);}
function inside(s,p){return p>=Math.min(s.p0,s.p1)&&p<=Math.max(s.p0,s.p1);}
function text(s,v){var x=(v/Math.pow(10,s.e)).toPrecision(4).replace("-","\u2212");
return s.u?x+" "+s.u:x;}
Array.prototype.forEach.call(charts,function(svg){
var sx=axis(svg,"x"),sy=axis(svg,"y"),marks=svg.querySelectorAll("circle.marker");
svg.addEventListener("mousemove",function(ev){
var m=svg.getScreenCTM&&svg.getScreenCTM();if(!m){box.hidden=true;return;}
var pt=svg.createSVGPoint();pt.x=ev.clientX;pt.y=ev.clientY;pt=pt.matrixTransform(m.inverse());
var best=null,bd=144;
for(var i=0;i<marks.length;i++){var dx=marks[i].cx.baseVal.value-pt.x,dy=marks[i].cy.baseVal.value-pt.y;
if(dx*dx+dy*dy<bd){bd=dx*dx+dy*dy;best=marks[i];}}
var t="";
if(best){var tt=best.querySelector("title");t=tt?tt.textContent:"";}
else if(sx&&sy&&inside(sx,pt.x)&&inside(sy,pt.y)){t=text(sx,value(sx,pt.x))+", "+text(sy,value(sy,pt.y));}
if(!t){box.hidden=true;return;}
box.textContent=t;box.hidden=false;
box.style.left=(ev.pageX+14)+"px";box.style.top=(ev.pageY+14)+"px";});
svg.addEventListener("mouseleave",function(){box.hidden=true;});});
})();
)js";

/// Text with its line breaks kept as <br>: footers carry several short statements.
std::string escaped_lines(const std::string& text) {
  std::string out;
  std::size_t start = 0;
  while (true) {
    const std::size_t nl = text.find('\n', start);
    out += escape(text.substr(start, nl == std::string::npos ? std::string::npos : nl - start));
    if (nl == std::string::npos) break;
    out += "<br>";
    start = nl + 1;
  }
  return out;
}

}  // namespace

void page_begin(std::ostream& out, const std::string& title, const std::string& subtitle) {
  // charset first: it must fall within the first 1024 bytes. The policy blocks every request;
  // data: images are allowed only for a future embedded picture, never fetched.
  out << "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
      << "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
         "style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:\">\n"
      << "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
      << "<title>" << escape(title) << "</title>\n<style>" << kStyle << "</style>\n</head>\n"
      << "<body>\n<header class=\"page-head\">\n<p class=\"tool\">lopside</p>\n<h1>"
      << escape(title) << "</h1>\n";
  if (!subtitle.empty()) out << "<p class=\"subtitle\">" << escape(subtitle) << "</p>\n";
  out << "</header>\n<main>\n";
}

void page_end(std::ostream& out, const std::string& footer_text) {
  out << "</main>\n<footer class=\"page-foot\">\n";
  if (!footer_text.empty()) out << "<p>" << escaped_lines(footer_text) << "</p>\n";
  out << "</footer>\n<script>" << kScript << "</script>\n</body>\n</html>\n";
}

void section_begin(std::ostream& out, const std::string& id, const std::string& heading) {
  out << "<section id=\"" << escape(id) << "\">\n<h2>" << escape(heading) << "</h2>\n";
}

void section_end(std::ostream& out) {
  out << "</section>\n";
}

void verdict_banner(std::ostream& out, const std::string& tone, const std::string& headline,
                    const std::vector<std::string>& lines) {
  // The tone is said in words as well as in colour: the label is what a grey printout shows.
  std::string t = tone, label = "Note";
  if (t == "pass")
    label = "Pass";
  else if (t == "warn")
    label = "Warning";
  else if (t == "fail")
    label = "Fail";
  else
    t = "info";
  out << "<div class=\"verdict verdict-" << t << "\" role=\"status\">\n<p class=\"verdict-label\">"
      << label << "</p>\n<p class=\"headline\">" << escape(headline) << "</p>\n";
  for (const std::string& line : lines) out << "<p>" << line << "</p>\n";
  out << "</div>\n";
}

void caution(std::ostream& out, const std::string& text) {
  out << "<aside class=\"caution\" role=\"note\"><p><strong class=\"caution-label\">"
      << "Caution: high voltage</strong> " << escape(text) << "</p></aside>\n";
}

namespace {
void write_table(std::ostream& out, const std::vector<std::string>& header,
                 const std::vector<std::vector<std::string>>& rows, std::size_t numeric_from,
                 const std::string& css_class, bool cells_are_html) {
  auto cell = [numeric_from](std::size_t column) {
    return column >= numeric_from ? " class=\"num\"" : "";
  };
  out << "<div class=\"table-wrap\"><table";
  if (!css_class.empty()) out << " class=\"" << escape(css_class) << "\"";
  out << ">\n";
  if (!header.empty()) {
    out << "<thead><tr>";
    for (std::size_t c = 0; c < header.size(); ++c)
      out << "<th scope=\"col\"" << cell(c) << ">" << escape(header[c]) << "</th>";
    out << "</tr></thead>\n";
  }
  out << "<tbody>\n";
  for (const auto& row : rows) {
    out << "<tr>";
    for (std::size_t c = 0; c < row.size(); ++c)
      out << "<td" << cell(c) << ">" << (cells_are_html ? row[c] : escape(row[c])) << "</td>";
    out << "</tr>\n";
  }
  out << "</tbody></table></div>\n";
}
}  // namespace

void table(std::ostream& out, const std::vector<std::string>& header,
           const std::vector<std::vector<std::string>>& rows, std::size_t numeric_from,
           const std::string& css_class) {
  write_table(out, header, rows, numeric_from, css_class, false);
}

void table_html(std::ostream& out, const std::vector<std::string>& header,
                const std::vector<std::vector<std::string>>& rows, std::size_t numeric_from,
                const std::string& css_class) {
  write_table(out, header, rows, numeric_from, css_class, true);
}

void key_values(std::ostream& out, const std::vector<std::pair<std::string, std::string>>& pairs) {
  if (pairs.empty()) return;
  out << "<dl class=\"meta\">\n";
  for (const auto& [key, value] : pairs)
    out << "<div><dt>" << escape(key) << "</dt><dd>" << escape(value) << "</dd></div>\n";
  out << "</dl>\n";
}

void bullet_list(std::ostream& out, const std::vector<std::string>& items,
                 const std::string& css_class) {
  if (items.empty()) return;
  out << "<ul";
  if (!css_class.empty()) out << " class=\"" << escape(css_class) << "\"";
  out << ">\n";
  for (const std::string& item : items) out << "<li>" << escape(item) << "</li>\n";
  out << "</ul>\n";
}

void row_begin(std::ostream& out) {
  out << "<div class=\"chart-row\">\n";
}

void row_end(std::ostream& out) {
  out << "</div>\n";
}

}  // namespace lopside::html
