// Layout-independent traps that real recorders set for `measure` and `swap` (issue 9), each
// reproduced by a capture written here: a rectifier's turn-off spike in the dead time, a burst
// of ringing in a long record, one recording saved twice in two forms, and sampling locked to
// the fundamental.
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <random>
#include <string>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;

class MeasureTrust : public Cli {};

// A 60 Hz rectifier current as a thyristor bridge draws it, recorded at 50 kS/s for three
// cycles: ±1.6 A blocks of 120° with 60° of dead time at −40 mA, and at the end of every
// negative block a one-sample turn-off overshoot to +0.6 A, above the trigger level (a quarter
// of the half swing past the mean). The spike does not stay up, so it is no crossing: the
// fundamental is the 60 Hz of the blocks (a real export showed 65 Hz before the rule).
TEST_F(MeasureTrust, ATurnOffSpikeInTheDeadTimeIsNoCrossing) {
  std::string text = "time (s),current (A)\n";
  const double rate = 50e3, f = 60;
  const int n = static_cast<int>(3.4 * rate / f);
  std::mt19937 rng(4);
  std::normal_distribution<double> noise(0, 0.01);
  for (int k = 0; k < n; ++k) {
    const double phase = std::fmod(k * f / rate + 0.9, 1.0);  // cycles
    double i = -0.04;
    if (phase >= 1.0 / 12 && phase < 5.0 / 12) i = 1.6;
    if (phase >= 7.0 / 12 && phase < 11.0 / 12) i = -1.6;
    const double next = std::fmod((k + 1) * f / rate + 0.9, 1.0);
    if (phase < 11.0 / 12 && next >= 11.0 / 12) i = 0.6;  // the last sample of a block
    i += noise(rng);
    char row[64];
    std::snprintf(row, sizeof row, "%.8f,%.4f\n", k / rate, i);
    text += row;
  }
  const json j =
      run_json({"measure", file("bridge.csv", text).string(), "--max-order", "0", "--json", "-"});
  const double value = j["fundamental_hz"]["value"].get<double>();
  const double u95 = j["fundamental_hz"]["u95"].get<double>();
  // The blocks' edges are sample-exact: the period is 50 000/60 samples, so within a sample
  // over three cycles (1.2e-3 relative), and within the stated u95 plus that.
  EXPECT_NEAR(value, f, u95 + f * 1.2e-3) << j["fundamental_hz"].dump();
  EXPECT_GE(j["cycle_count"].get<int>(), 2);
}

// A switch node's edge rings at 1.2 MHz for 3 µs, then the record (24 µs at 100 MS/s) holds
// only noise: five or so regular "cycles" cover an eighth of the record, which has no periodic
// fundamental. Refused, never given 1.2 MHz.
TEST_F(MeasureTrust, ABurstOfRingingInALongRecordIsRefused) {
  std::string text = "time (s),current (A)\n";
  std::mt19937 rng(9);
  std::normal_distribution<double> noise(0, 0.002);
  for (int k = 0; k < 2400; ++k) {
    const double t = k * 1e-8;
    const double ring = t < 3e-6 ? std::exp(-t / 2e-6) * std::sin(2 * M_PI * 1.2e6 * t) : 0.0;
    char row[64];
    std::snprintf(row, sizeof row, "%.10f,%.6f\n", t, ring + noise(rng));
    text += row;
  }
  const RunResult r = run({"measure", file("ring.csv", text).string()});
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find("no periodic fundamental"), std::string::npos) << r.err;
}

// One recording saved twice, as CSV with 9 digits and as TSV with 6: the bytes differ, the
// samples do not. A swap of the two would give D = 0 and E = N exactly, a "self-rectification"
// drawn from no exchange at all: refused (exit 2) naming both.
TEST_F(MeasureTrust, OneRecordingSavedTwiceIsNoLeadSwap) {
  const std::string a = (dir_ / "n.csv").string(), b = (dir_ / "n.tsv").string();
  for (const auto& [path, digits] : {std::pair{a, "9"}, std::pair{b, "6"}}) {
    const RunResult g =
        run({"-o", path, "--digits", digits, "--frequency", "50", "--rate", "10000", "--duration",
             "1", "--peak", "0.02", "--dc", "0.0004", "--noise-rms", "0.0002", "--seed", "1"},
            LOPSIDE_SYNTH);
    ASSERT_EQ(g.status, 0) << g.err;
  }
  const RunResult r = run({"swap", a, b});
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find("same recording"), std::string::npos) << r.err;
  // Two recordings of the same unit (another noise seed) are not refused.
  const std::string c = (dir_ / "n2.csv").string();
  ASSERT_EQ(run({"-o", c, "--digits", "9", "--frequency", "50", "--rate", "10000", "--duration",
                 "1", "--peak", "0.02", "--dc", "0.0004", "--noise-rms", "0.0002", "--seed", "2"},
                LOPSIDE_SYNTH)
                .status,
            0);
  EXPECT_EQ(run({"swap", a, c}).status, 0);
}

