#pragma once
/// \file
/// The process across lots, from the history of judged units: each limited figure lot by lot
/// (mean, spread, Cpk, yield), a control chart of the lot means with the Western Electric run
/// rules flagging drift, and the units and figures that failed most often. Pure computation on
/// recorded units (the history store, io, reads them).

#include <cstddef>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "lopside/lot.hpp"
#include "lopside/run_rules.hpp"

namespace lopside {

/// One figure of a recorded unit.
struct RecordedFigure {
  std::string name;
  std::optional<double> value, u95;
  std::string verdict;
};

/// One unit as the history holds it, with its lot.
struct RecordedUnit {
  std::string lot, product, station, lot_first_judged_utc;
  std::string limits;  ///< the lot's limits as recorded: "NAME min=X max=Y" per line
  std::string unit_id, verdict, deciding_figure, judged_utc;
  std::vector<RecordedFigure> figures;
};

struct TrendLot {
  std::string name, product, station, first_judged_utc;
  std::size_t units = 0, passed = 0, failed = 0, conditional = 0, not_measured = 0;
  /// Per limited figure of the lot: its statistics against the lot's limits.
  std::vector<std::pair<std::string, FigureStats>> figures;
};

/// One figure of one product across the lots that limit it, in lot order (lots of different
/// products are different processes: never one chart).
struct TrendFigure {
  std::string product;
  std::string name;
  std::vector<std::string> lots;      ///< the lots, in order
  std::vector<double> means;          ///< each lot's mean
  std::optional<ControlChart> chart;  ///< individuals chart of the lot means (≥ 2 lots)
  std::vector<RunRuleHit> hits;       ///< run-rule hits on the lot means (index into `lots`)
};

/// A unit (by id, within a product) that did not pass in some record.
struct RepeatFailure {
  std::string product, unit_id;
  std::size_t records = 0, failed = 0, conditional = 0;
  std::string most_common_figure;  ///< the figure that decided most of its failures
};

struct Trend {
  std::vector<TrendLot> lots;  ///< in the order of their first judgement
  std::vector<TrendFigure> figures;
  /// Units that failed or were conditional, most failures first.
  std::vector<RepeatFailure> failures;
  /// (figure, count): how often each figure decided a failed unit, most first.
  std::vector<std::pair<std::string, std::size_t>> failing_figures;
};

/// Builds the trend from recorded units (in the store's order: lots by first judgement).
Trend build_trend(const std::vector<RecordedUnit>& units);

/// Parses the recorded limits text ("NAME min=X max=Y" per line; an empty bound is unset).
std::vector<std::pair<std::string, Limit>> parse_recorded_limits(const std::string& text);

}  // namespace lopside
