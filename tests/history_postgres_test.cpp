// The history on PostgreSQL: a throwaway server (Debian's postgresql package, started here on a
// Unix socket in a temporary folder and stopped after), the same behaviour as the SQLite store,
// concurrent stations losing and doubling nothing, and the same trend from both stores.
#include <glob.h>
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cstdlib>
#include <filesystem>
#include <string>
#include <thread>

#include "cli_support.hpp"
#include "history_support.hpp"
#include "lopside/error.hpp"
#include "lopside/history.hpp"

namespace {

namespace fs = std::filesystem;
using lopside::test::shell_quote;

// PostgreSQL refuses to run as root: as root the server runs as the package's `postgres` user.
std::string as_server_user(const std::string& cmd) {
  return ::geteuid() == 0 ? "runuser -u postgres -- " + cmd : cmd;
}

std::string pg_bin() {
  glob_t g{};
  std::string dir;
  if (::glob("/usr/lib/postgresql/*/bin/initdb", 0, nullptr, &g) == 0 && g.gl_pathc > 0)
    dir = fs::path(g.gl_pathv[g.gl_pathc - 1]).parent_path().string();
  ::globfree(&g);
  return dir;
}

class Postgres : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    bin_ = pg_bin();
    ASSERT_FALSE(bin_.empty()) << "PostgreSQL's initdb not found: tools/bootstrap.sh installs "
                                  "Debian's postgresql package";
    dir_ = fs::temp_directory_path() / ("lopside_pg_" + std::to_string(::getpid()));
    fs::remove_all(dir_);
    fs::create_directories(dir_);
    if (::geteuid() == 0) {
      ASSERT_EQ(std::system(("chown postgres " + shell_quote(dir_.string())).c_str()), 0);
    }
    port_ = 20000 + ::getpid() % 20000;
    const std::string init = as_server_user(shell_quote(bin_ + "/initdb") + " -D " +
                                            shell_quote((dir_ / "data").string()) +
                                            " -A trust -U postgres >/dev/null 2>&1");
    ASSERT_EQ(std::system(init.c_str()), 0);
    const std::string start =
        as_server_user(shell_quote(bin_ + "/pg_ctl") + " -D " +
                       shell_quote((dir_ / "data").string()) + " -o \"-k " + dir_.string() +
                       " -p " + std::to_string(port_) + " -c listen_addresses=''\" -w -l " +
                       shell_quote((dir_ / "log").string()) + " start >/dev/null 2>&1");
    ASSERT_EQ(std::system(start.c_str()), 0) << "the throwaway server did not start";
  }
  static void TearDownTestSuite() {
    if (!bin_.empty()) {
      const std::string stop = as_server_user(shell_quote(bin_ + "/pg_ctl") + " -D " +
                                              shell_quote((dir_ / "data").string()) +
                                              " -m immediate stop >/dev/null 2>&1");
      std::system(stop.c_str());
    }
    std::error_code ignored;
    fs::remove_all(dir_, ignored);
  }
  // A fresh database per test, so tests do not see each other's rows.
  static std::string database(const std::string& name) {
    const std::string create = shell_quote(bin_ + "/createdb") + " -h " + dir_.string() + " -p " +
                               std::to_string(port_) + " -U postgres " + name + " >/dev/null 2>&1";
    EXPECT_EQ(std::system(create.c_str()), 0);
    return "postgresql:///" + name + "?host=" + dir_.string() + "&port=" + std::to_string(port_) +
           "&user=postgres";
  }
  static inline std::string bin_;
  static inline fs::path dir_;
  static inline int port_ = 0;
};