// 50 Hz recorded at exactly 400 S/s: 8 samples per cycle, every cycle sampled at the same
// phases, so harmonics at multiples of the 8th order fold onto the DC unseen by any scatter.
// Said in a warning; at 401 S/s (not locked) it is not.
TEST_F(MeasureTrust, SamplingLockedToTheFundamentalIsSaid) {
  for (const char* rate : {"400", "401"}) {
    const std::string p = (dir_ / (std::string("m") + rate + ".csv")).string();
    ASSERT_EQ(run({"-o", p, "--frequency", "50", "--rate", rate, "--duration", "2", "--peak",
                   "0.02", "--noise-rms", "0.0002", "--seed", "3", "--digits", "9"},
                  LOPSIDE_SYNTH)
                  .status,
              0);
    const json j = run_json({"measure", p, "--json", "-"});
    bool said = false;
    for (const auto& w : j["warnings"])
      said |= w.get<std::string>().find("locked") != std::string::npos;
    EXPECT_EQ(said, std::string(rate) == "400") << rate << " " << j["warnings"].dump();
  }
}

}  // namespace

namespace {

// A 32-bit float WAV (the format a float recorder writes) holding one NaN at frame 1501 of a
// 1 kHz sine at 100 kS/s: `measure` leaves the cycles it reaches out and says so with the time;
// `inspect`, which summarises values, refuses it (exit 2) naming the frame and time.
TEST_F(MeasureTrust, ANanInAFloatWavIsFoundWithItsTime) {
  const int n = 2000, rate = 100000;
  std::string data;
  for (int k = 0; k < n; ++k) {
    const float v = k == 1500 ? std::nanf("")
                              : static_cast<float>(0.01 * std::sin(2 * M_PI * 1000.0 * k / rate));
    char b[4];
    std::memcpy(b, &v, 4);  // little-endian host (x86-64, as CI)
    data.append(b, 4);
  }
  const auto u32 = [](std::uint32_t x) {
    return std::string{static_cast<char>(x), static_cast<char>(x >> 8), static_cast<char>(x >> 16),
                       static_cast<char>(x >> 24)};
  };
  const auto u16 = [](std::uint16_t x) {
    return std::string{static_cast<char>(x), static_cast<char>(x >> 8)};
  };
  // RIFF/WAVE with a 16-byte fmt chunk, format 3 (IEEE float), mono, 32 bits.
  const std::string wav = "RIFF" + u32(static_cast<std::uint32_t>(36 + data.size())) + "WAVE" +
                          "fmt " + u32(16) + u16(3) + u16(1) + u32(rate) + u32(rate * 4) + u16(4) +
                          u16(32) + "data" + u32(static_cast<std::uint32_t>(data.size())) + data;
  const std::string p = file("nan.wav", wav).string();
  const RunResult i = run({"inspect", p});
  EXPECT_EQ(i.status, 2) << i.out;
  EXPECT_NE(i.err.find("frame 1501"), std::string::npos) << i.err;
  const json j = run_json({"measure", p, "--unit", "1=A", "--json", "-"});
  EXPECT_EQ(j["not_finite_samples"].get<int>(), 1);
  EXPECT_GE(j["left_out_cycles"]["not_finite"].get<int>(), 1);
  ASSERT_FALSE(j["left_out_stretches"].empty());
  // The NaN at 15.00 ms lies inside the stretch left out.
  EXPECT_LE(j["left_out_stretches"][0]["start_s"].get<double>(), 0.015);
  EXPECT_GE(j["left_out_stretches"][0]["end_s"].get<double>(), 0.015);
  EXPECT_TRUE(std::isfinite(j["dc_offset_a"]["value"].get<double>()));
}

}  // namespace
