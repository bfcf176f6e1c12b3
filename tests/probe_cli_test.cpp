// Probes that block DC (issue 13), run as a user runs them on captures from lopside-synth's
// probe models, whose true DC is known: the droop correction, the Rogowski integration and the
// dead-interval recovery must find it within their u95; detection must warn on each kind of
// DC-blocking record and stay quiet on a shunt's; records that make a correction impossible
// are refused.
#include <cmath>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

class Probe : public Cli {
 protected:
  fs::path synth(const std::string& name, std::vector<std::string> args) {
    const fs::path p = dir_ / name;
    args.insert(args.begin(), {"-o", p.string()});
    const RunResult g = run(args, LOPSIDE_SYNTH);
    EXPECT_EQ(g.status, 0) << g.err;
    return p;
  }
  json measure(const fs::path& p, std::vector<std::string> extra = {}) {
    std::vector<std::string> args{"measure", p.string(), "--json", "-"};
    args.insert(args.end(), extra.begin(), extra.end());
    return run_json(args);
  }
  static bool has_evidence(const json& j, const std::string& code) {
    for (const auto& e : j["diagnosis"]["evidence"])
      if (e["code"] == code) return true;
    return false;
  }
};

// A 50 Hz glow whose negative lobe is 0.9 of the positive: lopside-synth's lobed shape
// (breakdown at 20 % of each half-cycle, lobe 60 % long). Its true DC, printed by the generator
// with --verbose, is +572.958 µA (the mean of the noise-free current over whole cycles).
const std::vector<std::string> kGlow{"--shape",          "lobed",  "--peak",         "0.03",
                                     "--negative-ratio", "0.9",    "--frequency",    "50",
                                     "--rate",           "10000",  "--duration",     "10",
                                     "--noise-rms",      "0.0002", "--voltage-peak", "800"};
constexpr double kGlowDcA = 572.958e-6;

std::vector<std::string> with(std::vector<std::string> a, const std::vector<std::string>& b) {
  a.insert(a.end(), b.begin(), b.end());
  return a;
}

TEST_F(Probe, DroopCorrectionRestoresAKnownDcWithinItsU95) {
  // A CT of τ = 10 ms on a 1 kHz sine of 20 mA with +2 mA DC, after a 5 ms quiet lead-in: its
  // output's mean is ~0; x = y + (1/τ)∫y dt must give back 2 mA.
  const fs::path p =
      synth("ct.csv", {"--frequency", "1000", "--rate", "200000", "--duration", "0.2", "--lead-in",
                       "0.005", "--peak", "0.02", "--dc", "0.002", "--probe", "ct", "--probe-tau",
                       "0.01", "--noise-rms", "0.0001"});
  const json raw = measure(p);
  EXPECT_LT(std::fabs(raw["dc_offset_a"]["value"].get<double>()), 1e-4) << "the CT hides the DC";
  const json j = measure(p, {"--probe", "ct", "--probe-tau", "0.01", "--probe-tau-pct", "1"});
  const double dc = j["dc_offset_a"]["value"].get<double>();
  const double u95 = j["dc_offset_a"]["u95"].get<double>();
  EXPECT_NEAR(dc, 0.002, u95);
  // τ's ±1 % (rectangular, 0.577 % standard) alone gives 2·0.577 % of 2 mA = 23 µA.
  EXPECT_GE(u95, 2 * 0.01 / std::sqrt(3.0) * 0.002 * 0.99);
  EXPECT_EQ(j["probe"]["kind"], "ct");
  EXPECT_EQ(j["probe"]["dc_method"], "droop");
  EXPECT_NEAR(j["probe"]["lead_in_s"].get<double>(), 0.005, 1e-4);
}

TEST_F(Probe, DroopCorrectionRefusesARecordWithoutAQuietLeadIn) {
  const fs::path p =
      synth("ct0.csv", {"--frequency", "1000", "--rate", "200000", "--duration", "0.1", "--peak",
                        "0.02", "--dc", "0.002", "--probe", "ct", "--probe-tau", "0.01"});
  const RunResult r = run({"measure", p.string(), "--probe", "ct", "--probe-tau", "0.01"});
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find(p.string()), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("quiet lead-in"), std::string::npos) << r.err;
}

TEST_F(Probe, RogowskiIntegrationRestoresAKnownDc) {
  // M = 1 µV·s/A; the current ignites at its crest (phase 90°), so the step is recorded as an
  // impulse and no flank's slope is cut in two between samples (that would leave an offset of
  // Δt·i'/2, README "Probes that block DC").
  const fs::path p =
      synth("rogowski.csv",
            {"--frequency",    "1000",  "--rate",      "200000",   "--duration",   "0.1",
             "--lead-in",      "0.003", "--peak",      "0.02",     "--dc",         "0.002",
             "--phase",        "90",    "--probe",     "rogowski", "--rogowski-m", "1e-6",
             "--current-unit", "V",     "--noise-rms", "2e-8"});
  const json j = measure(p, {"--probe", "rogowski", "--rogowski-m", "1e-6"});
  const double u95 = j["dc_offset_a"]["u95"].get<double>();
  EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), 0.002, u95);
  EXPECT_LT(u95, 2e-4);  // noise of 2e-8 V: the integration's random walk stays small
  // RMS of 20 mA·sin + 2 mA: √(0.02²/2 + 0.002²) = 14.283 mA (analytic), within 0.5 %.
  EXPECT_NEAR(j["rms_a"]["value"].get<double>(), std::sqrt(0.02 * 0.02 / 2 + 0.002 * 0.002),
              0.005 * 0.014283);
  EXPECT_EQ(j["probe"]["dc_method"], "rogowski");
  const RunResult bad = run({"measure", p.string(), "--probe", "rogowski"});
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("--rogowski-m"), std::string::npos) << bad.err;
}

