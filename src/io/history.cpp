// The history store (history.hpp) on SQLite, and the SHA-256 of captures (OpenSSL).
// SQLite is included here only.
#include "lopside/history.hpp"

#include <openssl/evp.h>
#include <sqlite3.h>

#include <array>
#include <cerrno>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <stdexcept>
#include <thread>

#include "history_postgres.hpp"
#include "lopside/error.hpp"

namespace lopside {
namespace {

constexpr int kSchemaVersion = 1;

std::string hex(const unsigned char* d, unsigned n) {
  static const char* digits = "0123456789abcdef";
  std::string s;
  for (unsigned i = 0; i < n; ++i) {
    s += digits[d[i] >> 4];
    s += digits[d[i] & 15];
  }
  return s;
}

struct Digest {
  EVP_MD_CTX* ctx = EVP_MD_CTX_new();
  Digest() {
    if (!ctx || EVP_DigestInit_ex(ctx, EVP_sha256(), nullptr) != 1)
      throw std::runtime_error("OpenSSL: cannot start a SHA-256 digest");
  }
  ~Digest() { EVP_MD_CTX_free(ctx); }
  void update(const void* p, std::size_t n) {
    if (EVP_DigestUpdate(ctx, p, n) != 1) throw std::runtime_error("OpenSSL: digest failed");
  }
  std::string finish() {
    std::array<unsigned char, EVP_MAX_MD_SIZE> md{};
    unsigned n = 0;
    if (EVP_DigestFinal_ex(ctx, md.data(), &n) != 1)
      throw std::runtime_error("OpenSSL: digest failed");
    return hex(md.data(), n);
  }
};

// One SQLite connection; every failure becomes an InputError naming the store.
class Sqlite {
 public:
  explicit Sqlite(const std::string& path) : path_(path) {
    if (sqlite3_open_v2(path.c_str(), &db_, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, nullptr) !=
        SQLITE_OK) {
      const std::string why = db_ ? sqlite3_errmsg(db_) : "out of memory";
      sqlite3_close(db_);
      db_ = nullptr;
      throw InputError(path_, "cannot open the history store: " + why);
    }
    // Two stations on one file: a writer waits for the other's transaction (up to 60 s)
    // instead of failing at once (SQLite C interface, sqlite3_busy_timeout).
    sqlite3_busy_timeout(db_, 60000);
  }
  ~Sqlite() { sqlite3_close(db_); }
  Sqlite(const Sqlite&) = delete;
  Sqlite& operator=(const Sqlite&) = delete;

