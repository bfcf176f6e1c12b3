// A lot judged (lot_judge.hpp): the glue between a unit's measured figures and lot.hpp's
// decisions and statistics.
#include "lopside/lot_judge.hpp"

namespace lopside {

LotUnit judge_unit(std::string id, std::string path, const std::vector<NamedFigure>& measured,
                   const LimitList& limits, DecisionRule rule) {
  LotUnit unit;
  unit.id = std::move(id);
  unit.path = std::move(path);
  std::vector<FigureDecision> decisions;
  for (const auto& [name, limit] : limits) {
    LotFigure f;
    f.name = name;
    f.limit = limit;
    for (const NamedFigure& m : measured) {
      if (m.name == name) f.value = FigureValue{m.value, m.u95};
    }
    if (f.value) {
      f.decision = decide(*f.value, limit, rule);
    } else {
      // A limited figure the measurement does not give (a voltage figure without a voltage
      // channel): the unit cannot pass on it.
      f.decision.verdict = LotVerdict::not_measured;
    }
    decisions.push_back(f.decision);
    unit.figures.push_back(std::move(f));
  }
  const UnitDecision d = decide_unit(decisions);
  unit.verdict = d.verdict;
  unit.deciding = d.deciding;
  return unit;
}

LotUnit unmeasured_unit(std::string id, std::string path, std::string reason) {
  LotUnit unit;
  unit.id = std::move(id);
  unit.path = std::move(path);
  unit.verdict = LotVerdict::not_measured;
  unit.reason = std::move(reason);
  return unit;
}

LotSummary summarize_lot(const std::vector<LotUnit>& units, const LimitList& limits) {
  LotSummary s;
  s.count = units.size();
  for (const LotUnit& u : units) {
    switch (u.verdict) {
      case LotVerdict::pass:
        ++s.passed;
        break;
      case LotVerdict::fail:
        ++s.failed;
        break;
      case LotVerdict::conditional:
        ++s.conditional;
        break;
      case LotVerdict::not_measured:
        ++s.not_measured;
        break;
    }
  }
  for (std::size_t k = 0; k < limits.size(); ++k) {
    std::vector<double> values;
    for (const LotUnit& u : units) {
      if (k < u.figures.size() && u.figures[k].value) values.push_back(u.figures[k].value->value);
    }
    s.figures.emplace_back(limits[k].first, lot_statistics(values, limits[k].second));
  }
  return s;
}

}  // namespace lopside
