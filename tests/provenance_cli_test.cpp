// Every JSON lopside writes says where it came from (issue 14, point 2): the tool's version,
// the time of the analysis, each input's size and SHA-256, the options given that change a
// figure and every setting in effect. The hashes are checked against coreutils' sha256sum (an
// implementation of FIPS 180-4 outside the project), the version against `lopside --version`.
#include <sys/stat.h>

#include <chrono>
#include <cstdio>
#include <ctime>
#include <regex>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

class Provenance : public Cli {
 protected:
  fs::path unit(const std::string& name, double dc_a, int seed) {
    return synth_unit(name, dc_a, seed);
  }
  // coreutils' digest of the file, the reference the JSON must match.
  std::string sha256sum(const fs::path& p) {
    const RunResult r = run({p.string()}, "/usr/bin/sha256sum");
    EXPECT_EQ(r.status, 0) << r.err;
    return r.out.substr(0, 64);
  }
  std::string version() {
    const RunResult r = run({"--version"});
    EXPECT_EQ(r.status, 0);
    std::string v = r.out.substr(std::string("lopside ").size());
    while (!v.empty() && v.back() == '\n') v.pop_back();
    return v;
  }
  // The provenance block common to every command; `command` is the one that wrote it.
  void expect_common(const json& p, const std::string& command) {
    EXPECT_EQ(p["tool"], "lopside");
    EXPECT_EQ(p["command"], command);
    EXPECT_EQ(p["tool_version"], version());
    const std::string when = p["analysed_utc"].get<std::string>();
    ASSERT_TRUE(std::regex_match(when, std::regex(R"(\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ)"))) << when;
    // Within a day of now: the time of this analysis, not a fixed or local-time stamp.
    std::tm tm{};
    ASSERT_NE(::strptime(when.c_str(), "%Y-%m-%dT%H:%M:%SZ", &tm), nullptr);
    const std::time_t t = ::timegm(&tm);
    EXPECT_LT(std::abs(std::difftime(std::time(nullptr), t)), 86400.0);
  }
  void expect_input(const json& in, const std::string& role, const fs::path& p) {
    EXPECT_EQ(in["role"], role);
    EXPECT_EQ(in["path"], p.string());
    EXPECT_EQ(in["bytes"], fs::file_size(p));
    EXPECT_EQ(in["sha256"], sha256sum(p));
  }
};

TEST_F(Provenance, MeasureNamesItsCaptureByDigestAndKeepsTheFigureChangingOptions) {
  const fs::path cap = unit("u1.csv", 0.0004, 1);
  const fs::path html = dir_ / "r.html";
  const json j = run_json({"measure", cap.string(), "--probe-gain-pct", "2", "--max-order", "12",
                           "--regime", "arc", "--html", html.string(), "--json", "-"});
  ASSERT_TRUE(j.contains("provenance"));
  const json& p = j["provenance"];
  expect_common(p, "measure");
  ASSERT_EQ(p["inputs"].size(), 1u);
  expect_input(p["inputs"][0], "capture", cap);
  // The options as given, outputs left out: the command line that reproduces the figures.
  EXPECT_EQ(p["options_given"],
            json({{"--probe-gain-pct", "2"}, {"--max-order", "12"}, {"--regime", "arc"}}));
  // Every setting in effect, defaults included.
  EXPECT_EQ(p["settings"]["probe"], "shunt");
  EXPECT_EQ(p["settings"]["probe_gain_tolerance_pct"], 2.0);
  EXPECT_EQ(p["settings"]["harmonic_max_order"], 12.0);
  EXPECT_EQ(p["settings"]["harmonic_block_cycles"], 10.0);
  EXPECT_EQ(p["settings"]["reference"], "auto");
  EXPECT_EQ(p["settings"]["heating_regime"], "arc");
  EXPECT_DOUBLE_EQ(p["settings"]["cathode_heat_share"].get<double>(), 0.3);
  EXPECT_EQ(p["settings_sha256"].get<std::string>().size(), 64u);
}

TEST_F(Provenance, EqualSettingsGiveEqualSettingsDigestsAndOtherSettingsAnother) {
  const fs::path a = unit("a.csv", 0.0, 1);
  const fs::path b = unit("b.csv", 0.0002, 2);
  const json ja = run_json({"measure", a.string(), "--max-order", "8", "--json", "-"});
  const json jb = run_json({"measure", b.string(), "--max-order", "8", "--json", "-"});
  const json jc = run_json({"measure", a.string(), "--max-order", "9", "--json", "-"});
  EXPECT_EQ(ja["provenance"]["settings_sha256"], jb["provenance"]["settings_sha256"]);
  EXPECT_NE(ja["provenance"]["settings_sha256"], jc["provenance"]["settings_sha256"]);
  EXPECT_NE(ja["provenance"]["inputs"][0]["sha256"], jb["provenance"]["inputs"][0]["sha256"]);
}

