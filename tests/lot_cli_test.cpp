// `lopside lot` run as a QA engineer runs it: a lot of synthetic units (lopside-synth, whose DC
// is the generator's --dc) judged against a limits file of our own; verdicts, exit status, the
// lot statistics recomputed here from the units' own figures, and bad input.
#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

class Lot : public Cli {
 protected:
  fs::path unit(const std::string& name, double dc_a, int seed) {
    return synth_unit(name, dc_a, seed);
  }
  // DC within ±1 mA, guarded; RMS within a wide window (every unit passes it).
  fs::path limits(const std::string& decision = "guarded") {
    return file("limits.toml", "[lot]\nproduct = \"tube supply 32 kHz\"\ndecision = \"" + decision +
                                   "\"\n\n[limits.dc_offset_a]\nmin = -0.001\nmax = 0.001\n\n"
                                   "[limits.rms_a]\nmin = 0.010\nmax = 0.030\n");
  }
  json lot_json(const std::vector<std::string>& args, int expected_status) {
    std::vector<std::string> a{"lot"};
    a.insert(a.end(), args.begin(), args.end());
    a.insert(a.end(), {"--json", "-"});
    const RunResult r = run(a);
    EXPECT_EQ(r.status, expected_status) << r.err;
    try {
      return json::parse(r.out);
    } catch (const std::exception& e) {
      ADD_FAILURE() << "not JSON: " << e.what() << "\n" << r.out << r.err;
      return json::object();
    }
  }
};

TEST_F(Lot, EachUnitGetsItsVerdictAndTheLotStatusSaysNotAllPassed) {
  const fs::path a = unit("u01.csv", 0.0, 1);     // well inside: pass
  const fs::path b = unit("u02.csv", 0.0005, 2);  // inside by 0.5 mA ≫ u95: pass
  const fs::path c = unit("u03.csv", 0.002, 3);   // outside by 1 mA ≫ u95: fail
  const fs::path d = unit("u04.csv", 0.001, 4);   // on the limit: the u95 interval holds it
  const fs::path missing = dir_ / "u05.csv";      // never written: not measured
  const json j = lot_json({a.string(), b.string(), c.string(), d.string(), missing.string(),
                           "--limits", limits().string()},
                          4);
  ASSERT_EQ(j["units"].size(), 5u);
  const std::vector<std::string> ids{"u01", "u02", "u03", "u04", "u05"};
  for (std::size_t k = 0; k < ids.size(); ++k) EXPECT_EQ(j["units"][k]["id"], ids[k]);
  EXPECT_EQ(j["units"][0]["verdict"], "pass");
  EXPECT_EQ(j["units"][1]["verdict"], "pass");
  EXPECT_EQ(j["units"][2]["verdict"], "fail");
  EXPECT_EQ(j["units"][2]["deciding"]["figure"], "dc_offset_a");
  EXPECT_EQ(j["units"][2]["deciding"]["limit"], "max");
  EXPECT_EQ(j["units"][4]["verdict"], "not_measured");
  EXPECT_NE(j["units"][4]["reason"].get<std::string>().find("cannot open"), std::string::npos)
      << j["units"][4]["reason"];
  // The unit on the limit: conditional exactly when its interval value ± u95 holds 1 mA
  // (ILAC-G8 guarded acceptance); the generator's DC is the limit itself.
  const json& f = j["units"][3]["figures"]["dc_offset_a"];
  const double v = f["value"].get<double>(), u = f["u95"].get<double>();
  EXPECT_NEAR(v, 0.001, 3 * u);
  const bool straddles = v - u <= 0.001 && 0.001 <= v + u;
  EXPECT_EQ(j["units"][3]["verdict"], straddles ? "conditional" : (v > 0.001 ? "fail" : "pass"));
  const json& s = j["summary"];
  EXPECT_EQ(s["count"], 5);
  EXPECT_EQ(s["failed"].get<int>() + s["passed"].get<int>() + s["conditional"].get<int>() +
                s["not_measured"].get<int>(),
            5);
  EXPECT_EQ(s["not_measured"], 1);
  // The lot's yield: units passing on every figure over all units.
  EXPECT_DOUBLE_EQ(s["yield"].get<double>(), s["passed"].get<double>() / 5.0);
  EXPECT_EQ(j["decision_rule"], "guarded");
  EXPECT_EQ(j["product"], "tube supply 32 kHz");
}

