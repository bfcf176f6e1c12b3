// `lopside swap` run as a user runs it, on pairs of captures written by lopside-synth whose
// truth follows from the generator's formulas, and on bad input.
//
// Truth: a sine current whose positive half of peak A takes the share s of the period T and
// whose negative half has peak r·A over (1 − s)·T. A half-sine's mean over its own duration is
// 2/π of its peak (∫₀^π sin = 2), so over the cycle
//   DC = (2A/π)·(s − (1 − s)·r).
// Probe on the electrode's lead: the supply's part reverses with the leads (the swapped capture
// has the share 1 − s) and the electrodes' part stays (same r), so
//   D = (N − S)/2 = (A/π)·(s − (1 − s)r − (1 − s) + s·r) = (A/π)(2s − 1)(1 + r),
//   E = (N + S)/2 = (A/π)·(s − (1 − s)r + (1 − s) − s·r) = (A/π)(1 − r).
#include <cmath>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

constexpr double kPeakA = 0.025;    // 25 mA peak: a cold-cathode supply (DOMAIN.md, 18–30 mA)
constexpr double kNoiseA = 0.0001;  // 0.1 mA rms recorder noise

double driver_truth(double s, double r) {
  return kPeakA / M_PI * (2 * s - 1) * (1 + r);
}
double electrode_truth(double r) {
  return kPeakA / M_PI * (1 - r);
}

class Swap : public Cli {
 protected:
  // A 32 kHz capture, 1 MS/s for 5 ms (160 cycles), of 25 mA peak with 0.1 mA noise.
  fs::path capture(const std::string& name, std::vector<std::string> extra, int seed,
                   double frequency_hz = 32000, double peak_a = kPeakA) {
    const fs::path p = dir_ / name;
    std::vector<std::string> args{"-o",          p.string(),
                                  "--frequency", std::to_string(frequency_hz),
                                  "--rate",      "1e6",
                                  "--duration",  "0.005",
                                  "--peak",      std::to_string(peak_a),
                                  "--noise-rms", std::to_string(kNoiseA),
                                  "--seed",      std::to_string(seed)};
    args.insert(args.end(), extra.begin(), extra.end());
    const RunResult g = run(args, LOPSIDE_SYNTH);
    EXPECT_EQ(g.status, 0) << g.err;
    return p;
  }

  json swap_json(const fs::path& normal, const fs::path& swapped,
                 std::vector<std::string> extra = {}) {
    std::vector<std::string> args{"swap", normal.string(), swapped.string(), "--json", "-"};
    args.insert(args.end(), extra.begin(), extra.end());
    return run_json(args);
  }

  // Each part within 3 % of |D| + |E| (the brief's acceptance; the noise's u95 is ~4 µA and
  // the cycle boundaries cost ~0.03 % of peak, DOMAIN.md, both far inside it).
  static void expect_parts(const json& j, double d, double e) {
    const double tol = 0.03 * (std::fabs(d) + std::fabs(e));
    EXPECT_NEAR(j["driver_bias_a"]["value"].get<double>(), d, tol);
    EXPECT_NEAR(j["electrode_bias_a"]["value"].get<double>(), e, tol);
  }

  static bool has_warning(const json& j, const std::string& part) {
    for (const auto& w : j["warnings"]) {
      if (w.get<std::string>().find(part) != std::string::npos) return true;
    }
    return false;
  }
};