TEST_F(Probe, DeadIntervalsRecoverTheDcOfAnAcCoupledGlow) {
  // AC coupling of τ = 0.5 s over 10 s (20 τ): the record's mean is the coupling's, ~0; the
  // glow rests between lobes at −DC.
  const fs::path p =
      synth("glow_ac.csv", with(kGlow, {"--probe", "ac-coupled", "--probe-tau", "0.5"}));
  const json j = measure(p, {"--probe", "ac-coupled"});
  const double u95 = j["dc_offset_a"]["u95"].get<double>();
  EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), kGlowDcA, u95);
  EXPECT_LT(u95, 0.1 * kGlowDcA);
  EXPECT_EQ(j["probe"]["dc_method"], "dead_intervals");
  EXPECT_TRUE(j["probe"]["dead_intervals"]["found"].get<bool>());
  EXPECT_NEAR(j["probe"]["dead_intervals"]["rest_level_a"]["value"].get<double>(), -kGlowDcA,
              0.1 * kGlowDcA);
  EXPECT_EQ(j["diagnosis"]["verdict"], "self_rectification");
}

TEST_F(Probe, AcCoupledSineHasNoDeadIntervalAndIsNeverSymmetric) {
  const fs::path p =
      synth("sine_ac.csv", {"--frequency", "50", "--rate", "10000", "--duration", "10", "--peak",
                            "0.02", "--dc", "0.002", "--negative-ratio", "0.8", "--probe",
                            "ac-coupled", "--probe-tau", "0.5", "--noise-rms", "0.0001"});
  const json j = measure(p, {"--probe", "ac-coupled"});
  EXPECT_EQ(j["probe"]["dc_method"], "not_recovered");
  EXPECT_FALSE(j["probe"]["dead_intervals"]["found"].get<bool>());
  EXPECT_NE(j["diagnosis"]["verdict"], "symmetric");
  EXPECT_TRUE(has_evidence(j, "probe_blocks_dc"));
}

TEST_F(Probe, DetectionWarnsOnEachKindOfDcBlockingRecord) {
  // Read as if from a shunt (the default): an AC-coupled glow (rests at −DC between lobes), a
  // CT's glow (the same filter under its other name), a CT's sine with a weaker negative half
  // (even harmonics) — each gets probe_may_block_dc, never "symmetric".
  const std::vector<fs::path> records{
      synth("g1.csv", with(kGlow, {"--probe", "ac-coupled", "--probe-tau", "0.5"})),
      synth("g2.csv", with(kGlow, {"--probe", "ct", "--probe-tau", "1", "--seed", "7"})),
      synth("s1.csv", {"--frequency", "50", "--rate", "10000", "--duration", "10", "--peak", "0.02",
                       "--negative-ratio", "0.8", "--probe", "ct", "--probe-tau", "0.5",
                       "--noise-rms", "0.0001"})};
  for (const fs::path& p : records) {
    const json j = measure(p);
    EXPECT_TRUE(has_evidence(j, "probe_may_block_dc")) << p << "\n" << j["diagnosis"].dump(1);
    EXPECT_NE(j["diagnosis"]["verdict"], "symmetric") << p;
  }
  // The rest level tells the sign: the glow's DC is positive.
  const json g = measure(records[0]);
  for (const auto& e : g["diagnosis"]["evidence"]) {
    if (e["code"] != "probe_may_block_dc") continue;
    EXPECT_NE(e["text"].get<std::string>().find("hidden DC is positive"), std::string::npos)
        << e["text"];
  }
}

TEST_F(Probe, NoFalseWarningOnShuntRecords) {
  // The same glow through a shunt, and a clean symmetric sine: no probe warning.
  const json glow = measure(synth("glow.csv", kGlow));
  EXPECT_FALSE(has_evidence(glow, "probe_may_block_dc")) << glow["diagnosis"].dump(1);
  EXPECT_NEAR(glow["dc_offset_a"]["value"].get<double>(), kGlowDcA,
              glow["dc_offset_a"]["u95"].get<double>() + 3e-4 * 0.03);
  const json sine = measure(synth("sine.csv", {"--frequency", "50", "--rate", "10000", "--duration",
                                               "2", "--peak", "0.02", "--noise-rms", "0.0001"}));
  EXPECT_FALSE(has_evidence(sine, "probe_may_block_dc")) << sine["diagnosis"].dump(1);
  EXPECT_EQ(sine["probe"]["kind"], "shunt");
  EXPECT_EQ(sine["probe"]["dc_method"], "direct");
}

TEST_F(Probe, TauOnlyForProbesThatHaveOne) {
  const fs::path p = synth("s.csv", {"--frequency", "50", "--rate", "10000", "--duration", "1"});
  const RunResult r = run({"measure", p.string(), "--probe-tau", "0.1"});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("--probe ct"), std::string::npos) << r.err;
}

}  // namespace
