#pragma once
/// \file
/// The trend command's outputs: text, JSON (schema "lopside.trend/1") and CSV (one row per lot
/// and limited figure). Only formats.

#include <ostream>
#include <string>

#include "lopside/trend.hpp"

namespace lopside {

void write_trend_text(std::ostream& out, const Trend& trend, const std::string& store);
void write_trend_json(std::ostream& out, const Trend& trend, const std::string& store);
void write_trend_csv(std::ostream& out, const Trend& trend);

}  // namespace lopside