TEST_F(Swap, SupplyPartAloneIsDriverImbalance) {
  // Half-periods 52 : 48 that follow the leads, symmetric lobes: D = (A/π)(0.04)(2), E = 0.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 1);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 2);
  const json j = swap_json(n, s);
  expect_parts(j, driver_truth(0.52, 1.0), 0.0);
  EXPECT_EQ(j["verdict"], "driver_imbalance");
  EXPECT_GT(j["confidence"].get<double>(), 0.5);
  // Each capture alone: DC = (2A/π)(2s − 1), ± the same 3 % of the whole.
  EXPECT_NEAR(j["normal"]["dc_offset_a"]["value"].get<double>(), 2 * kPeakA / M_PI * 0.04,
              0.03 * driver_truth(0.52, 1.0));
  EXPECT_NEAR(j["swapped"]["dc_offset_a"]["value"].get<double>(), -2 * kPeakA / M_PI * 0.04,
              0.03 * driver_truth(0.52, 1.0));
  // Charge asymmetry of r = 1 halves: (s − (1 − s))/1 = 2s − 1 = 0.04 for the supply's part.
  EXPECT_NEAR(j["driver_asymmetry"]["value"].get<double>(), 0.04, 0.03 * 0.04);
  EXPECT_FALSE(has_warning(j, "same unit"));
}

TEST_F(Swap, ElectrodePartAloneIsSelfRectification) {
  // Negative lobe at 0.9 of the positive in both captures, equal halves: D = 0, E = (A/π)·0.1.
  const fs::path n = capture("n.csv", {"--negative-ratio", "0.9"}, 3);
  const fs::path s = capture("s.csv", {"--negative-ratio", "0.9"}, 4);
  const json j = swap_json(n, s);
  expect_parts(j, 0.0, electrode_truth(0.9));
  EXPECT_EQ(j["verdict"], "self_rectification");
  // Lobes 1 : 0.9 give (1 − 0.9)/(1 + 0.9) as the electrodes' asymmetry.
  EXPECT_NEAR(j["electrode_asymmetry"]["value"].get<double>(), 0.1 / 1.9, 0.03 * 0.1 / 1.9);
}

TEST_F(Swap, BothPartsAreMixed) {
  const double share = 0.52, ratio = 0.9;
  const fs::path n = capture("n.csv", {"--positive-share", "0.52", "--negative-ratio", "0.9"}, 5);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48", "--negative-ratio", "0.9"}, 6);
  const json j = swap_json(n, s);
  expect_parts(j, driver_truth(share, ratio), electrode_truth(ratio));
  EXPECT_EQ(j["verdict"], "mixed");
}

TEST_F(Swap, ProbeOnSupplyTerminal) {
  // The probe stays on one supply terminal: the electrodes' part reverses, so the swapped
  // capture sees the lobes mirrored (positive peak r·A, negative A, i.e. ratio 1/r):
  // DC_S = (2/π)(rA/2 − A/2) = −(A/π)(1 − r), and E = (N − S)/2 = (A/π)(1 − r), D = 0.
  const double ratio = 0.9;
  const fs::path n = capture("n.csv", {"--negative-ratio", "0.9"}, 7);
  const fs::path s =
      capture("s.csv", {"--negative-ratio", std::to_string(1 / ratio)}, 8, 32000, ratio * kPeakA);
  const json j = swap_json(n, s, {"--probe-on", "supply"});
  expect_parts(j, 0.0, electrode_truth(ratio));
  EXPECT_EQ(j["verdict"], "self_rectification");
  EXPECT_EQ(j["probe_on"], "supply");
  // Read as if the probe had stayed on the electrode, the same pair is a supply part.
  const json wrong = swap_json(n, s);
  expect_parts(wrong, electrode_truth(ratio), 0.0);
  EXPECT_EQ(wrong["verdict"], "driver_imbalance");
}

TEST_F(Swap, ProbeOffsetWidensOnlyTheSum) {
  // ±0.2 mA rectangular is 115 µA standard (GUM 4.3.7): the half sum (E, probe on the
  // electrode) gains 2·115 µA in quadrature, the half difference (D) nothing from it.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 9);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 10);
  const json plain = swap_json(n, s);
  const json probed = swap_json(n, s, {"--probe-offset", "0.0002"});
  EXPECT_DOUBLE_EQ(probed["driver_bias_a"]["u95"].get<double>(),
                   plain["driver_bias_a"]["u95"].get<double>());
  const double e_plain = plain["electrode_bias_a"]["u95"].get<double>() / 2;
  EXPECT_NEAR(probed["electrode_bias_a"]["u95"].get<double>(),
              2 * std::hypot(e_plain, 0.0002 / std::sqrt(3.0)), 1e-12);
}

