#pragma once
/// \file
/// The lot command's outputs: an aligned text table for people, JSON and CSV for files. Only
/// formats; the lot is judged in core (lot_judge.hpp).

#include <ostream>
#include <string>
#include <vector>

#include "lopside/lot_judge.hpp"
#include "lopside/provenance.hpp"

namespace lopside {

/// Everything a lot report shows.
struct LotReport {
  std::string lot;                   ///< the lot's name (--lot), may be empty
  std::string product;               ///< from the limits file, may be empty
  std::string limits_path;           ///< the limits file, as given
  std::string probe_kind = "shunt";  ///< the current probe as stated (--probe)
  DecisionRule rule = DecisionRule::simple;
  LimitList limits;
  std::vector<LotUnit> units;  ///< in input order
  LotSummary summary;
  Provenance provenance;  ///< where the result came from
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

/// One self-contained HTML page (html_page.hpp): the lot's verdict, the unit table with each
/// limited figure and its u95, and per limited figure a histogram with the limits and Cpk and
/// an individuals control chart. Each headline figure in a table carries data-key (its dot path
/// in write_lot_json's output) and data-value (that number).
void write_lot_html(std::ostream& out, const LotReport& report);

/// The SI unit a figure's name carries by its suffix ("_a" → "A", "_hz" → "Hz"), "" for a
/// plain number (a ratio, a count).
std::string figure_unit(const std::string& name);

/// A figure's value as people read it: SI prefix and unit, with its u95 where known.
std::string lot_figure_text(const std::string& name, const FigureValue& value);
/// A figure's limits: "24.5 mA … 25.5 mA", "≥ 31.5 kHz", "≤ 0.01", or "none".
std::string lot_limit_text(const std::string& name, const Limit& limit);
/// What decided a unit: the deciding figure, its value and its margin to the nearer limit.
std::string lot_deciding_text(const LotUnit& unit);

}  // namespace lopside