TEST_F(Lot, FiguresAreMeasuresOwnAndTheStatisticsFollowFromThem) {
  std::vector<std::string> args;
  const double dcs[] = {0.0001, -0.0002, 0.0003, 0.0, 0.00015, -0.0001};
  for (int k = 0; k < 6; ++k)
    args.push_back(unit("unit" + std::to_string(k) + ".csv", dcs[k], 10 + k).string());
  std::vector<std::string> lot_args = args;
  lot_args.insert(lot_args.end(), {"--limits", limits("simple").string()});
  const json j = lot_json(lot_args, 0);
  ASSERT_EQ(j["units"].size(), 6u);
  // Each unit's figure is the one `measure --json` gives for the same capture, to the bit.
  const json m = run_json({"measure", args[2], "--json", "-"});
  EXPECT_EQ(j["units"][2]["figures"]["dc_offset_a"]["value"], m["dc_offset_a"]["value"]);
  EXPECT_EQ(j["units"][2]["figures"]["dc_offset_a"]["u95"], m["dc_offset_a"]["u95"]);
  // The statistics recomputed from the units' values (ISO 22514-2; AIAG SPC manual):
  // sd with n − 1, σ_within = MR̄/d2 with d2 = 1.128, Cp = (USL − LSL)/6σ, Cpk = min(USL − x̄,
  // x̄ − LSL)/3σ; Pp, Ppk with the overall sd; I chart x̄ ± 3·MR̄/d2.
  std::vector<double> x;
  for (const auto& u : j["units"]) x.push_back(u["figures"]["dc_offset_a"]["value"].get<double>());
  const double n = static_cast<double>(x.size());
  double mean = 0;
  for (const double v : x) mean += v / n;
  double ss = 0, mr = 0;
  for (const double v : x) ss += (v - mean) * (v - mean);
  for (std::size_t i = 1; i < x.size(); ++i) mr += std::fabs(x[i] - x[i - 1]) / (n - 1);
  const double sd = std::sqrt(ss / (n - 1)), sigma = mr / 1.128;
  const double usl = 0.001, lsl = -0.001;
  const json& st = j["summary"]["figures"]["dc_offset_a"];
  const auto near = [](const json& got, double want) {
    EXPECT_NEAR(got.get<double>(), want, 1e-9 * std::max(1.0, std::fabs(want)));
  };
  near(st["mean"], mean);
  near(st["sd"], sd);
  near(st["cp"], (usl - lsl) / (6 * sigma));
  near(st["cpk"], std::min(usl - mean, mean - lsl) / (3 * sigma));
  near(st["pp"], (usl - lsl) / (6 * sd));
  near(st["ppk"], std::min(usl - mean, mean - lsl) / (3 * sd));
  near(st["control_chart"]["ucl"], mean + 3 * mr / 1.128);
  near(st["control_chart"]["mr_ucl"], 3.267 * mr);
  EXPECT_EQ(st["yield"], 1.0);
  EXPECT_EQ(j["summary"]["passed"], 6);
}

TEST_F(Lot, JobsFoldersListsAndPatternsGiveTheSameLotInTheSameOrder) {
  fs::create_directories(dir_ / "lot");
  for (int k = 0; k < 5; ++k) unit("lot/s" + std::to_string(k) + ".csv", 0.0001 * k, 20 + k);
  const std::string lim = limits().string();
  const json one = lot_json({(dir_ / "lot").string(), "--limits", lim, "--jobs", "1"}, 0);
  const json many = lot_json({(dir_ / "lot").string(), "--limits", lim, "--jobs", "3"}, 0);
  EXPECT_EQ(one["units"], many["units"]);
  EXPECT_EQ(one["summary"], many["summary"]);
  const fs::path list = file("units.txt",
                             "# lot L-48\nlot/s0.csv\n\nlot/s1.csv\nlot/s2.csv\n"
                             "lot/s3.csv\nlot/s4.csv\n");
  const json listed = lot_json({"@" + list.string(), "--limits", lim}, 0);
  EXPECT_EQ(listed["summary"], one["summary"]);
  const json globbed = lot_json({(dir_ / "lot" / "s*.csv").string(), "--limits", lim}, 0);
  EXPECT_EQ(globbed["summary"], one["summary"]);
  ASSERT_EQ(globbed["units"].size(), 5u);
  EXPECT_EQ(globbed["units"][4]["id"], "s4");
}