TEST_F(Swap, ClippedPairIsInconclusive) {
  // The recorder's range stops the negative half at −20 mA of a 25 mA peak: a faked asymmetry.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52", "--clip-low", "-0.02"}, 11);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 12);
  const json j = swap_json(n, s);
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["confidence"].get<double>(), 0.0);
  EXPECT_GT(j["normal"]["clipped_cycles"]["negative"].get<long>(), 0);
  bool clipped_evidence = false;
  for (const auto& e : j["evidence"]) {
    if (e["code"] == "clipped_normal") clipped_evidence = e["value"].get<double>() > 0;
  }
  EXPECT_TRUE(clipped_evidence);
}

TEST_F(Swap, DifferentFrequenciesAreInconclusive) {
  // 32 kHz against 33 kHz: 3.1 % apart, more than the 2 % (README, lead_swap.hpp) the two
  // captures of one unit on one load may differ by; the measured fundamentals' u95 are far
  // smaller (the 1e-4 below), so the 2 % is the bar. A clear supply part, but no cause.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 13);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 14, 33000);
  const json j = swap_json(n, s);
  EXPECT_TRUE(has_warning(j, "may not be the same unit on the same load")) << j["warnings"].dump();
  EXPECT_NEAR(j["normal"]["fundamental_hz"].get<double>(), 32000, 32000 * 1e-4);
  EXPECT_NEAR(j["swapped"]["fundamental_hz"].get<double>(), 33000, 33000 * 1e-4);
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["confidence"].get<double>(), 0.0);
}

// The evidence entry with `code`, or null.
json evidence_entry(const json& j, const std::string& code) {
  for (const auto& e : j["evidence"]) {
    if (e["code"] == code) return e;
  }
  return json();
}

TEST_F(Swap, FarApartFrequenciesAreInconclusiveWithTheirEvidence) {
  // Issue 9, item 8: a 32 kHz capture against a 20 kHz one is not one unit on one load.
  // |Δf| / mean = 12/26 = 0.4615 (analytic; the measured fundamentals are within 1e-4 of the
  // set ones, see above, which moves the ratio by < 1e-4); the bar is the stated 2 %.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 21, 32000);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 22, 20000);
  const json j = swap_json(n, s);
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["confidence"].get<double>(), 0.0);
  EXPECT_EQ(j["deciding"], json::array({"fundamental_mismatch"}));
  const json e = evidence_entry(j, "fundamental_mismatch");
  ASSERT_TRUE(e.is_object()) << j["evidence"].dump();
  EXPECT_NEAR(e["value"].get<double>(), 12.0 / 26.0, 1e-3);
  EXPECT_DOUBLE_EQ(e["threshold"].get<double>(), 0.02);
  EXPECT_NE(e["text"].get<std::string>().find("no cause"), std::string::npos);
  // The same peak at both frequencies: the AC RMS agrees (a sine's RMS does not depend on f).
  EXPECT_LT(evidence_entry(j, "ac_rms_mismatch")["value"].get<double>(), 0.01);
}

TEST_F(Swap, AcRmsOneToTwoIsInconclusive) {
  // 25 mA against 12.5 mA peak at 32 kHz: the AC RMS are 1 : 2, |ΔI| / mean = 1/1.5 = 0.667
  // (analytic; the 0.1 mA noise adds (0.1/8.8)²/2 ≈ 6e-5 relative to the smaller RMS), far over
  // the 20 % bar.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 23, 32000, kPeakA);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 24, 32000, kPeakA / 2);
  const json j = swap_json(n, s);
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["confidence"].get<double>(), 0.0);
  EXPECT_EQ(j["deciding"], json::array({"ac_rms_mismatch"}));
  const json e = evidence_entry(j, "ac_rms_mismatch");
  ASSERT_TRUE(e.is_object()) << j["evidence"].dump();
  EXPECT_NEAR(e["value"].get<double>(), 2.0 / 3.0, 1e-3);
  EXPECT_DOUBLE_EQ(e["threshold"].get<double>(), 0.20);
  EXPECT_NEAR(j["normal"]["ac_rms_a"].get<double>(), 2 * j["swapped"]["ac_rms_a"].get<double>(),
              0.01 * j["normal"]["ac_rms_a"].get<double>());
}

