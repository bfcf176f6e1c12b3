// The trend command's outputs (trend_report.hpp).
#include "lopside/trend_report.hpp"

#include <array>
#include <cmath>
#include <cstdio>

#include "lopside/lot_report.hpp"
#include "lopside/report_format.hpp"
#include "provenance_json.hpp"
#include "report_support.hpp"

namespace lopside {

using report_detail::csv_field;
using report_detail::json;
using report_detail::optional_number;
using report_detail::pad;

namespace {

std::string g(double v, int digits = 4) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.*g", digits, v);
  return buf.data();
}

std::string index_text(const std::optional<double>& v) {
  return v ? report_detail::fixed(*v, 2) : std::string("n/a");
}

std::string yield_pct(const TrendLot& l) {
  if (l.units == 0) return "n/a";
  return report_detail::fixed(100.0 * static_cast<double>(l.passed) / static_cast<double>(l.units),
                              1) +
         " %";
}

}  // namespace

void write_trend_text(std::ostream& out, const Trend& t, const std::string& store) {
  out << "lopside trend: " << store << " (" << t.lots.size() << " lot(s))\n\n";
  out << "  " << pad("lot", 12) << pad("product", 24) << pad("station", 10) << pad("units", 7)
      << pad("passed", 8) << "yield\n";
  for (const TrendLot& l : t.lots) {
    out << "  " << pad(l.name, 12) << pad(l.product.substr(0, 22), 24) << pad(l.station, 10)
        << pad(std::to_string(l.units), 7) << pad(std::to_string(l.passed), 8) << yield_pct(l)
        << '\n';
  }
  for (const TrendFigure& f : t.figures) {
    const std::string unit = figure_unit(f.name);
    out << '\n'
        << "  " << f.name << (unit.empty() ? "" : " [" + unit + "]")
        << (f.product.empty() ? "" : ", " + f.product) << '\n';
    out << "    " << pad("lot", 12) << pad("mean", 12) << pad("sd", 12) << pad("Cpk", 7)
        << pad("Ppk", 7) << "yield\n";
    for (const TrendLot& l : t.lots) {
      if (l.product != f.product) continue;
      for (const auto& [name, st] : l.figures) {
        if (name != f.name || st.count == 0) continue;
        out << "    " << pad(l.name, 12) << pad(format_si(st.mean, unit), 12)
            << pad(format_si(st.sd, unit), 12) << pad(index_text(st.cpk), 7)
            << pad(index_text(st.ppk), 7) << report_detail::fixed(100 * st.yield, 1) << " %\n";
      }
    }
    if (f.chart) {
      out << "    lot means: centre " << format_si(f.chart->center, unit) << ", limits "
          << format_si(f.chart->lcl, unit) << " … " << format_si(f.chart->ucl, unit) << '\n';
    }
    for (const RunRuleHit& h : f.hits) {
      out << "    drift: lot " << f.lots[h.index] << ", rule " << h.rule << " ("
          << run_rule_text(h.rule) << ")\n";
    }
  }
  if (!t.failures.empty()) {
    out << "\n  units that did not pass, most often first\n";
    for (const RepeatFailure& r : t.failures) {
      out << "    " << pad(r.unit_id, 12) << r.failed << " failed, " << r.conditional
          << " conditional in " << r.records << " record(s)"
          << (r.most_common_figure.empty() ? "" : ", mostly on " + r.most_common_figure)
          << (r.product.empty() ? "" : " (" + r.product + ")") << '\n';
    }
  }
  if (!t.failing_figures.empty()) {
    out << "\n  figures that decided failures:";
    for (const auto& [name, n] : t.failing_figures) out << ' ' << name << " ×" << n;
    out << '\n';
  }
}

void write_trend_json(std::ostream& out, const Trend& t, const std::string& store,
                      const Provenance& provenance) {
  json doc;
  doc["schema"] = "lopside.trend/1";
  doc["provenance"] = report_detail::provenance_json(provenance);
  doc["history"] = store;
  json lots = json::array();
  for (const TrendLot& l : t.lots) {
    json jl;
    jl["lot"] = l.name;
    jl["product"] = l.product;
    jl["station"] = l.station;
    jl["first_judged_utc"] = l.first_judged_utc;
    jl["units"] = l.units;
    jl["passed"] = l.passed;
    jl["failed"] = l.failed;
    jl["conditional"] = l.conditional;
    jl["not_measured"] = l.not_measured;
    json figs = json::object();
    for (const auto& [name, st] : l.figures) {
      figs[name] = json{{"count", st.count},
                        {"mean", st.count ? json(st.mean) : json(nullptr)},
                        {"sd", st.count >= 2 ? json(st.sd) : json(nullptr)},
                        {"yield", st.yield},
                        {"cpk", optional_number(st.cpk)},
                        {"ppk", optional_number(st.ppk)}};
    }
    jl["figures"] = figs;
    lots.push_back(jl);
  }
  doc["lots"] = lots;
  json figs = json::array();
  for (const TrendFigure& f : t.figures) {
    json jf;
    jf["product"] = f.product;
    jf["figure"] = f.name;
    jf["lots"] = f.lots;
    jf["means"] = f.means;
    jf["control_chart"] =
        f.chart ? json{{"center", f.chart->center}, {"ucl", f.chart->ucl}, {"lcl", f.chart->lcl}}
                : json(nullptr);
    json hits = json::array();
    for (const RunRuleHit& h : f.hits)
      hits.push_back(
          json{{"lot", f.lots[h.index]}, {"rule", h.rule}, {"text", run_rule_text(h.rule)}});
    jf["run_rule_hits"] = hits;
    figs.push_back(jf);
  }
  doc["figures"] = figs;
  json fails = json::array();
  for (const RepeatFailure& r : t.failures) {
    fails.push_back(json{{"product", r.product},
                         {"unit", r.unit_id},
                         {"records", r.records},
                         {"failed", r.failed},
                         {"conditional", r.conditional},
                         {"most_common_figure", r.most_common_figure}});
  }
  doc["failures"] = fails;
  json ff = json::object();
  for (const auto& [name, n] : t.failing_figures) ff[name] = n;
  doc["failing_figures"] = ff;
  out << doc.dump(2) << '\n';
}

void write_trend_csv(std::ostream& out, const Trend& t) {
  out << "lot,product,station,first_judged_utc,figure,count,mean,sd,cpk,ppk,yield\n";
  const auto num = [](const std::optional<double>& v) {
    return v && std::isfinite(*v) ? g(*v, 17) : std::string();
  };
  for (const TrendLot& l : t.lots) {
    for (const auto& [name, st] : l.figures) {
      out << csv_field(l.name) << ',' << csv_field(l.product) << ',' << csv_field(l.station) << ','
          << l.first_judged_utc << ',' << csv_field(name) << ',' << st.count << ','
          << (st.count ? g(st.mean, 17) : "") << ',' << (st.count >= 2 ? g(st.sd, 17) : "") << ','
          << num(st.cpk) << ',' << num(st.ppk) << ',' << g(st.yield, 17) << '\n';
    }
  }
}

}  // namespace lopside
