#pragma once
/// \file
/// A lot judged: each unit's measured figures held against the limits (lot.hpp's decisions),
/// and the lot's statistics per limited figure. Pure computation on measured figures.

#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "lopside/figures.hpp"
#include "lopside/lot.hpp"

namespace lopside {

/// The limits in force, in the limits file's order: (figure name, limit).
using LimitList = std::vector<std::pair<std::string, Limit>>;

/// One limited figure of one unit.
struct LotFigure {
  std::string name;
  std::optional<FigureValue> value;  ///< unset: the unit's measurement has no such figure
  Limit limit;
  /// The decision; verdict not_measured when there is no value.
  FigureDecision decision;
};

/// One unit of the lot.
struct LotUnit {
  std::string id;    ///< the unit's id (file stem, pattern or preamble key)
  std::string path;  ///< the capture, as given
  LotVerdict verdict = LotVerdict::not_measured;
  std::optional<std::size_t> deciding;  ///< index into `figures` of the deciding figure
  std::vector<LotFigure> figures;       ///< in the limits' order (empty when not measured)
  std::string reason;                   ///< why not measured (the error), else empty
};

/// Holds a measured unit's figures against every limit.
LotUnit judge_unit(std::string id, std::string path, const std::vector<NamedFigure>& measured,
                   const LimitList& limits, DecisionRule rule);

/// A unit whose capture could not be measured: verdict not_measured, with the reason.
LotUnit unmeasured_unit(std::string id, std::string path, std::string reason);

struct LotSummary {
  std::size_t count = 0, passed = 0, failed = 0, conditional = 0, not_measured = 0;
  /// Per limited figure, over the units that have it, in lot order (lot_statistics); in the
  /// limits' order.
  std::vector<std::pair<std::string, FigureStats>> figures;
};

LotSummary summarize_lot(const std::vector<LotUnit>& units, const LimitList& limits);

}  // namespace lopside
