// `lopside trend` on a history written by `lopside lot --history`: lots in order, their
// statistics equal to each lot's own, a lot whose mean jumped flagged by the run rules, and the
// unit that failed most often named.
#include <cmath>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

class Trend : public Cli {
 protected:
  void unit(const fs::path& p, double dc_a, int seed, double peak_a = 0.025) {
    const RunResult g =
        run({"-o", p.string(), "--frequency", "32000", "--rate", "1e6", "--duration", "0.005",
             "--peak", std::to_string(peak_a), "--noise-rms", "0.0001", "--dc",
             std::to_string(dc_a), "--seed", std::to_string(seed)},
            LOPSIDE_SYNTH);
    ASSERT_EQ(g.status, 0) << g.err;
  }
};

TEST_F(Trend, LotsInOrderTheJumpFlaggedAndTheRepeatFailureNamed) {
  const fs::path limits = file("limits.toml",
                               "[lot]\nproduct = \"tube supply 32 kHz\"\n\n"
                               "[limits.dc_offset_a]\nmin = -0.001\nmax = 0.001\n\n"
                               "[limits.rms_a]\nmin = 0.015\nmax = 0.020\n");
  const fs::path db = dir_ / "history.sqlite";
  // Six lots of three units; lot 6's units carry +0.6 mA more DC (a process shift, still
  // inside the limits); unit u7 fails on its RMS in lots 2 and 6 (32 mA peak: 22.6 mA RMS
  // against 20 mA), u9 once, in lot 4. Their DC is as small as the others', so the lot means
  // of the DC move only with the shift.
  std::vector<json> lot_json;
  int seed = 1;
  for (int lot = 1; lot <= 6; ++lot) {
    const fs::path dir = dir_ / ("L" + std::to_string(lot));
    fs::create_directories(dir);
    const double shift = lot == 6 ? 0.0006 : 0.0;
    const bool big = lot == 2 || lot == 4 || lot == 6;
    const std::string third =
        lot == 2 || lot == 6 ? "u7" : (lot == 4 ? "u9" : "u" + std::to_string(lot * 10 + 3));
    unit(dir / ("u" + std::to_string(lot * 10 + 1) + ".csv"), 0.00002 * lot + shift, seed++);
    unit(dir / ("u" + std::to_string(lot * 10 + 2) + ".csv"), -0.00003 * lot + shift, seed++);
    unit(dir / (third + ".csv"), 0.00001 + shift, seed++, big ? 0.032 : 0.025);
    const RunResult r =
        run({"lot", dir.string(), "--limits", limits.string(), "--lot", "L" + std::to_string(lot),
             "--station", "bench-7", "--history", db.string(), "--json", "-"});
    ASSERT_TRUE(r.status == 0 || r.status == 4) << r.err;
    lot_json.push_back(json::parse(r.out));
  }
  const json t = run_json({"trend", "--history", db.string(), "--json", "-"});
  ASSERT_EQ(t["lots"].size(), 6u);
  for (std::size_t k = 0; k < 6; ++k) {
    EXPECT_EQ(t["lots"][k]["lot"], "L" + std::to_string(k + 1));
    // The trend's per-lot statistics are the lot's own (same values, same formulas).
    const json& mine = t["lots"][k]["figures"]["dc_offset_a"];
    const json& lots = lot_json[k]["summary"]["figures"]["dc_offset_a"];
    EXPECT_NEAR(mine["mean"].get<double>(), lots["mean"].get<double>(), 1e-15);
    EXPECT_NEAR(mine["sd"].get<double>(), lots["sd"].get<double>(), 1e-15);
    EXPECT_EQ(mine["yield"], lots["yield"]);
  }
  // Lot 6's mean is beyond the lot means' 3σ limits (individuals chart of the means, σ from
  // their mean moving range): Western Electric rule 1 flags it.
  ASSERT_FALSE(t["figures"].empty());
  const json& fig = t["figures"][0];
  EXPECT_EQ(fig["figure"], "dc_offset_a");
  EXPECT_EQ(fig["product"], "tube supply 32 kHz");
  bool flagged = false;
  for (const auto& h : fig["run_rule_hits"])
    flagged = flagged || (h["lot"] == "L6" && h["rule"] == 1);
  EXPECT_TRUE(flagged) << fig.dump();
  ASSERT_FALSE(t["failures"].empty());
  EXPECT_EQ(t["failures"][0]["unit"], "u7");
  EXPECT_EQ(t["failures"][0]["failed"], 2);
  EXPECT_EQ(t["failures"][0]["most_common_figure"], "rms_a");
  EXPECT_EQ(t["failing_figures"]["rms_a"], 3);
  // The text and CSV forms.
  const RunResult text = run({"trend", "--history", db.string()});
  EXPECT_EQ(text.status, 0) << text.err;
  EXPECT_NE(text.out.find("drift: lot L6, rule 1"), std::string::npos) << text.out;
  const fs::path csv = dir_ / "trend.csv";
  EXPECT_EQ(run({"trend", "--history", db.string(), "--csv", csv.string()}).status, 0);
  EXPECT_EQ(lopside::test::slurp(csv).rfind("lot,product,station,first_judged_utc,figure,", 0), 0u);
  // No store, or a product it does not hold: bad input.
  EXPECT_EQ(run({"trend", "--history", (dir_ / "none.sqlite").string()}).status, 2);
  EXPECT_EQ(run({"trend", "--history", db.string(), "--product", "other"}).status, 2);
}

}  // namespace
