// The HTML report of `lopside lot` (lot_report.hpp, issue 12 item 3): the lot's verdict, the unit
// table with every limited figure and its u95, and per limited figure a histogram with the limits
// and the capability indices, and an individuals control chart. Every headline figure in a table
// cell carries data-key (its dot path in the --json output) and data-value (that JSON number,
// %.17g), so a browser test can hold the page against the JSON.
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "html_cells.hpp"
#include "lopside/html_page.hpp"
#include "lopside/lot_report.hpp"
#include "lopside/measure_report.hpp"
#include "lopside/report_format.hpp"
#include "lopside/svg_plot.hpp"

namespace lopside {
namespace {

using namespace html_detail;

const char* const kPlusMinus = " \xC2\xB1 ";  // " ± "
const char* const kDash = "\xE2\x80\x94";     // "—"
const char* const kCross = "\xE2\x9C\x97";    // "✗"

const char* verdict_words(LotVerdict v) {
  switch (v) {
    case LotVerdict::pass:
      return "\xE2\x9C\x93\xC2\xA0pass";
    case LotVerdict::fail:
      return "\xE2\x9C\x97\xC2\xA0"
             "FAIL";
    case LotVerdict::conditional:
      return "?\xC2\xA0"
             "conditional";
    case LotVerdict::not_measured:
      break;
  }
  return "\xE2\x80\x94\xC2\xA0not\xC2\xA0measured";  // an em dash: no break after it
}

std::string verdict_class(LotVerdict v) {
  switch (v) {
    case LotVerdict::pass:
      return "verdict-cell cell-pass";
    case LotVerdict::fail:
      return "verdict-cell cell-fail";
    case LotVerdict::conditional:
      return "verdict-cell cell-conditional";
    case LotVerdict::not_measured:
      break;
  }
  return "verdict-cell cell-not-measured";
}

/// One unit's limited figure: value and u95 each keyed, and a text marker when it did not pass
/// (the class styles it; the marker says it without colour).
Cell figure_cell(const LotFigure& f, std::size_t unit_index) {
  if (!f.value) return text_cell(kDash);
  const std::string key =
      "units." + std::to_string(unit_index) + ".figures." + f.name;  // + ".value" / ".u95"
  const bool keyed = addressable(f.name);
  const std::string text = lot_figure_text(f.name, *f.value);
  const std::size_t at = text.find(kPlusMinus);
  std::string html;
  if (at == std::string::npos || !keyed) {
    html = keyed ? "<span" + key_attrs(key + ".value", num17(f.value->value)) + ">" + escape(text) +
                       "</span>"
                 : escape(text);
  } else {
    html = "<span" + key_attrs(key + ".value", num17(f.value->value)) + ">" +
           escape(text.substr(0, at)) + "</span> \xC2\xB1 <span" +
           key_attrs(key + ".u95", num17(*f.value->u95)) + ">" +
           escape(text.substr(at + std::string(kPlusMinus).size())) + "</span>";
  }
  std::string css;
  switch (f.decision.verdict) {
    case LotVerdict::fail:
      html += " <strong class=\"mark\" title=\"outside the limits\">" + std::string(kCross) +
              " fail</strong>";
      css = "cell-fail";
      break;
    case LotVerdict::conditional:
      html += " <strong class=\"mark\" title=\"the u95 interval holds a limit\">? cond.</strong>";
      css = "cell-conditional";
      break;
    default:
      break;
  }
  return {html, {}, css};
}

/// The ids and values of the units that have limited figure `name`, in lot order: the values
/// the statistics and the control chart were made from (lot_statistics), so point i is unit
/// ids[i].
struct Series {
  std::vector<std::string> ids;
  std::vector<double> values;
};

Series series_of(const LotReport& r, const std::string& name) {
  Series s;
  for (const LotUnit& u : r.units)
    for (const LotFigure& f : u.figures)
      if (f.name == name && f.value) {
        s.ids.push_back(u.id);
        s.values.push_back(f.value->value);
      }
  return s;
}

const Limit* limit_of(const LotReport& r, const std::string& name) {
  for (const auto& [n, l] : r.limits)
    if (n == name) return &l;
  return nullptr;
}

/// The 1-2-5 × 10^k step nearest to `raw` (on a log scale, roughly).
double nice_bin(double raw) {
  if (!(raw > 0) || !std::isfinite(raw)) return 1;
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  const double m = raw / mag;
  return (m < 1.5 ? 1 : m < 3 ? 2 : m < 7 ? 5 : 10) * mag;
}

std::string histogram(const std::string& id, const std::string& name, const Series& s,
                      const Limit* limit, const FigureStats& st) {
  const std::string unit = figure_unit(name);
  // The bins span the values and the limits, so that the limits are always in view: about
  // 3√n bins (10 to 40) over that span, of a 1-2-5 width, aligned to multiples of it.
  std::vector<double> ends = s.values;
  if (limit && limit->min) ends.push_back(*limit->min);
  if (limit && limit->max) ends.push_back(*limit->max);
  double lo = *std::min_element(ends.begin(), ends.end());
  double hi = *std::max_element(ends.begin(), ends.end());
  if (!(hi > lo)) {
    const double d = lo != 0 ? 0.05 * std::fabs(lo) : 1.0;
    lo -= d;
    hi += d;
  }
  const double target =
      std::clamp(std::round(3 * std::sqrt(static_cast<double>(s.values.size()))), 10.0, 40.0);
  const double width = nice_bin((hi - lo) / target);
  const double first = std::floor(lo / width) * width;
  const auto bins = static_cast<std::size_t>(std::max(1.0, std::ceil((hi - first) / width)));
  std::vector<double> counts(bins + 1, 0.0), centres(bins + 1);
  for (std::size_t b = 0; b <= bins; ++b)
    centres[b] = first + (static_cast<double>(b) + 0.5) * width;
  for (double v : s.values) {
    const double f = std::floor((v - first) / width);
    const std::size_t b = f <= 0 ? 0 : std::min(bins, static_cast<std::size_t>(f));
    counts[b] += 1;
  }
  const double tallest = *std::max_element(counts.begin(), counts.end());
  const double last = first + static_cast<double>(bins + 1) * width;

  svg::Chart chart(520, 280);
  chart.x_axis({first - 0.5 * width, last + 0.5 * width}, name, unit);
  // At least 4 on the count axis: whole-number ticks for a small lot.
  chart.y_axis(svg::nice_span({0.0, std::max(tallest, 4.0)}, true), "units", "");
  chart.bars(centres, counts, width, "s-hist", "units per bin");
  if (limit && limit->min)
    chart.x_rule(*limit->min, "s-limit", "min " + format_si(*limit->min, unit));
  if (limit && limit->max)
    chart.x_rule(*limit->max, "s-limit", "max " + format_si(*limit->max, unit));
  chart.x_rule(st.mean, "s-target");  // unlabelled: a label would crowd the limits' labels

  std::string title = name + unit_suffix(unit) + ": " + std::to_string(s.values.size()) +
                      " units, Cpk " + index_text(st.cpk);
  if (st.cp) title += ", Cp " + index_text(st.cp);
  title += ", mean " + si(st.mean, unit) + ", \xCF\x83 " + si(st.sd, unit);
  std::string d =
      "Histogram of " + name + " over the " + std::to_string(s.values.size()) +
      " measured units, bins " + format_si(width, unit) + " wide from " + format_si(first, unit) +
      " to " + format_si(last, unit) + "; the tallest bin holds " + fixed(tallest, 0) +
      " unit(s). Limits: " + (limit ? lot_limit_text(name, *limit) : std::string("none")) +
      " (dashed rules). Mean " + si(st.mean, unit) + " (grey rule), sd " + si(st.sd, unit) +
      ", min " + si(st.min, unit) + ", max " + si(st.max, unit) + "; yield " +
      fixed(100 * st.yield, 1) + " %; Cp " + index_text(st.cp) + ", Cpk " + index_text(st.cpk) +
      ", Pp " + index_text(st.pp) + ", Ppk " + index_text(st.ppk) + ".";
  return chart.render(id, title, d);
}

std::string control_chart(const std::string& id, const std::string& name, const Series& s,
                          const ControlChart& c) {
  const std::string unit = figure_unit(name);
  const std::size_t n = s.values.size();
  std::vector<double> xs(n);
  for (std::size_t i = 0; i < n; ++i) xs[i] = static_cast<double>(i + 1);
  std::vector<double> ends = s.values;
  ends.push_back(c.lcl);
  ends.push_back(c.ucl);

  svg::Chart chart(520, 280);
  chart.x_axis({0.5, static_cast<double>(n) + 0.5}, "unit, in lot order", "");
  chart.y_axis(svg::padded_span(ends), name, unit);
  chart.x_labels(xs, s.ids);
  chart.y_rule(c.ucl, "s-fit", "UCL " + format_si(c.ucl, unit));
  chart.y_rule(c.lcl, "s-fit", "LCL " + format_si(c.lcl, unit));
  chart.y_rule(c.center, "s-target", "centre " + format_si(c.center, unit));
  chart.line(xs, s.values, "s-current");

  // Points beyond the control limits, and points whose moving range from the previous unit is
  // beyond its limit, are flagged; every point says in its title which unit it is.
  std::vector<bool> flagged(n, false);
  std::vector<std::string> why(n);
  for (std::size_t i : c.beyond)
    if (i < n) {
      flagged[i] = true;
      why[i] =
          s.values[i] > c.ucl ? "above the upper control limit" : "below the lower control limit";
    }
  for (std::size_t i : c.mr_beyond)
    if (i < n && i > 0) {
      flagged[i] = true;
      why[i] += std::string(why[i].empty() ? "" : "; ") + "jump from " + s.ids[i - 1] + " of " +
                format_si(std::fabs(s.values[i] - s.values[i - 1]), unit) +
                ", beyond the moving-range limit " + format_si(c.mr_ucl, unit);
    }
  std::vector<double> ok_x, ok_y, flag_x, flag_y;
  std::vector<std::string> ok_t, flag_t;
  for (std::size_t i = 0; i < n; ++i) {
    const std::string t = s.ids[i] + ": " + format_si(s.values[i], unit);
    if (flagged[i]) {
      flag_x.push_back(xs[i]);
      flag_y.push_back(s.values[i]);
      flag_t.push_back(t + " \xE2\x80\x94 " + why[i]);
    } else {
      ok_x.push_back(xs[i]);
      ok_y.push_back(s.values[i]);
      ok_t.push_back(t);
    }
  }
  chart.markers(ok_x, ok_y, "s-point", "unit", ok_t);
  chart.markers(flag_x, flag_y, "s-flag", "flagged", flag_t);

  std::string d = "Individuals control chart of " + name + " over " + std::to_string(n) +
                  " units in lot order (left to right): centre line " + format_si(c.center, unit) +
                  ", control limits " + format_si(c.lcl, unit) + " to " + format_si(c.ucl, unit) +
                  " (centre \xC2\xB1 3 \xCF\x83 within, \xCF\x83 from the mean moving range " +
                  format_si(c.mr_center, unit) + "). ";
  std::size_t nflag = 0;
  for (bool f : flagged) nflag += f ? 1 : 0;
  if (nflag == 0) {
    d += "No point is flagged.";
  } else {
    d += std::to_string(nflag) + " flagged point(s): ";
    bool first = true;
    for (std::size_t i = 0; i < n; ++i) {
      if (!flagged[i]) continue;
      d += (first ? "" : "; ") + s.ids[i] + " " + format_si(s.values[i], unit) + ", " + why[i];
      first = false;
    }
    d += ".";
  }
  return chart.render(id, name + unit_suffix(unit) + ": control chart of the units", d);
}

}  // namespace

void write_lot_html(std::ostream& out, const LotReport& r) {
  const LotSummary& s = r.summary;
  const std::string lot_name = r.lot.empty() ? std::string("Lot") : "Lot " + r.lot;
  std::string subtitle = r.product.empty() ? std::string() : r.product + " \xC2\xB7 ";
  subtitle += "limits " + r.limits_path + " \xC2\xB7 " + to_string(r.rule) + " decisions";
  html::page_begin(out,
                   lot_name + " \xE2\x80\x94 " + std::to_string(s.count) + " units, " +
                       std::to_string(s.passed) + " passed",
                   subtitle);

  // The verdict first: how many did not pass, which, and on what.
  const double yield = s.count ? static_cast<double>(s.passed) / static_cast<double>(s.count) : 0.0;
  const bool all_passed = s.count > 0 && s.passed == s.count;
  std::string headline;
  if (all_passed) {
    headline = "All " + std::to_string(s.count) + " units passed";
  } else {
    std::vector<std::string> parts;
    if (s.failed) parts.push_back(std::to_string(s.failed) + " failed");
    if (s.conditional) parts.push_back(std::to_string(s.conditional) + " conditional");
    if (s.not_measured) parts.push_back(std::to_string(s.not_measured) + " not measured");
    headline = std::to_string(s.count - s.passed) + " of " + std::to_string(s.count) +
               " units did not pass";
    for (std::size_t i = 0; i < parts.size(); ++i) headline += (i == 0 ? ": " : ", ") + parts[i];
  }
  std::vector<std::string> lines;
  lines.push_back("Yield " + escape(fixed(100 * yield, 1)) +
                  " % (units that passed every limited figure, " + escape(to_string(r.rule)) +
                  " decisions).");
  for (const LotVerdict v : {LotVerdict::fail, LotVerdict::conditional, LotVerdict::not_measured}) {
    std::string list;
    std::size_t shown_units = 0, total = 0;
    for (const LotUnit& u : r.units) {
      if (u.verdict != v) continue;
      ++total;
      if (shown_units < 8) {
        list +=
            (shown_units ? "; " : "") + escape(u.id) + " (" + escape(lot_deciding_text(u)) + ")";
        ++shown_units;
      }
    }
    if (total == 0) continue;
    if (total > shown_units) list += "; and " + std::to_string(total - shown_units) + " more";
    lines.push_back("<strong>" + escape(to_string(v)) + ":</strong> " + list + ".");
  }
  for (const auto& [name, st] : s.figures) {
    // 1.33 is the capability commonly asked of an established process (AIAG SPC manual);
    // below 1 the process spreads beyond its limits.
    if (st.cpk && std::isfinite(*st.cpk) && *st.cpk < 1.33)
      lines.push_back("Cpk of " + escape(name) + " is " + escape(fixed(*st.cpk, 2)) +
                      (*st.cpk < 1 ? ": the process spreads beyond its limits."
                                   : ": below the 1.33 commonly asked of a settled process."));
  }
  html::verdict_banner(out, all_passed ? "pass" : (s.failed ? "fail" : "warn"), headline, lines);
  if (!all_passed) html::caution(out, kHighVoltageCaution);

  html::section_begin(out, "counts", "The lot in numbers");
  write_table(
      out, {"units", "passed", "failed", "conditional", "not measured", "yield"},
      {{count_cell(s.count, "summary.count"), count_cell(s.passed, "summary.passed"),
        count_cell(s.failed, "summary.failed"), count_cell(s.conditional, "summary.conditional"),
        count_cell(s.not_measured, "summary.not_measured"),
        keyed_cell(fixed(100 * yield, 1) + " %", "summary.yield", yield)}},
      0, "figures");
  // The statistics of each limited figure over the units that have it.
  std::vector<std::vector<Cell>> stats;
  for (const auto& [name, st] : s.figures) {
    const std::string unit = figure_unit(name);
    const std::string k = "summary.figures." + name + ".";
    const bool keyed = addressable(name);
    std::vector<Cell> row{
        text_cell(name + unit_suffix(unit)),
        keyed ? count_cell(st.count, k + "count") : text_cell(std::to_string(st.count))};
    row.push_back(st.count ? keyed_cell(si(st.mean, unit), k + "mean", st.mean, keyed)
                           : text_cell("n/a"));
    row.push_back(st.count >= 2 ? keyed_cell(si(st.sd, unit), k + "sd", st.sd, keyed)
                                : text_cell("n/a"));
    row.push_back(keyed_cell(fixed(100 * st.yield, 1) + " %", k + "yield", st.yield, keyed));
    for (const auto& [label, v] : std::vector<std::pair<const char*, std::optional<double>>>{
             {"cp", st.cp}, {"cpk", st.cpk}, {"pp", st.pp}, {"ppk", st.ppk}})
      row.push_back(v ? keyed_cell(index_text(v), k + label, *v, keyed) : text_cell("n/a"));
    stats.push_back(std::move(row));
  }
  write_table(out, {"figure", "units", "mean", "sd", "yield", "Cp", "Cpk", "Pp", "Ppk"}, stats, 1,
              "figures stats");
  out << "<p>Cp and Cpk from the short-term \xCF\x83 (mean moving range / 1.128), Pp and Ppk "
         "from the sample standard deviation; with one limit, Cpk and Ppk are one-sided and Cp, "
         "Pp need both limits (n/a). Yield: the share of the units with the figure that lie "
         "within its limits.</p>\n";
  html::section_end(out);

  // The unit table.
  html::section_begin(out, "units", "Units");
  std::vector<std::string> header{"#", "unit", "verdict"};
  for (const auto& [name, l] : r.limits) header.push_back(name + unit_suffix(figure_unit(name)));
  std::vector<std::vector<Cell>> rows;
  for (std::size_t i = 0; i < r.units.size(); ++i) {
    const LotUnit& u = r.units[i];
    const std::string k = "units." + std::to_string(i) + ".";
    std::vector<Cell> row{
        text_cell(std::to_string(i + 1)),
        {"<strong>" + escape(u.id) + "</strong>", key_attrs(k + "id", u.id), {}},
        {escape(verdict_words(u.verdict)), key_attrs(k + "verdict", to_string(u.verdict)),
         verdict_class(u.verdict)}};
    for (const auto& [name, l] : r.limits) {
      const LotFigure* f = nullptr;
      for (const LotFigure& g : u.figures)
        if (g.name == name) f = &g;
      row.push_back(f ? figure_cell(*f, i) : text_cell(kDash));
    }
    rows.push_back(std::move(row));
  }
  // The numeric columns are the number and the figures (from the 4th on).
  out << "<div class=\"table-wrap\"><table class=\"units\">\n<thead><tr>";
  for (std::size_t c = 0; c < header.size(); ++c) {
    const bool num = c >= 3;
    out << "<th scope=\"col\"" << (num || c == 0 ? " class=\"num\"" : "") << ">"
        << escape(header[c]) << "</th>";
  }
  out << "</tr></thead>\n<tbody>\n";
  for (const auto& row : rows) {
    out << "<tr>";
    for (std::size_t c = 0; c < row.size(); ++c) {
      const bool num = c == 0 || c >= 3;
      std::string cls = num ? "num" : "";
      if (!row[c].css.empty()) cls += (cls.empty() ? "" : " ") + row[c].css;
      out << (c == 1 ? "<th scope=\"row\"" : "<td");
      if (!cls.empty()) out << " class=\"" << cls << "\"";
      out << row[c].attrs << ">" << row[c].html << (c == 1 ? "</th>" : "</td>");
    }
    out << "</tr>\n";
  }
  out << "</tbody></table></div>\n";
  out << "<p>Each figure with its expanded uncertainty u95 (95 %). " << kCross
      << " fail: outside the limits" << (r.rule == DecisionRule::guarded ? " with its u95" : "")
      << "; ? cond.: the u95 interval holds a limit (guarded decisions); " << kDash
      << ": not measured.</p>\n";
  std::vector<std::string> why;
  for (const LotVerdict v : {LotVerdict::fail, LotVerdict::conditional, LotVerdict::not_measured})
    for (const LotUnit& u : r.units)
      if (u.verdict == v) why.push_back(u.id + ", " + to_string(v) + ": " + lot_deciding_text(u));
  if (!why.empty()) {
    out << "<h3>Units that did not pass, and the figure that decided</h3>\n";
    html::bullet_list(out, why, "notes");
  }
  html::section_end(out);

  // Per limited figure: its histogram against the limits and its control chart.
  for (std::size_t k = 0; k < s.figures.size(); ++k) {
    const auto& [name, st] = s.figures[k];
    const std::string unit = figure_unit(name);
    html::section_begin(out, "figure-" + std::to_string(k + 1), name + unit_suffix(unit));
    const Series series = series_of(r, name);
    if (series.values.empty()) {
      out << "<p>No unit has this figure: nothing to show.</p>\n";
      html::section_end(out);
      continue;
    }
    const std::string k2 = "summary.figures." + name + ".";
    const bool keyed = addressable(name);
    const Limit* l = limit_of(r, name);
    std::vector<Cell> row{text_cell(l ? lot_limit_text(name, *l) : std::string("none")),
                          keyed_cell(si(st.min, unit), k2 + "min", st.min, keyed),
                          keyed_cell(si(st.max, unit), k2 + "max", st.max, keyed),
                          st.count >= 2 ? keyed_cell(si(st.sigma_within, unit), k2 + "sigma_within",
                                                     st.sigma_within, keyed)
                                        : text_cell("n/a")};
    if (st.chart) {
      row.push_back(
          keyed_cell(si(st.chart->lcl, unit), k2 + "control_chart.lcl", st.chart->lcl, keyed));
      row.push_back(keyed_cell(si(st.chart->center, unit), k2 + "control_chart.center",
                               st.chart->center, keyed));
      row.push_back(
          keyed_cell(si(st.chart->ucl, unit), k2 + "control_chart.ucl", st.chart->ucl, keyed));
      row.push_back(keyed_cell(si(st.chart->mr_ucl, unit), k2 + "control_chart.mr_ucl",
                               st.chart->mr_ucl, keyed));
    }
    std::vector<std::string> head{"limits", "min", "max", "\xCF\x83 within"};
    if (st.chart) head.insert(head.end(), {"LCL", "centre", "UCL", "moving range limit"});
    write_table(out, head, {row}, 1, "figures");
    html::row_begin(out);
    out << histogram("hist-" + std::to_string(k + 1), name, series, limit_of(r, name), st);
    if (st.chart) out << control_chart("control-" + std::to_string(k + 1), name, series, *st.chart);
    html::row_end(out);
    if (!st.chart) out << "<p>A control chart needs at least two units with this figure.</p>\n";
    html::section_end(out);
  }

  html::section_begin(out, "limits", "Limits");
  std::vector<std::vector<Cell>> lim;
  for (const auto& [name, l] : r.limits) {
    const std::string unit = figure_unit(name);
    const bool keyed = addressable(name);
    lim.push_back(
        {text_cell(name + unit_suffix(unit)),
         l.min ? keyed_cell(format_si(*l.min, unit), "limits." + name + ".min", *l.min, keyed)
               : text_cell(kDash),
         l.max ? keyed_cell(format_si(*l.max, unit), "limits." + name + ".max", *l.max, keyed)
               : text_cell(kDash)});
  }
  write_table(out, {"figure", "min", "max"}, lim, 1, "figures");
  out << "<p>Limits file " << escape(r.limits_path) << "; " << escape(to_string(r.rule))
      << " decisions: "
      << (r.rule == DecisionRule::guarded
              ? "a unit passes when its value \xC2\xB1 u95 lies within the limits, fails when "
                "it lies wholly outside, and is conditional otherwise."
              : "a unit passes when its value lies within the limits (both inclusive).")
      << "</p>\n";
  html::section_end(out);

  html::page_end(out,
                 "lopside lot, the same figures as its --json output (schema lopside.lot/1).\n"
                 "Sign convention: positive current flows from the probed lead into electrode "
                 "A, so while i > 0 electrode A is the anode.\nUncertainties are expanded (95 %).");
}

}  // namespace lopside