TEST_F(Swap, SameFileTwiceExitsTwo) {
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 25);
  const RunResult r = run({"swap", n.string(), n.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find(n.string() + ": is the same file as NORMAL (" + n.string() + ")"),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.err.find("two different recordings"), std::string::npos) << r.err;
  // A symlink to it is the same file too.
  const fs::path link = dir_ / "link.csv";
  fs::create_symlink(n, link);
  const RunResult l = run({"swap", n.string(), link.string()});
  EXPECT_EQ(l.status, 2);
  EXPECT_NE(l.err.find("is the same file as NORMAL"), std::string::npos) << l.err;
}

TEST_F(Swap, CopyUnderAnotherNameExitsTwo) {
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 26);
  const fs::path copy = dir_ / "copy.csv";
  fs::copy_file(n, copy);
  const RunResult r = run({"swap", n.string(), copy.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find(copy.string() + ": has the same content as NORMAL (" + n.string() + ")"),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.err.find("two different recordings"), std::string::npos) << r.err;
  // One byte changed at the end: a different recording as far as the check goes, read on.
  std::string bytes = lopside::test::slurp(n);
  ASSERT_FALSE(bytes.empty());
  const fs::path edited = file("edited.csv", bytes.substr(0, bytes.size() - 1) + " ");
  const RunResult e = run({"swap", n.string(), edited.string()});
  EXPECT_EQ(e.err.find("same content"), std::string::npos) << e.err;
}

TEST_F(Swap, StandardInputTwiceExitsTwo) {
  const RunResult r = run({"swap", "-", "-"});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("standard input can hold only one of the two captures"), std::string::npos)
      << r.err;
}

// --- the repeat of the normal capture (N, S, N') ------------------------------------------