  void exec(const std::string& sql) {
    char* err = nullptr;
    if (sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &err) != SQLITE_OK) {
      const std::string why = err ? err : sqlite3_errmsg(db_);
      sqlite3_free(err);
      fail(why);
    }
  }
  /// exec() that waits out SQLITE_BUSY for up to a minute. SQLite returns BUSY at once, not
  /// through the busy handler, where waiting could deadlock (two connections setting WAL mode
  /// on a new file, a lock upgrade; SQLite C interface, sqlite3_busy_handler), so stations
  /// opening one store at the same moment retry here.
  void exec_waiting(const std::string& sql) {
    for (int attempt = 0;; ++attempt) {
      char* err = nullptr;
      const int rc = sqlite3_exec(db_, sql.c_str(), nullptr, nullptr, &err);
      const std::string why = err ? err : sqlite3_errmsg(db_);
      sqlite3_free(err);
      if (rc == SQLITE_OK) return;
      if ((rc & 0xFF) != SQLITE_BUSY && (rc & 0xFF) != SQLITE_LOCKED) fail(why);
      if (attempt >= 1200) fail(why + " (waited a minute for another writer)");
      if (!sqlite3_get_autocommit(db_)) sqlite3_exec(db_, "ROLLBACK", nullptr, nullptr, nullptr);
      std::this_thread::sleep_for(std::chrono::milliseconds(50));
    }
  }
  [[noreturn]] void fail(const std::string& why) const {
    throw InputError(path_, "history store: " + why);
  }
  sqlite3* db() const { return db_; }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
  sqlite3* db_ = nullptr;
};

// A prepared statement with positional binding.
class Statement {
 public:
  Statement(Sqlite& db, const char* sql) : db_(db) {
    if (sqlite3_prepare_v2(db.db(), sql, -1, &s_, nullptr) != SQLITE_OK)
      db.fail(sqlite3_errmsg(db.db()));
  }
  ~Statement() { sqlite3_finalize(s_); }
  Statement(const Statement&) = delete;
  Statement& operator=(const Statement&) = delete;
  void reset() {
    sqlite3_reset(s_);
    sqlite3_clear_bindings(s_);
  }
  void bind(int i, const std::string& v) {
    check(sqlite3_bind_text(s_, i, v.c_str(), static_cast<int>(v.size()), SQLITE_TRANSIENT));
  }
  void bind(int i, std::int64_t v) { check(sqlite3_bind_int64(s_, i, v)); }
  void bind(int i, const std::optional<double>& v) {
    check(v ? sqlite3_bind_double(s_, i, *v) : sqlite3_bind_null(s_, i));
  }
  /// Steps once: true when a row is there.
  bool step() {
    const int rc = sqlite3_step(s_);
    if (rc == SQLITE_ROW) return true;
    if (rc == SQLITE_DONE) return false;
    db_.fail(sqlite3_errmsg(db_.db()));
  }
  std::int64_t column_int(int i) { return sqlite3_column_int64(s_, i); }
  std::string column_text(int i) {
    const auto* t = sqlite3_column_text(s_, i);
    return t ? std::string(reinterpret_cast<const char*>(t)) : std::string();
  }
  std::optional<double> column_double(int i) {
    if (sqlite3_column_type(s_, i) == SQLITE_NULL) return std::nullopt;
    return sqlite3_column_double(s_, i);
  }

 private:
  void check(int rc) {
    if (rc != SQLITE_OK) db_.fail(sqlite3_errmsg(db_.db()));
  }
  Sqlite& db_;
  sqlite3_stmt* s_ = nullptr;
};

class SqliteHistory final : public HistoryStore {
 public:
  explicit SqliteHistory(const std::string& path) : db_(path) {
    // WAL: readers do not block the writer and a crash leaves the file consistent (SQLite,
    // "Write-Ahead Logging"); NORMAL sync is durable at each checkpoint in WAL mode.
    db_.exec_waiting("PRAGMA journal_mode=WAL");
    db_.exec("PRAGMA synchronous=NORMAL; PRAGMA foreign_keys=ON;");
    migrate();
  }

  RecordOutcome record(const HistoryLot& lot) override {
    RecordOutcome out;
    // BEGIN IMMEDIATE takes the write lock at once, so two stations serialise here (waiting
    // under the busy timeout) rather than failing half-way through a lot.
    db_.exec_waiting("BEGIN IMMEDIATE");
    try {
      const std::int64_t lot_id = lot_row(lot);
      Statement unit(db_,
                     "INSERT OR IGNORE INTO units(lot_id, unit_id, path, capture_sha256, "
                     "capture_bytes, settings, settings_sha256, judged_utc, tool_version, "
                     "verdict, deciding_figure, reason) VALUES(?,?,?,?,?,?,?,?,?,?,?,?)");
      Statement figure(db_,
                       "INSERT INTO figures(unit_row, name, value, u95, verdict, margin) "
                       "VALUES(?,?,?,?,?,?)");
      for (const HistoryUnit& u : lot.units) {
        if (u.capture_sha256.empty()) {
          ++out.unhashed;
          continue;
        }
        unit.reset();
        unit.bind(1, lot_id);
        unit.bind(2, u.unit_id);
        unit.bind(3, u.path);
        unit.bind(4, u.capture_sha256);
        unit.bind(5, static_cast<std::int64_t>(u.capture_bytes));
        unit.bind(6, lot.settings);
        unit.bind(7, lot.settings_sha256);
        unit.bind(8, lot.judged_utc);
        unit.bind(9, lot.tool_version);
        unit.bind(10, u.verdict);
        unit.bind(11, u.deciding_figure);
        unit.bind(12, u.reason);
        unit.step();
        if (sqlite3_changes(db_.db()) == 0) {
          ++out.already;
          continue;
        }
        ++out.added;
        const std::int64_t row = sqlite3_last_insert_rowid(db_.db());
        for (const HistoryFigure& f : u.figures) {
          figure.reset();
          figure.bind(1, row);
          figure.bind(2, f.name);
          figure.bind(3, f.value);
          figure.bind(4, f.u95);
          figure.bind(5, f.verdict);
          figure.bind(6, f.margin);
          figure.step();
        }
      }
      db_.exec("COMMIT");
    } catch (...) {
      sqlite3_exec(db_.db(), "ROLLBACK", nullptr, nullptr, nullptr);
      throw;
    }
    return out;
  }