TEST_F(Postgres, ReRunsAddNothingAndConcurrentStationsLoseNothing) {
  const std::string uri = database("rerun");
  {
    auto s = lopside::open_history(uri);
    EXPECT_EQ(s->record(lopside::test::history_lot("L48", "a", 20)).added, 20u);
    const auto again = s->record(lopside::test::history_lot("L48", "a", 20));
    EXPECT_EQ(again.added, 0u);
    EXPECT_EQ(again.already, 20u);
  }
  const auto station = [&uri](const std::string& name, const std::string& tag) {
    auto s = lopside::open_history(uri);
    for (int batch = 0; batch < 10; ++batch)
      s->record(lopside::test::history_lot(name, tag, 20 * (batch + 1)));
  };
  std::thread a(station, "L50", "b"), b(station, "L51", "c"), c(station, "L52", "d"),
      d(station, "L52", "d");
  a.join();
  b.join();
  c.join();
  d.join();
  // 20 + 200 + 200 + 200 (the last two stations recorded the same units).
  EXPECT_EQ(lopside::open_history(uri)->unit_count(), 620u);
  const auto units = lopside::open_history(uri)->recorded_units("");
  ASSERT_EQ(units.size(), 620u);
  EXPECT_EQ(units.front().lot, "L48");
  ASSERT_EQ(units.front().figures.size(), 1u);
  EXPECT_EQ(*units.front().figures[0].value, 0.0);
}

TEST_F(Postgres, TwoLotProcessesAtOnceAndTheSameTrendAsSqlite) {
  const std::string uri = database("lots");
  const fs::path work = dir_ / "lots";
  fs::create_directories(work / "a");
  fs::create_directories(work / "b");
  std::string synth;
  for (int k = 0; k < 4; ++k) {
    for (const std::string folder : {"a", "b"}) {
      const fs::path p = work / folder / (folder + std::to_string(k) + ".csv");
      const std::string cmd = shell_quote(LOPSIDE_SYNTH) + " -o " + shell_quote(p.string()) +
                              " --frequency 32000 --rate 1e6 --duration 0.005 --peak 0.025 "
                              "--noise-rms 0.0001 --dc " +
                              std::to_string(0.0001 * k * (folder == "a" ? 1 : -1)) + " --seed " +
                              std::to_string(k + (folder == "a" ? 10 : 20)) + " >/dev/null";
      ASSERT_EQ(std::system(cmd.c_str()), 0);
    }
  }
  lopside::test::write_file(work / "limits.toml",
                            "[lot]\nproduct = \"tube supply\"\n"
                            "[limits.dc_offset_a]\nmin = -0.001\nmax = 0.001\n");
  const auto lot_cmd = [&](const std::string& folder, const std::string& store) {
    return shell_quote(LOPSIDE_BINARY) + " lot " + shell_quote((work / folder).string()) +
           " --limits " + shell_quote((work / "limits.toml").string()) + " --lot L-" + folder +
           " --station s-" + folder + " --history " + shell_quote(store) + " >/dev/null 2>&1";
  };
  const std::string both = "(" + lot_cmd("a", uri) + ") & (" + lot_cmd("b", uri) + ") & wait";
  ASSERT_EQ(std::system(both.c_str()), 0);
  EXPECT_EQ(lopside::open_history(uri)->unit_count(), 8u);
  // The same two lots, one after the other, in an SQLite file: the same trend.
  const std::string file = (work / "history.sqlite").string();
  ASSERT_EQ(std::system(lot_cmd("a", file).c_str()), 0);
  ASSERT_EQ(std::system(lot_cmd("b", file).c_str()), 0);
  const auto trend = [](const std::string& store) {
    const fs::path out = dir_ / "trend.json";
    const std::string cmd = shell_quote(LOPSIDE_BINARY) + " trend --history " + shell_quote(store) +
                            " --json " + shell_quote(out.string()) + " >/dev/null 2>&1";
    EXPECT_EQ(std::system(cmd.c_str()), 0);
    auto j = lopside::test::json::parse(lopside::test::slurp(out));
    j.erase("history");
    for (auto& l : j["lots"]) l.erase("first_judged_utc");
    return j;
  };
  const auto from_pg = trend(uri), from_file = trend(file);
  // Lots come in the order they were first judged: the concurrent runs may have finished in
  // either order, so compare them by name.
  ASSERT_EQ(from_pg["lots"].size(), 2u);
  for (const auto& l : from_file["lots"]) {
    bool found = false;
    for (const auto& m : from_pg["lots"]) found = found || m == l;
    EXPECT_TRUE(found) << l.dump();
  }
  EXPECT_EQ(from_pg["failures"], from_file["failures"]);
}

TEST_F(Postgres, AnUnreachableServerIsBadInput) {
  EXPECT_THROW(lopside::open_history("postgresql:///none?host=/nonexistent-dir&port=1"),
               lopside::InputError);
}

}  // namespace