TEST_F(Swap, NormalRepeatedFromTheSameUnitBringsTheBiasBack) {
  // One unit (supply share 0.52, lobes 1 : 0.9) recorded N, S, N' with different noise seeds:
  // N' has the same truth as N, so N' − N is noise alone, inside its u95, and D and E drawn
  // from (N + N')/2 keep the truth (A/π)(2s − 1)(1 + r) and (A/π)(1 − r) within 3 % of the
  // whole, as the pair does.
  const double share = 0.52, ratio = 0.9;
  const fs::path n = capture("n.csv", {"--positive-share", "0.52", "--negative-ratio", "0.9"}, 31);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48", "--negative-ratio", "0.9"}, 32);
  const fs::path again = capture("again.csv",
                                 {"--positive-share", "0.52", "--negative-ratio", "0.9",
                                  "--preamble", "--meta", "Serial=U-17"},
                                 33);
  std::vector<std::string> args{"swap", n.string(), s.string(), again.string(), "--json", "-"};
  const json j = run_json(args);
  ASSERT_TRUE(j["repeat"].is_object()) << j.dump();
  const json& rep = j["repeat"];
  EXPECT_EQ(rep["path"], again.string());
  // N' − N is noise alone here, so it stays inside its u95 with 95 % probability (GUM 6.2.2)
  // and lands beyond it one time in twenty; the rule then reads a drift, never a change: a
  // change needs the materiality bar too, 0.2 % of 16.8 mA = 34 µA, some 17 standard
  // deviations of this noise (u95 ≈ 4 µA, k = 2). Either way the bias came back and the split
  // uses the mean. (These seeds give 4.4 µA against a u95 of 4.0 µA: a drift.)
  const double diff = rep["difference_dc_a"]["value"].get<double>();
  const double diff_u95 = rep["difference_dc_a"]["u95"].get<double>();
  EXPECT_EQ(rep["outcome"], std::fabs(diff) <= diff_u95 ? "bias_returned" : "bias_drifted");
  EXPECT_LT(std::fabs(diff), rep["material_dc_a"].get<double>());
  EXPECT_TRUE(rep["mean_used"].get<bool>());
  // N' − N is the difference of the two captures' own figures (each measured alone).
  EXPECT_NEAR(
      diff,
      rep["dc_offset_a"]["value"].get<double>() - j["normal"]["dc_offset_a"]["value"].get<double>(),
      1e-12);
  // The materiality bar: 0.2 % (kNegligibleDcShare, README `dc_negligible`) of the mean AC RMS
  // of N and N'.
  EXPECT_NEAR(rep["material_dc_a"].get<double>(),
              0.002 * 0.5 * (j["normal"]["ac_rms_a"].get<double>() + rep["ac_rms_a"].get<double>()),
              1e-15);
  // The split uses the mean of the two normals: D = (N̄ − S)/2, E = (N̄ + S)/2 on the reported
  // figures, and both within 3 % of |D| + |E| of the generator's truth.
  const double mean = 0.5 * (j["normal"]["dc_offset_a"]["value"].get<double>() +
                             rep["dc_offset_a"]["value"].get<double>());
  EXPECT_NEAR(rep["normal_used_dc_a"]["value"].get<double>(), mean, 1e-12);
  const double swapped = j["swapped"]["dc_offset_a"]["value"].get<double>();
  EXPECT_NEAR(j["driver_bias_a"]["value"].get<double>(), 0.5 * (mean - swapped), 1e-12);
  EXPECT_NEAR(j["electrode_bias_a"]["value"].get<double>(), 0.5 * (mean + swapped), 1e-12);
  expect_parts(j, driver_truth(share, ratio), electrode_truth(ratio));
  EXPECT_EQ(j["verdict"], "mixed");
  EXPECT_EQ(j["formulas"]["normal"], "(N + N')/2");
  // The third capture's metadata travels with it, as the others' do.
  EXPECT_EQ(rep["metadata"]["Serial"], "U-17") << rep["metadata"].dump();
  for (const char* key : {"charge_asymmetry", "difference_asymmetry", "fundamental_hz", "ac_rms_a",
                          "cycle_count", "clipped_cycles"}) {
    EXPECT_TRUE(rep.contains(key)) << key;
  }
  EXPECT_TRUE(rep["difference_dc_a"].contains("u95"));

  // The text names the repeat, its outcome, and keeps the caution.
  const RunResult t = run({"swap", n.string(), s.string(), again.string()});
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("normal again (N')"), std::string::npos) << t.out;
  EXPECT_NE(t.out.find(rep["outcome"].get<std::string>()), std::string::npos) << t.out;
  EXPECT_NE(t.out.find("(N + N')/2"), std::string::npos) << t.out;
  EXPECT_NE(t.out.find("High voltage can kill"), std::string::npos);
}

