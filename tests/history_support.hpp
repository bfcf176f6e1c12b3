#pragma once
// A synthetic lot for the history store tests (SQLite and PostgreSQL).
#include <string>

#include "lopside/history.hpp"

namespace lopside::test {

// A lot of `n` units whose captures' hashes are made from `tag` and the unit number.
inline HistoryLot history_lot(const std::string& name, const std::string& tag, int n) {
  HistoryLot h;
  h.name = name;
  h.product = "tube supply 32 kHz";
  h.station = "bench-7";
  h.decision_rule = "guarded";
  h.limits = "dc_to_rms min=-0.01 max=0.01\n";
  h.settings = "max_order=40\n";
  h.settings_sha256 = text_sha256(h.settings + h.limits);
  h.tool_version = "test";
  h.judged_utc = "2026-12-02T10:00:00Z";
  for (int k = 0; k < n; ++k) {
    HistoryUnit u;
    u.unit_id = "u" + std::to_string(k);
    u.path = u.unit_id + ".csv";
    u.capture_sha256 = text_sha256(tag + std::to_string(k));
    u.capture_bytes = 1000;
    u.verdict = k % 7 == 0 ? "fail" : "pass";
    u.deciding_figure = "dc_to_rms";
    u.figures.push_back({"dc_to_rms", 0.001 * k, 0.0001, u.verdict, 0.01 - 0.001 * k});
    h.units.push_back(u);
  }
  return h;
}

}  // namespace lopside::test
