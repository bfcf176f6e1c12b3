// The history store (history.hpp) on PostgreSQL through libpq: the same schema as the SQLite
// store, for a plant whose stations share one server. libpq is included here only.
//
// Concurrency: every lot is one transaction; units and lots are inserted with ON CONFLICT DO
// NOTHING on their unique keys, so two stations recording the same unit at once end with one
// row (the second waits for the first's commit, then finds it: PostgreSQL 15 manual, INSERT,
// "ON CONFLICT Clause"); the schema is made under a transaction-level advisory lock, so two
// stations opening a new database do not both create it.
#include "history_postgres.hpp"

#include <libpq-fe.h>

#include <array>
#include <cstdio>
#include <optional>
#include <unordered_map>
#include <vector>

#include "lopside/error.hpp"

namespace lopside::detail {
namespace {

constexpr int kSchemaVersion = 1;
constexpr const char* kSchemaLock = "SELECT pg_advisory_xact_lock(7406391)";

// The URI as messages show it: without a password.
std::string shown(const std::string& uri) {
  const auto at = uri.find('@');
  const auto scheme = uri.find("://");
  if (at == std::string::npos || scheme == std::string::npos) return uri;
  const auto colon = uri.find(':', scheme + 3);
  if (colon == std::string::npos || colon > at) return uri;
  return uri.substr(0, colon) + ":***" + uri.substr(at);
}

std::string number(double v) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.17g", v);
  return buf.data();
}

// A result owned here.
struct Result {
  PGresult* r = nullptr;
  explicit Result(PGresult* p) : r(p) {}
  ~Result() { PQclear(r); }
  Result(const Result&) = delete;
  Result& operator=(const Result&) = delete;
  int rows() const { return PQntuples(r); }
  std::string text(int row, int col) const { return PQgetvalue(r, row, col); }
  bool null(int row, int col) const { return PQgetisnull(r, row, col) != 0; }
};

class PgHistory final : public HistoryStore {
 public:
  explicit PgHistory(const std::string& uri) : where_(shown(uri)) {
    conn_ = PQconnectdb(uri.c_str());
    if (!conn_ || PQstatus(conn_) != CONNECTION_OK) {
      const std::string why = conn_ ? PQerrorMessage(conn_) : "out of memory";
      PQfinish(conn_);
      conn_ = nullptr;
      throw InputError(where_, "cannot connect to the history store: " + trim(why));
    }
    exec("SET client_min_messages TO warning");
    migrate();
  }
  ~PgHistory() override { PQfinish(conn_); }

  RecordOutcome record(const HistoryLot& lot) override {
    RecordOutcome out;
    exec("BEGIN");
    try {
      Result l(params(
          "INSERT INTO lots(name, product, station, decision_rule, limits, first_judged_utc) "
          "VALUES($1,$2,$3,$4,$5,$6) ON CONFLICT DO NOTHING",
          {lot.name, lot.product, lot.station, lot.decision_rule, lot.limits, lot.judged_utc}));
      Result id(
          params("SELECT id FROM lots WHERE name=$1 AND product=$2 AND station=$3 AND "
                 "decision_rule=$4 AND limits=$5",
                 {lot.name, lot.product, lot.station, lot.decision_rule, lot.limits}));
      if (id.rows() != 1) fail("the lot row vanished");
      const std::string lot_id = id.text(0, 0);
      for (const HistoryUnit& u : lot.units) {
        if (u.capture_sha256.empty()) {
          ++out.unhashed;
          continue;
        }
        Result ins(params(
            "INSERT INTO units(lot_id, unit_id, path, capture_sha256, capture_bytes, settings, "
            "settings_sha256, judged_utc, tool_version, verdict, deciding_figure, reason) "
            "VALUES($1,$2,$3,$4,$5,$6,$7,$8,$9,$10,$11,$12) ON CONFLICT DO NOTHING RETURNING id",
            {lot_id, u.unit_id, u.path, u.capture_sha256, std::to_string(u.capture_bytes),
             lot.settings, lot.settings_sha256, lot.judged_utc, lot.tool_version, u.verdict,
             u.deciding_figure, u.reason}));
        if (ins.rows() == 0) {
          ++out.already;
          continue;
        }
        ++out.added;
        const std::string row = ins.text(0, 0);
        for (const HistoryFigure& f : u.figures) {
          // Held so that it is cleared: a dropped PGresult leaked (AddressSanitizer's leak
          // check, tools/test-sanitized).
          const Result done(
              params("INSERT INTO figures(unit_row, name, value, u95, verdict, margin) "
                     "VALUES($1,$2,$3,$4,$5,$6)",
                     {row, f.name, opt(f.value), opt(f.u95), f.verdict, opt(f.margin)}));
        }
      }
      exec("COMMIT");
    } catch (...) {
      PQclear(PQexec(conn_, "ROLLBACK"));
      throw;
    }
    return out;
  }

  std::uint64_t unit_count() override {
    Result r(params("SELECT COUNT(*) FROM units", {}));
    return std::stoull(r.text(0, 0));
  }