TEST_F(Swap, CathodeChangeBetweenCapturesIsCaughtByTheRepeat) {
  // A self-rectifying discharge (lobes 1 : 0.9, no supply part) whose preferred cathode flips
  // after N: in S and in N' the electrodes' bias is reversed (positive peak r·A, negative A).
  // The pair alone reads it as a supply part, D = (A/π)(1 − r) and E = 0, the trap DOMAIN.md
  // names. N' shows it: N' − N = (2/π)(rA/2 − A/2) − (2A/π)(1/2 − r/2) = −(2A/π)(1 − r)
  // = −1.59 mA, far beyond the 0.2 % materiality bar (34 µA), so the verdict is inconclusive.
  const double ratio = 0.9;
  const std::string mirrored = std::to_string(1 / ratio);
  const fs::path n = capture("n.csv", {"--negative-ratio", "0.9"}, 41);
  const fs::path s = capture("s.csv", {"--negative-ratio", mirrored}, 42, 32000, ratio * kPeakA);
  const fs::path again =
      capture("again.csv", {"--negative-ratio", mirrored}, 43, 32000, ratio * kPeakA);
  const json pair = swap_json(n, s);
  expect_parts(pair, electrode_truth(ratio), 0.0);
  EXPECT_EQ(pair["verdict"], "driver_imbalance");
  EXPECT_TRUE(pair["repeat"].is_null());

  const json j = run_json({"swap", n.string(), s.string(), again.string(), "--json", "-"});
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["confidence"].get<double>(), 0.0);
  EXPECT_EQ(j["deciding"], json::array({"repeat_changed"}));
  EXPECT_EQ(j["repeat"]["outcome"], "bias_changed");
  const double truth = -2 * kPeakA / M_PI * (1 - ratio);
  // 3 % of the change, as the parts' acceptance above (noise u95 ~4 µA, boundaries ~0.03 % of
  // peak, DOMAIN.md).
  EXPECT_NEAR(j["repeat"]["difference_dc_a"]["value"].get<double>(), truth,
              0.03 * std::fabs(truth));
  const json e = evidence_entry(j, "repeat_changed");
  ASSERT_TRUE(e.is_object()) << j["evidence"].dump();
  EXPECT_NEAR(e["value"].get<double>(), truth, 0.03 * std::fabs(truth));
  EXPECT_NE(e["text"].get<std::string>().find("cannot be trusted"), std::string::npos);
  EXPECT_TRUE(has_warning(j, "the bias of the repeat of the normal capture differs"))
      << j["warnings"].dump();
  ASSERT_FALSE(j["next_steps"].empty());
  EXPECT_NE(j["next_steps"][0].get<std::string>().find("settles"), std::string::npos);
  EXPECT_FALSE(j["repeat"]["mean_used"].get<bool>());

  const RunResult t = run({"swap", n.string(), s.string(), again.string()});
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("normal again (N')   " + again.string()), std::string::npos) << t.out;
  EXPECT_NE(t.out.find("bias_changed"), std::string::npos) << t.out;
  EXPECT_NE(t.out.find("High voltage can kill"), std::string::npos);
}

TEST_F(Swap, RepeatAtAnotherFrequencyIsInconclusive) {
  // N' at 33 kHz against N at 32 kHz: 3.1 % apart, over the pair's 2 % bar.
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 44);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 45);
  const fs::path again = capture("again.csv", {"--positive-share", "0.52"}, 46, 33000);
  const json j = run_json({"swap", n.string(), s.string(), again.string(), "--json", "-"});
  EXPECT_EQ(j["verdict"], "inconclusive");
  EXPECT_EQ(j["deciding"], json::array({"repeat_fundamental_mismatch"}));
  EXPECT_EQ(j["repeat"]["outcome"], "inconclusive");
  EXPECT_NEAR(evidence_entry(j, "repeat_fundamental_mismatch")["value"].get<double>(), 1.0 / 32.5,
              1e-3);
}

TEST_F(Swap, RepeatThatIsNoNewRecordingExitsTwo) {
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 47);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 48);
  // NORMAL given again: it would "come back" by construction.
  const RunResult same = run({"swap", n.string(), s.string(), n.string()});
  EXPECT_EQ(same.status, 2);
  EXPECT_NE(same.err.find(n.string() + ": is the same file as NORMAL (" + n.string() + ")"),
            std::string::npos)
      << same.err;
  EXPECT_NE(same.err.find("must be a new recording"), std::string::npos) << same.err;
  // A copy of SWAPPED under another name.
  const fs::path copy = dir_ / "copy.csv";
  fs::copy_file(s, copy);
  const RunResult c = run({"swap", n.string(), s.string(), copy.string()});
  EXPECT_EQ(c.status, 2);
  EXPECT_NE(c.err.find(copy.string() + ": has the same content as SWAPPED (" + s.string() + ")"),
            std::string::npos)
      << c.err;
  // Standard input as two of the three.
  const RunResult in = run({"swap", n.string(), "-", "-"});
  EXPECT_EQ(in.status, 2);
  EXPECT_NE(in.err.find("given as both SWAPPED and NORMAL_AGAIN"), std::string::npos) << in.err;
  // A fourth capture is not part of the test.
  const fs::path extra = capture("extra.csv", {"--positive-share", "0.52"}, 49);
  const fs::path again = capture("again.csv", {"--positive-share", "0.52"}, 50);
  EXPECT_EQ(run({"swap", n.string(), s.string(), again.string(), extra.string()}).status, 2);
}

