// The history store (history.hpp): SHA-256 against the FIPS 180-2 test vectors, units
// recorded once whatever the re-runs, concurrent writers losing nothing, and the schema's
// version guarded.
#include "lopside/history.hpp"

#include <gtest/gtest.h>
#include <sqlite3.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>
#include <thread>
#include <vector>

#include "history_support.hpp"
#include "lopside/error.hpp"

namespace lopside {
namespace {

namespace fs = std::filesystem;

fs::path temp(const std::string& name) {
  const fs::path d = fs::temp_directory_path() / ("lopside_history_" + std::to_string(::getpid()));
  fs::create_directories(d);
  const fs::path p = d / name;
  for (const char* suffix : {"", "-wal", "-shm"}) fs::remove(p.string() + suffix);
  return p;
}

TEST(Sha256, FipsTestVectors) {
  // FIPS 180-2, appendix B.1 and the empty message.
  EXPECT_EQ(text_sha256("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(text_sha256(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
  // B.2: the 448-bit message.
  EXPECT_EQ(text_sha256("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  const fs::path f = temp("abc.bin");
  std::ofstream(f, std::ios::binary) << "abc";
  std::uint64_t bytes = 0;
  EXPECT_EQ(file_sha256(f.string(), bytes),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(bytes, 3u);
  EXPECT_THROW(file_sha256((f.string() + ".missing"), bytes), InputError);
}

TEST(History, ReRunsAddNothingAndNewCapturesAreAdded) {
  const fs::path db = temp("rerun.sqlite");
  auto store = open_history(db.string());
  RecordOutcome r = store->record(test::history_lot("L48", "a", 20));
  EXPECT_EQ(r.added, 20u);
  r = store->record(test::history_lot("L48", "a", 20));
  EXPECT_EQ(r.added, 0u);
  EXPECT_EQ(r.already, 20u);
  r = store->record(test::history_lot("L48", "a", 25));  // five more units of the same lot
  EXPECT_EQ(r.added, 5u);
  EXPECT_EQ(store->unit_count(), 25u);
  // Reopened: the same rows, the schema not made again.
  store.reset();
  EXPECT_EQ(open_history(db.string())->unit_count(), 25u);
  // A unit without a readable capture is not recorded.
  HistoryLot unreadable = test::history_lot("L49", "b", 1);
  unreadable.units[0].capture_sha256.clear();
  EXPECT_EQ(open_history(db.string())->record(unreadable).unhashed, 1u);
}

TEST(History, TwoStationsWritingAtOnceLoseAndDoubleNothing) {
  const fs::path db = temp("concurrent.sqlite");
  open_history(db.string());  // the schema made once, as a first station would
  // Two connections, as two test stations on one file: different lots at once, then the same
  // lot at once.
  const auto station = [&db](const std::string& name, const std::string& tag) {
    auto s = open_history(db.string());
    for (int batch = 0; batch < 10; ++batch)
      s->record(test::history_lot(name, tag, 20 * (batch + 1)));
  };
  std::thread a(station, "L50", "a");
  std::thread b(station, "L51", "b");
  a.join();
  b.join();
  EXPECT_EQ(open_history(db.string())->unit_count(), 400u);
  std::thread c(station, "L52", "c");
  std::thread d(station, "L52", "c");
  c.join();
  d.join();
  EXPECT_EQ(open_history(db.string())->unit_count(), 600u);
}

TEST(History, ANewerSchemaAndAPostgresUriAreRefused) {
  const fs::path db = temp("newer.sqlite");
  open_history(db.string());
  sqlite3* raw = nullptr;
  ASSERT_EQ(sqlite3_open(db.c_str(), &raw), SQLITE_OK);
  ASSERT_EQ(sqlite3_exec(raw, "UPDATE meta SET value = 99 WHERE key = 'schema_version'", nullptr,
                         nullptr, nullptr),
            SQLITE_OK);
  sqlite3_close(raw);
  try {
    open_history(db.string());
    FAIL() << "a newer schema was opened";
  } catch (const InputError& e) {
    EXPECT_NE(std::string(e.what()).find("schema version 99"), std::string::npos) << e.what();
  }
  EXPECT_THROW(open_history("postgresql://localhost/lopside"), InputError);
  EXPECT_THROW(open_history((temp("no-such-dir") / "x" / "h.sqlite").string()), InputError);
}

}  // namespace
}  // namespace lopside
