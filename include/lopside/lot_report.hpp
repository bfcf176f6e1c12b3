#pragma once
/// \file
/// The lot command's outputs: an aligned text table for people, JSON and CSV for files. Only
/// formats; the lot is judged in core (lot_judge.hpp).

#include <ostream>
#include <string>
#include <vector>

#include "lopside/lot_judge.hpp"

namespace lopside {

/// Everything a lot report shows.
struct LotReport {
  std::string lot;          ///< the lot's name (--lot), may be empty
  std::string product;      ///< from the limits file, may be empty
  std::string limits_path;  ///< the limits file, as given
  DecisionRule rule = DecisionRule::simple;
  LimitList limits;
  std::vector<LotUnit> units;  ///< in input order
  LotSummary summary;
};

/// One row per unit in input order, then the summary with the units that did not pass
/// (failures first), the counts and the statistics per limited figure.
void write_lot_text(std::ostream& out, const LotReport& report);

/// JSON (schema "lopside.lot/1"): `units` [{id, path, verdict, deciding {figure, margin,
/// relative_margin, limit} or null, figures {FIGURE: {value, u95, verdict, margin}}, reason}],
/// `summary` {count, passed, failed, conditional, not_measured, figures {FIGURE: {count, mean,
/// sd, min, max, yield, sigma_within, cp, cpk, pp, ppk, control_chart}}}.
void write_lot_json(std::ostream& out, const LotReport& report);

/// CSV, one row per unit: id, path, verdict, deciding figure and margin, reason, then each
/// limited figure's value and u95.
void write_lot_csv(std::ostream& out, const LotReport& report);

/// The SI unit a figure's name carries by its suffix ("_a" → "A", "_hz" → "Hz"), "" for a
/// plain number (a ratio, a count).
std::string figure_unit(const std::string& name);

}  // namespace lopside