TEST_F(Swap, JsonCarriesTheSchemaAndEveryKey) {
  const fs::path n = capture("n.csv", {"--negative-ratio", "0.9"}, 15);
  const fs::path s = capture("s.csv", {"--negative-ratio", "0.9"}, 16);
  const json j = swap_json(n, s);
  EXPECT_EQ(j["schema"], "lopside.swap/1");
  for (const char* key :
       {"driver_bias_a", "electrode_bias_a", "driver_asymmetry", "electrode_asymmetry"}) {
    EXPECT_TRUE(j[key].contains("value")) << key;
    EXPECT_TRUE(j[key].contains("u95")) << key;
  }
  for (const char* key :
       {"verdict", "confidence", "evidence", "warnings", "next_steps", "probe_on"}) {
    EXPECT_TRUE(j.contains(key)) << key;
  }
  for (const char* side : {"normal", "swapped"}) {
    for (const char* key :
         {"path", "dc_offset_a", "charge_asymmetry", "fundamental_hz", "ac_rms_a"}) {
      EXPECT_TRUE(j[side].contains(key)) << side << "." << key;
    }
  }
  EXPECT_EQ(j["normal"]["path"], n.string());
  ASSERT_FALSE(j["evidence"].empty());
  for (const char* key : {"code", "value", "threshold", "text"})
    EXPECT_TRUE(j["evidence"][0].contains(key)) << key;
  EXPECT_EQ(j["probe_on"], "electrode");
}

TEST_F(Swap, TextShowsThePartsTheSignConventionAndTheCaution) {
  const fs::path n = capture("n.csv", {"--positive-share", "0.52"}, 17);
  const fs::path s = capture("s.csv", {"--positive-share", "0.48"}, 18);
  const RunResult r = run({"swap", n.string(), s.string()});
  ASSERT_EQ(r.status, 0) << r.err;
  // D = (A/π)·0.04·2 = +637 µA.
  EXPECT_NE(r.out.find("supply part D       +6"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find(" \xC2\xB5"
                       "A \xC2\xB1 "),
            std::string::npos)
      << r.out;
  EXPECT_NE(r.out.find("driver_imbalance"), std::string::npos);
  EXPECT_NE(r.out.find("Sign convention"), std::string::npos);
  EXPECT_NE(r.out.find("High voltage can kill: exchange leads only with the supply isolated and "
                       "discharged, with probes rated for the voltage; local electrical codes and "
                       "licensed practice prevail"),
            std::string::npos);
}

TEST_F(Swap, MissingFileExitsTwoNamingIt) {
  const fs::path n = capture("n.csv", {}, 19);
  const fs::path missing = dir_ / "no-such-capture.csv";
  const RunResult r = run({"swap", n.string(), missing.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find(missing.string()), std::string::npos) << r.err;
}

TEST_F(Swap, BadUsageExitsTwo) {
  const fs::path n = capture("n.csv", {}, 20);
  EXPECT_EQ(run({"swap", n.string()}).status, 2);  // SWAPPED missing
  EXPECT_EQ(run({"swap", n.string(), n.string(), "--probe-on", "scope"}).status, 2);
  EXPECT_EQ(run({"swap", n.string(), n.string(), "--max-order", "10"}).status, 2);
}

}  // namespace