TEST_F(Provenance, InputsReadOnceAreNotHashedAndSaySo) {
  const fs::path cap = unit("u.csv", 0.0, 3);
  // Standard input (run() gives /dev/null there, so the shell feeds the file).
  const std::string cmd = lopside::test::shell_quote(LOPSIDE_BINARY) + " measure - --json - <" +
                          lopside::test::shell_quote(cap.string()) + " >" +
                          lopside::test::shell_quote((dir_ / "o.json").string());
  ASSERT_EQ(std::system(cmd.c_str()), 0);
  const json j = json::parse(lopside::test::slurp(dir_ / "o.json"));
  const json& in = j["provenance"]["inputs"][0];
  EXPECT_EQ(in["path"], "-");
  EXPECT_TRUE(in["sha256"].is_null());
  EXPECT_TRUE(in["bytes"].is_null());
  EXPECT_NE(in["not_hashed"].get<std::string>().find("standard input"), std::string::npos);
  // A FIFO made here (never one of the machine's own).
  const fs::path fifo = dir_ / "pipe.csv";
  ASSERT_EQ(::mkfifo(fifo.c_str(), 0600), 0);
  const std::string feed = "cat " + lopside::test::shell_quote(cap.string()) + " >" +
                           lopside::test::shell_quote(fifo.string()) + " & " +
                           lopside::test::shell_quote(LOPSIDE_BINARY) + " measure " +
                           lopside::test::shell_quote(fifo.string()) + " --json - >" +
                           lopside::test::shell_quote((dir_ / "f.json").string()) + "; wait";
  ASSERT_EQ(std::system(feed.c_str()), 0);
  const json jf = json::parse(lopside::test::slurp(dir_ / "f.json"));
  EXPECT_TRUE(jf["provenance"]["inputs"][0]["sha256"].is_null());
  EXPECT_NE(jf["provenance"]["inputs"][0]["not_hashed"].get<std::string>().find("not a regular"),
            std::string::npos);
}

TEST_F(Provenance, InspectSwapLotAndTrendCarryItToo) {
  const fs::path n = unit("n.csv", 0.0004, 4);
  const fs::path s = unit("s.csv", -0.0003, 5);
  const json ji = run_json({"inspect", n.string(), "--rate", "1e6", "--json", "-"});
  expect_common(ji["provenance"], "inspect");
  expect_input(ji["provenance"]["inputs"][0], "capture", n);
  EXPECT_EQ(ji["provenance"]["options_given"], json({{"--rate", "1e6"}}));

  const json js = run_json({"swap", n.string(), s.string(), "--json", "-"});
  expect_common(js["provenance"], "swap");
  ASSERT_EQ(js["provenance"]["inputs"].size(), 2u);
  expect_input(js["provenance"]["inputs"][0], "normal", n);
  expect_input(js["provenance"]["inputs"][1], "swapped", s);
  EXPECT_EQ(js["provenance"]["settings"]["probe_on"], "electrode");

  const fs::path limits = file("limits.toml",
                               "[lot]\nproduct = \"tube supply 32 kHz\"\n\n"
                               "[limits.dc_offset_a]\nmin = -0.001\nmax = 0.001\n");
  const fs::path db = dir_ / "h.sqlite";
  const RunResult r = run({"lot", n.string(), s.string(), "--limits", limits.string(), "--lot",
                           "L1", "--jobs", "2", "--history", db.string(), "--json", "-"});
  ASSERT_EQ(r.status, 0) << r.err;
  const json jl = json::parse(r.out);
  expect_common(jl["provenance"], "lot");
  ASSERT_EQ(jl["provenance"]["inputs"].size(), 3u);
  expect_input(jl["provenance"]["inputs"][0], "limits", limits);
  expect_input(jl["provenance"]["inputs"][1], "capture", n);
  expect_input(jl["provenance"]["inputs"][2], "capture", s);
  // The limits decide the verdicts; outputs, threads, the history and the lot's name do not.
  EXPECT_EQ(jl["provenance"]["options_given"], json({{"--limits", limits.string()}}));
  EXPECT_EQ(jl["provenance"]["settings"]["decision_rule"], "simple");

  const json jt = run_json({"trend", "--history", db.string(), "--json", "-"});
  expect_common(jt["provenance"], "trend");
  expect_input(jt["provenance"]["inputs"][0], "history", db);
}

}  // namespace
