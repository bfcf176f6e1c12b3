// The lot command's outputs (lot_report.hpp).
#include "lopside/lot_report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>

#include "lopside/report_format.hpp"
#include "provenance_json.hpp"
#include "report_support.hpp"

namespace lopside {

using report_detail::csv_field;
using report_detail::json;
using report_detail::optional_number;
using report_detail::pad;

std::string figure_unit(const std::string& name) {
  static const std::array<std::pair<const char*, const char*>, 7> suffixes = {{
      {"_hz", "Hz"},
      {"_a", "A"},
      {"_v", "V"},
      {"_c", "C"},
      {"_w", "W"},
      {"_j", "J"},
      {"_s", "s"},
  }};
  for (const auto& [suffix, unit] : suffixes) {
    const std::string s(suffix);
    if (name.size() > s.size() && name.compare(name.size() - s.size(), s.size(), s) == 0)
      return unit;
  }
  return "";
}

// A value as people read it: with its unit and SI prefix, and its u95 where known.
std::string lot_figure_text(const std::string& name, const FigureValue& v) {
  const std::string unit = figure_unit(name);
  if (v.u95) {
    if (unit.empty()) return format_ratio_with_uncertainty(v.value, *v.u95, false);
    return format_with_uncertainty(v.value, *v.u95, unit, false);
  }
  return format_si(v.value, unit);
}

std::string lot_limit_text(const std::string& name, const Limit& l) {
  const std::string unit = figure_unit(name);
  if (l.min && l.max) return format_si(*l.min, unit) + " … " + format_si(*l.max, unit);
  if (l.min) return "≥ " + format_si(*l.min, unit);
  if (l.max) return "≤ " + format_si(*l.max, unit);
  return "none";
}

std::string lot_deciding_text(const LotUnit& u) {
  if (u.verdict == LotVerdict::not_measured && u.figures.empty()) return u.reason;
  if (!u.deciding) return "";
  const LotFigure& f = u.figures[*u.deciding];
  if (!f.value) return f.name + ": not in the measurement";
  return f.name + " " + lot_figure_text(f.name, *f.value) + ", margin " +
         format_si(f.decision.margin, figure_unit(f.name)) + " to " +
         (f.decision.at_min ? "min" : "max");
}

namespace {

// The ids of the units that have limited figure k, in lot order: the statistics' values, so
// the chart's point i is unit ids[i].
std::vector<std::string> ids_with_figure(const LotReport& r, std::size_t k) {
  std::vector<std::string> ids;
  for (const LotUnit& u : r.units)
    if (k < u.figures.size() && u.figures[k].value) ids.push_back(u.id);
  return ids;
}

json limit_json(const Limit& l) {
  return json{{"min", optional_number(l.min)}, {"max", optional_number(l.max)}};
}

}  // namespace

void write_lot_text(std::ostream& out, const LotReport& r) {
  out << "lopside lot" << (r.lot.empty() ? "" : ": " + r.lot) << '\n';
  if (!r.product.empty()) report_detail::line(out, "product", r.product);
  report_detail::line(out, "limits", r.limits_path + " (" + to_string(r.rule) + " decisions)");
  for (const auto& [name, limit] : r.limits)
    report_detail::line(out, "  " + name, lot_limit_text(name, limit));
  out << '\n';
  std::size_t id_width = 4;
  for (const LotUnit& u : r.units) id_width = std::max(id_width, u.id.size());
  out << "  " << pad("unit", id_width) << "  " << pad("verdict", 13) << "deciding\n";
  for (const LotUnit& u : r.units) {
    out << "  " << pad(u.id, id_width) << "  " << pad(to_string(u.verdict), 13)
        << lot_deciding_text(u) << '\n';
  }
  const LotSummary& s = r.summary;
  out << '\n';
  report_detail::line(
      out, "units",
      std::to_string(s.count) + ": " + std::to_string(s.passed) + " passed, " +
          std::to_string(s.failed) + " failed, " + std::to_string(s.conditional) +
          " conditional, " + std::to_string(s.not_measured) + " not measured" +
          (s.count
               ? "; yield " +
                     report_detail::fixed(
                         100.0 * static_cast<double>(s.passed) / static_cast<double>(s.count), 1) +
                     " %"
               : std::string()));
  // The units that did not pass, failures first.
  for (const LotVerdict v : {LotVerdict::fail, LotVerdict::conditional, LotVerdict::not_measured}) {
    for (const LotUnit& u : r.units) {
      if (u.verdict == v)
        report_detail::line(out, std::string("  ") + to_string(v),
                            u.id + ": " + lot_deciding_text(u));
    }
  }
  for (std::size_t k = 0; k < s.figures.size(); ++k) {
    const auto& [name, st] = s.figures[k];
    out << '\n';
    const std::string unit = figure_unit(name);
    report_detail::line(out, name,
                        std::to_string(st.count) + " values, mean " + format_si(st.mean, unit) +
                            ", sd " + format_si(st.sd, unit) + ", min " + format_si(st.min, unit) +
                            ", max " + format_si(st.max, unit));
    std::string idx = "yield " + report_detail::fixed(100 * st.yield, 1) + " %";
    const auto opt = [](const char* label, const std::optional<double>& v) {
      return std::string(", ") + label + " " + (v ? report_detail::fixed(*v, 2) : "n/a");
    };
    idx += opt("Cp", st.cp) + opt("Cpk", st.cpk) + opt("Pp", st.pp) + opt("Ppk", st.ppk);
    report_detail::line(out, "", idx);
    if (st.chart) {
      const ControlChart& c = *st.chart;
      const std::vector<std::string> ids = ids_with_figure(r, k);
      std::string chart = "individuals " + format_si(c.lcl, unit) + " … " + format_si(c.ucl, unit) +
                          ", moving range ≤ " + format_si(c.mr_ucl, unit);
      // Points named by their unit; a moving range by the unit that ends it.
      if (!c.beyond.empty()) {
        chart += "; outside:";
        for (const std::size_t i : c.beyond) chart += " " + ids[i];
      }
      if (!c.mr_beyond.empty()) {
        chart += "; jump at:";
        for (const std::size_t i : c.mr_beyond) chart += " " + ids[i];
      }
      report_detail::line(out, "", chart);
    }
  }
}

void write_lot_json(std::ostream& out, const LotReport& r) {
  json doc;
  doc["schema"] = "lopside.lot/1";
  doc["provenance"] = report_detail::provenance_json(r.provenance);
  doc["lot"] = r.lot.empty() ? json(nullptr) : json(r.lot);
  doc["product"] = r.product.empty() ? json(nullptr) : json(r.product);
  doc["limits_file"] = r.limits_path;
  doc["probe"] = r.probe_kind;
  doc["decision_rule"] = to_string(r.rule);
  json limits = json::object();
  for (const auto& [name, l] : r.limits) limits[name] = limit_json(l);
  doc["limits"] = limits;
  json units = json::array();
  for (const LotUnit& u : r.units) {
    json ju;
    ju["id"] = u.id;
    ju["path"] = u.path;
    ju["verdict"] = to_string(u.verdict);
    if (u.deciding) {
      const LotFigure& f = u.figures[*u.deciding];
      ju["deciding"] =
          json{{"figure", f.name},
               {"margin", f.value ? json(f.decision.margin) : json(nullptr)},
               {"relative_margin", f.value ? json(f.decision.relative_margin) : json(nullptr)},
               {"limit", f.decision.at_min ? "min" : "max"}};
    } else {
      ju["deciding"] = nullptr;
    }
    json figures = json::object();
    for (const LotFigure& f : u.figures) {
      json jf;
      jf["value"] = f.value ? json(f.value->value) : json(nullptr);
      jf["u95"] = f.value ? optional_number(f.value->u95) : json(nullptr);
      jf["verdict"] = to_string(f.decision.verdict);
      jf["margin"] = f.value ? json(f.decision.margin) : json(nullptr);
      figures[f.name] = jf;
    }
    ju["figures"] = figures;
    ju["reason"] = u.reason.empty() ? json(nullptr) : json(u.reason);
    units.push_back(ju);
  }
  doc["units"] = units;
  const LotSummary& s = r.summary;
  json sum;
  sum["count"] = s.count;
  sum["passed"] = s.passed;
  sum["failed"] = s.failed;
  sum["conditional"] = s.conditional;
  sum["not_measured"] = s.not_measured;
  // The lot's yield: units that passed on every limited figure, over all units judged.
  sum["yield"] = s.count ? static_cast<double>(s.passed) / static_cast<double>(s.count) : 0.0;
  json figs = json::object();
  for (std::size_t k = 0; k < s.figures.size(); ++k) {
    const auto& [name, st] = s.figures[k];
    json jf;
    jf["count"] = st.count;
    jf["mean"] = st.count ? json(st.mean) : json(nullptr);
    jf["sd"] = st.count >= 2 ? json(st.sd) : json(nullptr);
    jf["min"] = st.count ? json(st.min) : json(nullptr);
    jf["max"] = st.count ? json(st.max) : json(nullptr);
    jf["yield"] = st.yield;
    jf["sigma_within"] = st.count >= 2 ? json(st.sigma_within) : json(nullptr);
    jf["cp"] = optional_number(st.cp);
    jf["cpk"] = optional_number(st.cpk);
    jf["pp"] = optional_number(st.pp);
    jf["ppk"] = optional_number(st.ppk);
    if (st.chart) {
      const ControlChart& c = *st.chart;
      jf["control_chart"] = json{{"center", c.center},
                                 {"ucl", c.ucl},
                                 {"lcl", c.lcl},
                                 {"mr_center", c.mr_center},
                                 {"mr_ucl", c.mr_ucl}};
      // The points beyond, by unit id (an index into the lot's units would skip those without
      // the figure).
      const std::vector<std::string> ids = ids_with_figure(r, k);
      json beyond = json::array(), mr_beyond = json::array();
      for (const std::size_t i : c.beyond) beyond.push_back(ids[i]);
      for (const std::size_t i : c.mr_beyond) mr_beyond.push_back(ids[i]);
      jf["control_chart"]["beyond_units"] = beyond;
      jf["control_chart"]["moving_range_beyond_units"] = mr_beyond;
    } else {
      jf["control_chart"] = nullptr;
    }
    figs[name] = jf;
  }
  sum["figures"] = figs;
  doc["summary"] = sum;
  out << doc.dump(2) << '\n';
}

namespace {

std::string csv_number(double v) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.17g", v);
  return buf.data();
}

}  // namespace

void write_lot_csv(std::ostream& out, const LotReport& r) {
  out << "id,path,verdict,deciding_figure,deciding_margin,reason";
  for (const auto& [name, l] : r.limits)
    out << ',' << csv_field(name) << ',' << csv_field(name + "_u95");
  out << '\n';
  for (const LotUnit& u : r.units) {
    out << csv_field(u.id) << ',' << csv_field(u.path) << ',' << to_string(u.verdict) << ',';
    if (u.deciding) {
      const LotFigure& f = u.figures[*u.deciding];
      out << csv_field(f.name) << ',' << (f.value ? csv_number(f.decision.margin) : "");
    } else {
      out << ',';
    }
    out << ',' << csv_field(u.reason);
    for (std::size_t k = 0; k < r.limits.size(); ++k) {
      const LotFigure* f = k < u.figures.size() ? &u.figures[k] : nullptr;
      out << ',' << (f && f->value ? csv_number(f->value->value) : "") << ','
          << (f && f->value && f->value->u95 ? csv_number(*f->value->u95) : "");
    }
    out << '\n';
  }
}

}  // namespace lopside
