#pragma once
/// \file
/// The history of judged units: every unit a `lot` run judges is recorded with its lot,
/// station, time, tool version, the capture's SHA-256 and size, the settings that made its
/// figures, every limited figure with its u95, and its verdict. One SQLite file is the store
/// (WAL journal, so several test stations may write to one file; every lot is one
/// transaction). Judging the same capture with the same settings again adds nothing: a unit
/// is identified by (capture SHA-256, settings SHA-256).
///
/// Schema (version 1; `meta.schema_version`, migrated on open by version):
///   lots(id, name, product, station, decision_rule, limits, first_judged_utc)
///     UNIQUE(name, product, station, decision_rule, limits)
///   units(id, lot_id → lots, unit_id, path, capture_sha256, capture_bytes, settings,
///         settings_sha256, judged_utc, tool_version, verdict, deciding_figure, reason)
///     UNIQUE(capture_sha256, settings_sha256)
///   figures(unit_row → units, name, value, u95, verdict, margin)  PRIMARY KEY(unit_row, name)

#include <atomic>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "lopside/trend.hpp"

namespace lopside {

struct HistoryFigure {
  std::string name;
  std::optional<double> value, u95;  ///< unset when the unit has no such figure
  std::string verdict;
  std::optional<double> margin;
};

struct HistoryUnit {
  std::string unit_id, path;
  std::string capture_sha256;  ///< empty when the capture could not be read
  std::uint64_t capture_bytes = 0;
  std::string verdict, deciding_figure, reason;
  std::vector<HistoryFigure> figures;
};

struct HistoryLot {
  std::string name, product, station, decision_rule;
  std::string limits;           ///< the limits in force, canonical text
  std::string settings;         ///< every setting that changes a figure, canonical text
  std::string settings_sha256;  ///< of `settings` + `limits` + `decision_rule`
  std::string tool_version;
  std::string judged_utc;  ///< ISO 8601, e.g. 2026-12-02T13:45:00Z
  std::vector<HistoryUnit> units;
};

/// What recording a lot did.
struct RecordOutcome {
  std::size_t added = 0;  ///< units recorded now
  std::size_t already =
      0;  ///< units recorded before (same capture, same settings): kept as they were
  std::size_t unhashed = 0;  ///< units without a readable capture: not recorded
};

class HistoryStore {
 public:
  virtual ~HistoryStore() = default;
  /// Records the lot's units in one transaction. Throws InputError naming the store.
  virtual RecordOutcome record(const HistoryLot& lot) = 0;
  /// Units recorded, all lots (for tests and the trend command).
  virtual std::uint64_t unit_count() = 0;
  /// Every recorded unit of `product` (all products when empty), lots in the order of their
  /// first judgement, units in the order they were recorded.
  virtual std::vector<RecordedUnit> recorded_units(const std::string& product) = 0;
};

/// Opens (creating when absent, migrating an older schema) the SQLite store at `path`.
/// A "postgresql://" URI is refused for now (InputError: not yet supported).
std::unique_ptr<HistoryStore> open_history(const std::string& where);

/// SHA-256 of a file's bytes, as 64 lowercase hex digits (OpenSSL's EVP interface); the
/// file's size in `bytes`. Throws InputError when it cannot be read.
/// `stop`, when given and set by another thread, ends the reading early: the result is then
/// empty (an analysis that failed does not wait for its capture's hash).
std::string file_sha256(const std::string& path, std::uint64_t& bytes,
                        const std::atomic<bool>* stop = nullptr);

/// SHA-256 of a string, as 64 lowercase hex digits.
std::string text_sha256(const std::string& text);

}  // namespace lopside
