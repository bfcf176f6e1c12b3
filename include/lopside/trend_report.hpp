#pragma once
/// \file
/// The trend command's outputs: text, JSON (schema "lopside.trend/1") and CSV (one row per lot
/// and limited figure). Only formats.

#include <ostream>
#include <string>

#include "lopside/provenance.hpp"
#include "lopside/trend.hpp"

namespace lopside {

void write_trend_text(std::ostream& out, const Trend& trend, const std::string& store);
void write_trend_json(std::ostream& out, const Trend& trend, const std::string& store,
                      const Provenance& provenance);
void write_trend_csv(std::ostream& out, const Trend& trend);
/// One self-contained HTML page (html_page.hpp): per figure the lot means lot by lot with the
/// control limits and the run-rule hits, the lots with Cpk and yield, and the repeat failures.
/// Each headline figure in a table carries data-key (its dot path in write_trend_json's output)
/// and data-value (that number).
void write_trend_html(std::ostream& out, const Trend& trend, const std::string& store);

}  // namespace lopside