TEST_F(Lot, TextAndCsvOutputs) {
  const fs::path a = unit("u1.csv", 0.0, 1);
  const fs::path c = unit("u2.csv", 0.003, 2);
  const fs::path csv = dir_ / "lot.csv";
  const RunResult r =
      run({"lot", a.string(), c.string(), "--limits", limits().string(), "--csv", csv.string()});
  EXPECT_EQ(r.status, 4) << r.err;
  EXPECT_NE(r.out.find("1 passed, 1 failed"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("Cpk"), std::string::npos) << r.out;
  const std::string text = lopside::test::slurp(csv);
  EXPECT_EQ(text.rfind("id,path,verdict,deciding_figure,deciding_margin,reason,dc_offset_a,"
                       "dc_offset_a_u95,rms_a,rms_a_u95\n",
                       0),
            0u)
      << text;
  EXPECT_NE(text.find("\nu2,"), std::string::npos);
  EXPECT_NE(text.find(",fail,dc_offset_a,"), std::string::npos) << text;
}

TEST_F(Lot, HistoryRecordsEachUnitOnceAndTwoRunsAtOnceLoseNothing) {
  fs::create_directories(dir_ / "a");
  fs::create_directories(dir_ / "b");
  for (int k = 0; k < 4; ++k) {
    unit("a/p" + std::to_string(k) + ".csv", 0.0001 * k, 40 + k);
    unit("b/q" + std::to_string(k) + ".csv", -0.0001 * k, 50 + k);
  }
  const std::string lim = limits().string();
  const fs::path db = dir_ / "history.sqlite";
  // Two stations at once on a new store (two processes), each exit status kept.
  const auto station = [&](const std::string& folder, const std::string& lot,
                           const std::string& name) {
    using lopside::test::shell_quote;
    return "(" + shell_quote(LOPSIDE_BINARY) + " lot " + shell_quote((dir_ / folder).string()) +
           " --limits " + shell_quote(lim) + " --lot " + lot + " --station " + name +
           " --history " + shell_quote(db.string()) + " >/dev/null 2>" +
           shell_quote((dir_ / (lot + ".err")).string()) + "; echo $? >" +
           shell_quote((dir_ / (lot + ".status")).string()) + ")";
  };
  const std::string cmd = station("a", "A", "s1") + " & " + station("b", "B", "s2") + " & wait";
  ASSERT_EQ(std::system(cmd.c_str()), 0);
  for (const std::string lot : {"A", "B"}) {
    EXPECT_EQ(lopside::test::slurp(dir_ / (lot + ".status")), "0\n")
        << lopside::test::slurp(dir_ / (lot + ".err"));
    EXPECT_NE(lopside::test::slurp(dir_ / (lot + ".err")).find("4 unit(s) recorded"),
              std::string::npos);
  }
  // Judged again: nothing lost, nothing doubled.
  const RunResult again = run({"lot", (dir_ / "a").string(), "--limits", lim, "--lot", "A",
                               "--station", "s1", "--history", db.string()});
  EXPECT_EQ(again.status, 0) << again.err;
  EXPECT_NE(again.err.find("0 unit(s) recorded, 4 already there"), std::string::npos) << again.err;
  const RunResult again_b = run({"lot", (dir_ / "b").string(), "--limits", lim, "--lot", "B",
                                 "--station", "s2", "--history", db.string()});
  EXPECT_NE(again_b.err.find("0 unit(s) recorded, 4 already there"), std::string::npos)
      << again_b.err;
  // A changed setting is another measurement of the same capture: recorded anew.
  const RunResult other = run({"lot", (dir_ / "a").string(), "--limits", lim, "--lot", "A",
                               "--station", "s1", "--history", db.string(), "--max-order", "20"});
  EXPECT_NE(other.err.find("4 unit(s) recorded, 0 already there"), std::string::npos) << other.err;
  const RunResult no_lot =
      run({"lot", (dir_ / "a").string(), "--limits", lim, "--history", db.string()});
  EXPECT_EQ(no_lot.status, 2);
  EXPECT_NE(no_lot.err.find("--lot"), std::string::npos) << no_lot.err;
}

TEST_F(Lot, TheDemoLotGivesTheVerdictsItWasMadeFor) {
  // tools/make-demo-lot.sh (README walk-through): 16 healthy units, a supply imbalance and a
  // weak lobe that fail, one unit on its limit, one recording cut short.
  const fs::path demo = dir_ / "demo";
  const std::string cmd =
      "LOPSIDE_SYNTH=" + lopside::test::shell_quote(LOPSIDE_SYNTH) + " " +
      lopside::test::shell_quote(std::string(LOPSIDE_SOURCE_DIR) + "/tools/make-demo-lot.sh") +
      " " + lopside::test::shell_quote(demo.string()) + " >/dev/null";
  ASSERT_EQ(std::system(cmd.c_str()), 0);
  const json j = lot_json({demo.string(), "--limits", (demo / "limits.toml").string()}, 4);
  EXPECT_EQ(j["summary"]["count"], 20);
  EXPECT_EQ(j["summary"]["passed"], 16);
  EXPECT_EQ(j["summary"]["failed"], 2);
  EXPECT_EQ(j["summary"]["conditional"], 1);
  EXPECT_EQ(j["summary"]["not_measured"], 1);
  for (const auto& u : j["units"]) {
    const std::string id = u["id"];
    std::string expected = "pass";
    if (id == "0486" || id == "0493") expected = "fail";
    if (id == "0490") expected = "conditional";
    if (id == "0497") expected = "not_measured";
    EXPECT_EQ(u["verdict"], expected) << id;
  }
}

TEST_F(Lot, UnitIdsFromAPatternOrAPreambleKey) {
  const fs::path p = dir_ / "bench7-inv-0042-run2.csv";
  const RunResult g = run({"-o", p.string(), "--frequency", "32000", "--rate", "1e6", "--duration",
                           "0.005", "--peak", "0.025", "--preamble", "--meta", "Serial=SN-77-0042"},
                          LOPSIDE_SYNTH);
  ASSERT_EQ(g.status, 0) << g.err;
  const std::string limits = "\n[limits.rms_a]\nmin = 0.010\nmax = 0.030\n";
  const fs::path by_key =
      file("key.toml", "[lot]\nunit_id = \"key\"\nunit_id_key = \"serial\"\n" + limits);
  EXPECT_EQ(lot_json({p.string(), "--limits", by_key.string()}, 0)["units"][0]["id"], "SN-77-0042");
  const fs::path by_pattern =
      file("pattern.toml",
           "[lot]\nunit_id = \"pattern\"\nunit_id_pattern = \"inv-(\\\\d+)\"\n" + limits);
  EXPECT_EQ(lot_json({p.string(), "--limits", by_pattern.string()}, 0)["units"][0]["id"], "0042");
  const fs::path by_stem = file("stem.toml", limits);
  EXPECT_EQ(lot_json({p.string(), "--limits", by_stem.string()}, 0)["units"][0]["id"],
            "bench7-inv-0042-run2");
}

TEST_F(Lot, BadLimitsOrNoCapturesAreBadInput) {
  const fs::path a = unit("u1.csv", 0.0, 1);
  const fs::path bad = file("bad.toml",
                            "[lot]\ndecision = \"guarded\"\n\n[limits.dc_offset_a]\n"
                            "mx = 0.001\n");
  RunResult r = run({"lot", a.string(), "--limits", bad.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("bad.toml"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find(":5"), std::string::npos) << r.err;  // the line of "mx"
  const fs::path unknown = file("unknown.toml", "[limits.dc_offset_ma]\nmax = 1\n");
  r = run({"lot", a.string(), "--limits", unknown.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("dc_offset_ma"), std::string::npos) << r.err;
  r = run({"lot", (dir_ / "nothing*.csv").string(), "--limits", limits().string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("no file matches"), std::string::npos) << r.err;
}

}  // namespace
