// The HTML report of `lopside trend` (trend_report.hpp, issue 12 item 3): per limited figure the
// lot means lot by lot with their control limits and the points the run rules flag, the lots
// with Cpk and yield, and the units that failed again and again. Every headline figure in a
// table cell carries data-key (its dot path in the --json output) and data-value (that JSON
// number, %.17g), so a browser test can hold the page against the JSON.
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
#include "lopside/trend_report.hpp"

namespace lopside {
namespace {

using namespace html_detail;

const char* const kDash = "\xE2\x80\x94";  // "—"

std::string yield_text(const TrendLot& l) {
  if (l.units == 0) return "n/a";
  return fixed(100.0 * static_cast<double>(l.passed) / static_cast<double>(l.units), 1) + " %";
}

/// "dc_offset_a" or "dc_offset_a (tube supply 32 kHz)": a figure of one product.
std::string figure_title(const TrendFigure& f) {
  return f.name + unit_suffix(figure_unit(f.name)) +
         (f.product.empty() ? std::string() : ", " + f.product);
}

/// The lots of t.lots that make up figure f's points, in order: the lots of f's product that
/// have the figure with at least one value (as build_trend collects them). Indices into t.lots
/// and into each lot's figures.
struct FigurePoint {
  std::size_t lot = 0, figure = 0;
};

std::vector<FigurePoint> points_of(const Trend& t, const TrendFigure& f) {
  std::vector<FigurePoint> out;
  for (std::size_t i = 0; i < t.lots.size(); ++i) {
    const TrendLot& l = t.lots[i];
    if (l.product != f.product) continue;
    for (std::size_t k = 0; k < l.figures.size(); ++k)
      if (l.figures[k].first == f.name && l.figures[k].second.count > 0) out.push_back({i, k});
  }
  return out;
}

/// Which rules flagged point i, in words: "rule 1 (beyond 3 sigma) and rule 2 (…)".
std::string rules_at(const TrendFigure& f, std::size_t i) {
  std::string s;
  for (const RunRuleHit& h : f.hits)
    if (h.index == i)
      s += (s.empty() ? "" : " and ") + std::string("rule ") + std::to_string(h.rule) + " (" +
           run_rule_text(h.rule) + ")";
  return s;
}

std::string means_chart(const std::string& id, const TrendFigure& f) {
  const std::string unit = figure_unit(f.name);
  const std::size_t n = f.means.size();
  std::vector<double> xs(n), ends = f.means;
  for (std::size_t i = 0; i < n; ++i) xs[i] = static_cast<double>(i + 1);
  if (f.chart) {
    ends.push_back(f.chart->lcl);
    ends.push_back(f.chart->ucl);
  }
  svg::Chart chart(1000, 300);
  chart.x_axis({0.5, static_cast<double>(n) + 0.5}, "lot, in the order judged", "");
  chart.y_axis(svg::padded_span(ends), "lot mean of " + f.name, unit);
  chart.x_labels(xs, f.lots);
  if (f.chart) {
    chart.y_rule(f.chart->ucl, "s-fit", "UCL " + format_si(f.chart->ucl, unit));
    chart.y_rule(f.chart->lcl, "s-fit", "LCL " + format_si(f.chart->lcl, unit));
    chart.y_rule(f.chart->center, "s-target", "centre " + format_si(f.chart->center, unit));
  }
  chart.line(xs, f.means, "s-current");
  std::vector<double> ok_x, ok_y, flag_x, flag_y;
  std::vector<std::string> ok_t, flag_t;
  for (std::size_t i = 0; i < n; ++i) {
    const std::string t = "lot " + f.lots[i] + ": mean " + format_si(f.means[i], unit);
    const std::string rules = rules_at(f, i);
    if (rules.empty()) {
      ok_x.push_back(xs[i]);
      ok_y.push_back(f.means[i]);
      ok_t.push_back(t);
    } else {
      flag_x.push_back(xs[i]);
      flag_y.push_back(f.means[i]);
      flag_t.push_back(t + " \xE2\x80\x94 flagged by " + rules);
    }
  }
  chart.markers(ok_x, ok_y, "s-point", "lot mean", ok_t);
  chart.markers(flag_x, flag_y, "s-flag", "flagged by a run rule", flag_t);

  std::string d = "Line chart of the lot means of " + f.name +
                  (f.product.empty() ? std::string() : " for product " + f.product) + " over " +
                  std::to_string(n) + " lot(s) in the order judged: ";
  // Every point in words when they are few; the range when they are many.
  if (n <= 30) {
    for (std::size_t i = 0; i < n; ++i)
      d += (i ? ", " : "") + f.lots[i] + " " + format_si(f.means[i], unit);
  } else {
    double lo = f.means[0], hi = f.means[0];
    for (double m : f.means) {
      lo = std::fmin(lo, m);
      hi = std::fmax(hi, m);
    }
    d += "from " + f.lots.front() + " to " + f.lots.back() + ", means between " +
         format_si(lo, unit) + " and " + format_si(hi, unit);
  }
  d += ". ";
  if (f.chart)
    d += "Centre line " + format_si(f.chart->center, unit) + ", control limits " +
         format_si(f.chart->lcl, unit) + " to " + format_si(f.chart->ucl, unit) +
         " (\xC2\xB1 3 \xCF\x83, \xCF\x83 from the mean moving range of the lot means). ";
  else
    d += "No control limits: they need at least two lots. ";
  if (flag_x.empty()) {
    d += "No lot is flagged by the run rules.";
  } else {
    d += "Flagged: ";
    bool first = true;
    for (std::size_t i = 0; i < n; ++i) {
      const std::string rules = rules_at(f, i);
      if (rules.empty()) continue;
      d += (first ? "" : "; ") + f.lots[i] + " by " + rules;
      first = false;
    }
    d += ".";
  }
  return chart.render(id, figure_title(f) + ": lot means", d);
}

}  // namespace

void write_trend_html(std::ostream& out, const Trend& t, const std::string& store) {
  std::size_t flagged_points = 0;
  for (const TrendFigure& f : t.figures) {
    std::vector<bool> seen(f.means.size(), false);
    for (const RunRuleHit& h : f.hits)
      if (h.index < seen.size() && !seen[h.index]) {
        seen[h.index] = true;
        ++flagged_points;
      }
  }
  html::page_begin(out,
                   "Trend \xE2\x80\x94 " + std::to_string(t.lots.size()) + " lot(s), " +
                       (flagged_points ? std::to_string(flagged_points) + " flagged point(s)"
                                       : std::string("no drift flagged")),
                   "history " + store);

  // The verdict: where the run rules see drift, and which units keep failing.
  std::vector<std::string> lines;
  std::string headline;
  if (flagged_points == 0) {
    headline = "No drift flagged across " + std::to_string(t.lots.size()) + " lot(s)";
    lines.push_back(
        "No lot mean breaks a run rule (beyond 3 sigma; 2 of 3 beyond 2 sigma; 4 of "
        "5 beyond 1 sigma; 8 on one side of the centre).");
  } else {
    headline = "Drift flagged on " + std::to_string(flagged_points) + " lot mean(s)";
    for (const TrendFigure& f : t.figures) {
      std::string list;
      for (std::size_t i = 0; i < f.means.size(); ++i) {
        const std::string rules = rules_at(f, i);
        if (!rules.empty()) list += (list.empty() ? "" : "; ") + f.lots[i] + ", " + rules;
      }
      if (!list.empty())
        lines.push_back("<strong>" + escape(figure_title(f)) + ":</strong> " + escape(list) + ".");
    }
  }
  if (!t.failures.empty()) {
    const RepeatFailure& worst = t.failures.front();
    lines.push_back(
        escape(std::to_string(t.failures.size()) +
               " unit id(s) did not pass in some record; "
               "most often " +
               worst.unit_id + ": " + std::to_string(worst.failed) + " failed, " +
               std::to_string(worst.conditional) + " conditional in " +
               std::to_string(worst.records) + " record(s)" +
               (worst.most_common_figure.empty() ? std::string()
                                                 : ", mostly on " + worst.most_common_figure) +
               "."));
  }
  html::verdict_banner(out, flagged_points ? "warn" : "pass", headline, lines);
  if (flagged_points || !t.failures.empty()) html::caution(out, kHighVoltageCaution);

  // The lots.
  html::section_begin(out, "lots", "Lots");
  std::vector<std::vector<Cell>> rows;
  for (std::size_t i = 0; i < t.lots.size(); ++i) {
    const TrendLot& l = t.lots[i];
    const std::string k = "lots." + std::to_string(i) + ".";
    rows.push_back({string_cell(l.name, k + "lot"), text_cell(l.product), text_cell(l.station),
                    text_cell(l.first_judged_utc), count_cell(l.units, k + "units"),
                    count_cell(l.passed, k + "passed"), count_cell(l.failed, k + "failed"),
                    count_cell(l.conditional, k + "conditional"),
                    count_cell(l.not_measured, k + "not_measured"), text_cell(yield_text(l))});
  }
  write_table(out,
              {"lot", "product", "station", "first judged (UTC)", "units", "passed", "failed",
               "conditional", "not measured", "yield"},
              rows, 4, "figures lots");
  out << "<p>Yield: the share of a lot's units that passed every limited figure.</p>\n";
  html::section_end(out);

  // Per figure: the lot means with their limits and flags, then the lots' statistics.
  for (std::size_t fi = 0; fi < t.figures.size(); ++fi) {
    const TrendFigure& f = t.figures[fi];
    const std::string unit = figure_unit(f.name);
    const bool keyed = addressable(f.name);
    const std::string fk = "figures." + std::to_string(fi) + ".";
    html::section_begin(out, "figure-" + std::to_string(fi + 1), figure_title(f));
    out << means_chart("trend-" + std::to_string(fi + 1), f);

    const std::vector<FigurePoint> points = points_of(t, f);
    std::vector<std::vector<Cell>> stats;
    for (std::size_t i = 0; i < points.size(); ++i) {
      const TrendLot& l = t.lots[points[i].lot];
      const FigureStats& st = l.figures[points[i].figure].second;
      const std::string k = "lots." + std::to_string(points[i].lot) + ".figures." + f.name + ".";
      std::vector<Cell> row{text_cell(l.name), count_cell(st.count, k + "count", keyed)};
      row.push_back(i < f.means.size() ? keyed_cell(si(f.means[i], unit),
                                                    fk + "means." + std::to_string(i), f.means[i])
                                       : keyed_cell(si(st.mean, unit), k + "mean", st.mean, keyed));
      row.push_back(st.count >= 2 ? keyed_cell(si(st.sd, unit), k + "sd", st.sd, keyed)
                                  : text_cell("n/a"));
      row.push_back(st.cpk ? keyed_cell(index_text(st.cpk), k + "cpk", *st.cpk, keyed)
                           : text_cell("n/a"));
      row.push_back(st.ppk ? keyed_cell(index_text(st.ppk), k + "ppk", *st.ppk, keyed)
                           : text_cell("n/a"));
      row.push_back(keyed_cell(fixed(100 * st.yield, 1) + " %", k + "yield", st.yield, keyed));
      const std::string rules = i < f.means.size() ? rules_at(f, i) : std::string();
      Cell flag = text_cell(rules.empty() ? std::string() : "flagged: " + rules);
      if (!rules.empty()) flag.css = "cell-flag";
      row.push_back(flag);
      stats.push_back(std::move(row));
    }
    write_table(out, {"lot", "units", "mean", "sd", "Cpk", "Ppk", "yield", "run rules"}, stats, 1,
                "figures", 7);
    if (f.chart) {
      write_table(
          out, {"lot means", "centre", "LCL", "UCL"},
          {{text_cell("control chart"),
            keyed_cell(si(f.chart->center, unit), fk + "control_chart.center", f.chart->center),
            keyed_cell(si(f.chart->lcl, unit), fk + "control_chart.lcl", f.chart->lcl),
            keyed_cell(si(f.chart->ucl, unit), fk + "control_chart.ucl", f.chart->ucl)}},
          1, "figures");
    }
    if (!f.hits.empty()) {
      std::vector<std::vector<Cell>> hits;
      for (std::size_t h = 0; h < f.hits.size(); ++h) {
        const RunRuleHit& hit = f.hits[h];
        const std::string k = fk + "run_rule_hits." + std::to_string(h) + ".";
        hits.push_back({string_cell(f.lots[hit.index], k + "lot"),
                        count_cell(static_cast<std::size_t>(hit.rule), k + "rule"),
                        string_cell(run_rule_text(hit.rule), k + "text")});
      }
      out << "<h3>Flagged by the run rules</h3>\n";
      write_table(out, {"lot", "rule", "what the rule saw"}, hits, 1, "figures", 2);
    }
    html::section_end(out);
  }

  html::section_begin(out, "failures", "Units that did not pass, most often first");
  if (t.failures.empty()) {
    out << "<p>Every recorded unit passed.</p>\n";
  } else {
    std::vector<std::vector<Cell>> fr;
    for (std::size_t i = 0; i < t.failures.size(); ++i) {
      const RepeatFailure& r = t.failures[i];
      const std::string k = "failures." + std::to_string(i) + ".";
      fr.push_back({string_cell(r.unit_id, k + "unit"), text_cell(r.product),
                    count_cell(r.records, k + "records"), count_cell(r.failed, k + "failed"),
                    count_cell(r.conditional, k + "conditional"),
                    text_cell(r.most_common_figure.empty() ? kDash : r.most_common_figure)});
    }
    write_table(out, {"unit", "product", "records", "failed", "conditional", "mostly on"}, fr, 2,
                "figures", 5);
  }
  if (!t.failing_figures.empty()) {
    std::vector<std::vector<Cell>> ff;
    for (const auto& [name, n] : t.failing_figures)
      ff.push_back({text_cell(name), count_cell(n, "failing_figures." + name, addressable(name))});
    out << "<h3>Figures that decided failures</h3>\n";
    write_table(out, {"figure", "failed units it decided"}, ff, 1, "figures");
  }
  html::section_end(out);

  html::page_end(out,
                 "lopside trend, the same figures as its --json output (schema "
                 "lopside.trend/1).\nSign convention: positive current flows from the probed "
                 "lead into electrode A, so while i > 0 electrode A is the anode.\nRun rules "
                 "(Western Electric): 1 beyond 3 sigma; 2 two of three beyond 2 sigma; 3 four of "
                 "five beyond 1 sigma; 4 eight on one side of the centre.");
}

}  // namespace lopside