  std::vector<RecordedUnit> recorded_units(const std::string& product) override {
    std::vector<RecordedUnit> out;
    Result u(params(
        "SELECT u.id, l.name, l.product, l.station, l.first_judged_utc, l.limits, u.unit_id, "
        "u.verdict, u.deciding_figure, u.judged_utc FROM units u JOIN lots l ON u.lot_id = l.id "
        "WHERE $1 = '' OR l.product = $1 ORDER BY l.first_judged_utc, l.id, u.id",
        {product}));
    Result f(params(
        "SELECT f.unit_row, f.name, f.value, f.u95, f.verdict FROM figures f JOIN units u ON "
        "f.unit_row = u.id JOIN lots l ON u.lot_id = l.id WHERE $1 = '' OR l.product = $1 "
        "ORDER BY f.unit_row, f.ord",
        {product}));
    // Figures by their unit's row (the units come in lot order, the figures in row order).
    std::unordered_map<std::string, std::vector<RecordedFigure>> by_unit;
    for (int k = 0; k < f.rows(); ++k) {
      RecordedFigure g;
      g.name = f.text(k, 1);
      if (!f.null(k, 2)) g.value = std::stod(f.text(k, 2));
      if (!f.null(k, 3)) g.u95 = std::stod(f.text(k, 3));
      g.verdict = f.text(k, 4);
      by_unit[f.text(k, 0)].push_back(std::move(g));
    }
    for (int i = 0; i < u.rows(); ++i) {
      RecordedUnit r;
      r.lot = u.text(i, 1);
      r.product = u.text(i, 2);
      r.station = u.text(i, 3);
      r.lot_first_judged_utc = u.text(i, 4);
      r.limits = u.text(i, 5);
      r.unit_id = u.text(i, 6);
      r.verdict = u.text(i, 7);
      r.deciding_figure = u.text(i, 8);
      r.judged_utc = u.text(i, 9);
      if (auto it = by_unit.find(u.text(i, 0)); it != by_unit.end())
        r.figures = std::move(it->second);
      out.push_back(std::move(r));
    }
    return out;
  }

 private:
  static std::string trim(std::string s) {
    while (!s.empty() && (s.back() == '\n' || s.back() == ' ')) s.pop_back();
    return s;
  }
  static std::optional<std::string> opt(const std::optional<double>& v) {
    return v ? std::optional<std::string>(number(*v)) : std::nullopt;
  }
  [[noreturn]] void fail(const std::string& why) const {
    throw InputError(where_, "history store: " + trim(why));
  }
  void exec(const char* sql) {
    Result r(PQexec(conn_, sql));
    const auto s = PQresultStatus(r.r);
    if (s != PGRES_COMMAND_OK && s != PGRES_TUPLES_OK) fail(PQerrorMessage(conn_));
  }
  // A statement with text parameters ($1 …); std::nullopt is SQL NULL.
  [[nodiscard]] PGresult* params(const char* sql,
                                 const std::vector<std::optional<std::string>>& values) {
    std::vector<const char*> p;
    for (const auto& v : values) p.push_back(v ? v->c_str() : nullptr);
    PGresult* r = PQexecParams(conn_, sql, static_cast<int>(p.size()), nullptr, p.data(), nullptr,
                               nullptr, 0);
    const auto s = PQresultStatus(r);
    if (s != PGRES_COMMAND_OK && s != PGRES_TUPLES_OK) {
      const std::string why = PQerrorMessage(conn_);
      PQclear(r);
      fail(why);
    }
    return r;
  }
  [[nodiscard]] PGresult* params(const char* sql, std::initializer_list<std::string> values) {
    std::vector<std::optional<std::string>> v(values.begin(), values.end());
    return params(sql, v);
  }

  void migrate() {
    exec("BEGIN");
    try {
      exec(kSchemaLock);
      exec("CREATE TABLE IF NOT EXISTS meta(key TEXT PRIMARY KEY, value INTEGER NOT NULL)");
      Result v(params("SELECT value FROM meta WHERE key = 'schema_version'", {}));
      const int version = v.rows() ? std::stoi(v.text(0, 0)) : 0;
      if (version > kSchemaVersion) {
        fail("schema version " + std::to_string(version) + " is newer than this lopside knows (" +
             std::to_string(kSchemaVersion) +
             "); expected a store written by this or an older version");
      }
      if (version < 1) {
        exec(
            "CREATE TABLE lots(id BIGSERIAL PRIMARY KEY, name TEXT NOT NULL, product TEXT NOT "
            "NULL, station TEXT NOT NULL, decision_rule TEXT NOT NULL, limits TEXT NOT NULL, "
            "first_judged_utc TEXT NOT NULL, UNIQUE(name, product, station, decision_rule, "
            "limits))");
        exec(
            "CREATE TABLE units(id BIGSERIAL PRIMARY KEY, lot_id BIGINT NOT NULL REFERENCES "
            "lots(id), unit_id TEXT NOT NULL, path TEXT NOT NULL, capture_sha256 TEXT NOT NULL, "
            "capture_bytes BIGINT NOT NULL, settings TEXT NOT NULL, settings_sha256 TEXT NOT "
            "NULL, judged_utc TEXT NOT NULL, tool_version TEXT NOT NULL, verdict TEXT NOT NULL, "
            "deciding_figure TEXT NOT NULL, reason TEXT NOT NULL, UNIQUE(capture_sha256, "
            "settings_sha256))");
        exec(
            "CREATE TABLE figures(unit_row BIGINT NOT NULL REFERENCES units(id) ON DELETE "
            "CASCADE, ord BIGSERIAL, name TEXT NOT NULL, value DOUBLE PRECISION, u95 DOUBLE "
            "PRECISION, verdict TEXT NOT NULL, margin DOUBLE PRECISION, PRIMARY KEY(unit_row, "
            "name))");
        exec("CREATE INDEX units_by_lot ON units(lot_id)");
        exec(
            "INSERT INTO meta(key, value) VALUES('schema_version', 1) ON CONFLICT (key) DO "
            "UPDATE SET value = 1");
      }
      exec("COMMIT");
    } catch (...) {
      PQclear(PQexec(conn_, "ROLLBACK"));
      throw;
    }
  }

  std::string where_;
  PGconn* conn_ = nullptr;
};

}  // namespace

std::unique_ptr<HistoryStore> open_postgres_history(const std::string& uri) {
  return std::make_unique<PgHistory>(uri);
}

}  // namespace lopside::detail