  std::vector<RecordedUnit> recorded_units(const std::string& product) override {
    std::vector<RecordedUnit> out;
    Statement units(db_,
                    "SELECT u.id, l.name, l.product, l.station, l.first_judged_utc, l.limits, "
                    "u.unit_id, u.verdict, u.deciding_figure, u.judged_utc FROM units u JOIN lots "
                    "l ON u.lot_id = l.id WHERE ? = '' OR l.product = ? ORDER BY "
                    "l.first_judged_utc, l.id, u.id");
    units.bind(1, product);
    units.bind(2, product);
    Statement figures(db_,
                      "SELECT name, value, u95, verdict FROM figures WHERE unit_row = ? ORDER BY "
                      "rowid");
    while (units.step()) {
      RecordedUnit u;
      u.lot = units.column_text(1);
      u.product = units.column_text(2);
      u.station = units.column_text(3);
      u.lot_first_judged_utc = units.column_text(4);
      u.limits = units.column_text(5);
      u.unit_id = units.column_text(6);
      u.verdict = units.column_text(7);
      u.deciding_figure = units.column_text(8);
      u.judged_utc = units.column_text(9);
      figures.reset();
      figures.bind(1, units.column_int(0));
      while (figures.step()) {
        RecordedFigure f;
        f.name = figures.column_text(0);
        f.value = figures.column_double(1);
        f.u95 = figures.column_double(2);
        f.verdict = figures.column_text(3);
        u.figures.push_back(std::move(f));
      }
      out.push_back(std::move(u));
    }
    return out;
  }

  std::uint64_t unit_count() override {
    Statement s(db_, "SELECT COUNT(*) FROM units");
    return s.step() ? static_cast<std::uint64_t>(s.column_int(0)) : 0;
  }

 private:
  int schema_version() {
    Statement s(db_, "SELECT value FROM meta WHERE key = 'schema_version'");
    return s.step() ? static_cast<int>(s.column_int(0)) : 0;
  }

