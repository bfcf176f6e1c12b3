// The trend across lots (trend.hpp).
#include "lopside/trend.hpp"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <map>
#include <sstream>

namespace lopside {
namespace {

std::optional<double> bound(const std::string& token, const std::string& key) {
  if (token.rfind(key, 0) != 0) return std::nullopt;
  const std::string v = token.substr(key.size());
  if (v.empty()) return std::nullopt;
  char* end = nullptr;
  const double d = std::strtod(v.c_str(), &end);
  if (end == v.c_str() || *end != '\0' || !std::isfinite(d)) return std::nullopt;
  return d;
}

}  // namespace

std::vector<std::pair<std::string, Limit>> parse_recorded_limits(const std::string& text) {
  std::vector<std::pair<std::string, Limit>> out;
  std::istringstream in(text);
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream words(line);
    std::string name, lo, hi;
    if (!(words >> name >> lo >> hi)) continue;
    Limit l;
    l.min = bound(lo, "min=");
    l.max = bound(hi, "max=");
    if (is_valid(l)) out.emplace_back(name, l);
  }
  return out;
}

Trend build_trend(const std::vector<RecordedUnit>& units) {
  Trend t;
  // Lots in the order their units come (the store's order), keyed by name, product, limits.
  std::vector<std::vector<const RecordedUnit*>> groups;
  std::map<std::string, std::size_t> index;
  for (const RecordedUnit& u : units) {
    // A lot judged in shards on several stations (README: several machines) is one lot.
    const std::string key = u.lot + '\x1f' + u.product + '\x1f' + u.limits;
    auto [it, fresh] = index.emplace(key, groups.size());
    if (fresh) groups.emplace_back();
    groups[it->second].push_back(&u);
  }
  std::map<std::string, std::size_t> figure_at;  // product, name → index into t.figures
  for (const auto& g : groups) {
    const RecordedUnit& first = *g.front();
    TrendLot lot;
    lot.name = first.lot;
    lot.product = first.product;
    lot.station = first.station;
    for (const RecordedUnit* u : g)
      if (u->station != first.station) lot.station = "several";
    lot.first_judged_utc = first.lot_first_judged_utc;
    lot.units = g.size();
    for (const RecordedUnit* u : g) {
      if (u->verdict == "pass") ++lot.passed;
      if (u->verdict == "fail") ++lot.failed;
      if (u->verdict == "conditional") ++lot.conditional;
      if (u->verdict == "not_measured") ++lot.not_measured;
    }
    for (const auto& [name, limit] : parse_recorded_limits(first.limits)) {
      std::vector<double> values;
      for (const RecordedUnit* u : g) {
        for (const RecordedFigure& f : u->figures)
          if (f.name == name && f.value && std::isfinite(*f.value)) values.push_back(*f.value);
      }
      const FigureStats st = lot_statistics(values, limit);
      lot.figures.emplace_back(name, st);
      if (st.count == 0) continue;
      auto [it, fresh] = figure_at.emplace(lot.product + '\x1f' + name, t.figures.size());
      if (fresh) t.figures.push_back(TrendFigure{lot.product, name, {}, {}, {}, {}});
      TrendFigure& tf = t.figures[it->second];
      tf.lots.push_back(lot.name);
      tf.means.push_back(st.mean);
    }
    t.lots.push_back(std::move(lot));
  }
  // The lot means as individuals (ISO 7870-2: σ from the mean moving range of the means), and
  // the run rules on them with that chart's centre and σ = MR̄/d2.
  for (TrendFigure& f : t.figures) {
    if (f.means.size() < 2) continue;
    // Only the chart is wanted here: the limit is a placeholder far from any mean.
    const FigureStats st = lot_statistics(f.means, Limit{std::nullopt, 1e300});
    f.chart = st.chart;
    if (st.sigma_within > 0) f.hits = run_rule_hits(f.means, st.mean, st.sigma_within);
  }
  // Units that did not pass, per product and unit id.
  std::map<std::pair<std::string, std::string>, RepeatFailure> per_unit;
  std::map<std::pair<std::string, std::string>, std::map<std::string, std::size_t>> figures_of;
  std::map<std::string, std::size_t> failing;
  for (const RecordedUnit& u : units) {
    const auto key = std::make_pair(u.product, u.unit_id);
    RepeatFailure& r = per_unit[key];
    r.product = u.product;
    r.unit_id = u.unit_id;
    ++r.records;
    if (u.verdict == "fail" || u.verdict == "conditional") {
      (u.verdict == "fail" ? r.failed : r.conditional) += 1;
      if (!u.deciding_figure.empty()) {
        ++figures_of[key][u.deciding_figure];
        if (u.verdict == "fail") ++failing[u.deciding_figure];
      }
    }
  }
  for (auto& [key, r] : per_unit) {
    if (r.failed + r.conditional == 0) continue;
    std::size_t best = 0;
    for (const auto& [name, n] : figures_of[key]) {
      if (n > best) {
        best = n;
        r.most_common_figure = name;
      }
    }
    t.failures.push_back(r);
  }
  std::stable_sort(
      t.failures.begin(), t.failures.end(), [](const RepeatFailure& a, const RepeatFailure& b) {
        return a.failed != b.failed ? a.failed > b.failed : a.conditional > b.conditional;
      });
  for (const auto& [name, n] : failing) t.failing_figures.emplace_back(name, n);
  std::stable_sort(t.failing_figures.begin(), t.failing_figures.end(),
                   [](const auto& a, const auto& b) { return a.second > b.second; });
  return t;
}

}  // namespace lopside