  // Brings the file to kSchemaVersion, one step per version, each in its own transaction; a
  // newer file than this program knows is refused rather than written wrongly.
  void migrate() {
    db_.exec_waiting("BEGIN IMMEDIATE");
    try {
      db_.exec("CREATE TABLE IF NOT EXISTS meta(key TEXT PRIMARY KEY, value INTEGER NOT NULL)");
      const int version = schema_version();
      if (version > kSchemaVersion) {
        db_.fail("schema version " + std::to_string(version) +
                 " is newer than this lopside knows (" + std::to_string(kSchemaVersion) +
                 "); expected a store written by this or an older version");
      }
      if (version < 1) {
        db_.exec(
            "CREATE TABLE lots(id INTEGER PRIMARY KEY, name TEXT NOT NULL, product TEXT NOT "
            "NULL, station TEXT NOT NULL, decision_rule TEXT NOT NULL, limits TEXT NOT NULL, "
            "first_judged_utc TEXT NOT NULL, UNIQUE(name, product, station, decision_rule, "
            "limits));"
            "CREATE TABLE units(id INTEGER PRIMARY KEY, lot_id INTEGER NOT NULL REFERENCES "
            "lots(id), unit_id TEXT NOT NULL, path TEXT NOT NULL, capture_sha256 TEXT NOT NULL, "
            "capture_bytes INTEGER NOT NULL, settings TEXT NOT NULL, settings_sha256 TEXT NOT "
            "NULL, judged_utc TEXT NOT NULL, tool_version TEXT NOT NULL, verdict TEXT NOT NULL, "
            "deciding_figure TEXT NOT NULL, reason TEXT NOT NULL, UNIQUE(capture_sha256, "
            "settings_sha256));"
            "CREATE TABLE figures(unit_row INTEGER NOT NULL REFERENCES units(id) ON DELETE "
            "CASCADE, name TEXT NOT NULL, value REAL, u95 REAL, verdict TEXT NOT NULL, margin "
            "REAL, PRIMARY KEY(unit_row, name));"
            "CREATE INDEX units_by_lot ON units(lot_id);"
            "INSERT OR REPLACE INTO meta(key, value) VALUES('schema_version', 1);");
      }
      db_.exec("COMMIT");
    } catch (...) {
      sqlite3_exec(db_.db(), "ROLLBACK", nullptr, nullptr, nullptr);
      throw;
    }
  }

  std::int64_t lot_row(const HistoryLot& lot) {
    Statement insert(db_,
                     "INSERT OR IGNORE INTO lots(name, product, station, decision_rule, limits, "
                     "first_judged_utc) VALUES(?,?,?,?,?,?)");
    insert.bind(1, lot.name);
    insert.bind(2, lot.product);
    insert.bind(3, lot.station);
    insert.bind(4, lot.decision_rule);
    insert.bind(5, lot.limits);
    insert.bind(6, lot.judged_utc);
    insert.step();
    Statement find(db_,
                   "SELECT id FROM lots WHERE name = ? AND product = ? AND station = ? AND "
                   "decision_rule = ? AND limits = ?");
    find.bind(1, lot.name);
    find.bind(2, lot.product);
    find.bind(3, lot.station);
    find.bind(4, lot.decision_rule);
    find.bind(5, lot.limits);
    if (!find.step()) db_.fail("the lot row vanished");
    return find.column_int(0);
  }

  Sqlite db_;
};

}  // namespace

std::unique_ptr<HistoryStore> open_history(const std::string& where) {
  // A plant's stations share one PostgreSQL database, named by a libpq connection URI.
  if (where.rfind("postgresql://", 0) == 0 || where.rfind("postgres://", 0) == 0)
    return detail::open_postgres_history(where);
  return std::make_unique<SqliteHistory>(where);
}

std::string file_sha256(const std::string& path, std::uint64_t& bytes,
                        const std::atomic<bool>* stop) {
  std::ifstream in(path, std::ios::binary);
  if (!in) throw InputError(path, std::string("cannot read the capture: ") + std::strerror(errno));
  Digest d;
  std::vector<char> buf(std::size_t{1} << 20);
  bytes = 0;
  while (in) {
    if (stop != nullptr && stop->load(std::memory_order_relaxed)) return {};
    in.read(buf.data(), static_cast<std::streamsize>(buf.size()));
    const auto got = static_cast<std::size_t>(in.gcount());
    d.update(buf.data(), got);
    bytes += got;
  }
  if (in.bad()) throw InputError(path, "cannot read the capture to hash it");
  return d.finish();
}

std::string text_sha256(const std::string& text) {
  Digest d;
  d.update(text.data(), text.size());
  return d.finish();
}

}  // namespace lopside
