// `lopside measure` on records that are not what a discharge capture should be (issue 9,
// items 5 and 6), run as a user runs it on CSV files written here: white noise, a single
// transient, a voltage channel that is not periodic, a glitch, a NaN cell, few whole cycles.
// The truth is each signal's construction (a sine integrates to zero over whole cycles, so the
// DC of D + A·sin is D; white noise and a single burst have no periodic fundamental).
#include <cmath>
#include <cstdio>
#include <functional>
#include <random>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

class RecordSanity : public Cli {
 protected:
  // A CSV with a time column and one or two channels, `rows` samples at `rate_hz`.
  fs::path write_csv(const std::string& name, double rate_hz, std::size_t rows,
                     const std::function<double(std::size_t)>& current,
                     const std::function<double(std::size_t)>& voltage = {}) {
    std::string text = voltage ? "time (s),current (A),voltage (V)\n" : "time (s),current (A)\n";
    text.reserve(rows * (voltage ? 48 : 32));
    char row[128];
    for (std::size_t n = 0; n < rows; ++n) {
      const double t = static_cast<double>(n) / rate_hz;
      if (voltage) {
        std::snprintf(row, sizeof row, "%.7f,%.9e,%.6e\n", t, current(n), voltage(n));
      } else {
        std::snprintf(row, sizeof row, "%.7f,%.9e\n", t, current(n));
      }
      text += row;
    }
    return file(name, text);
  }

  json measure_json(const fs::path& p, std::vector<std::string> extra = {}) {
    std::vector<std::string> args{"measure", p.string(), "--json", "-"};
    args.insert(args.end(), extra.begin(), extra.end());
    return run_json(args);
  }
};

bool any_warning_has(const json& j, const std::string& text) {
  if (!j.contains("warnings")) return false;
  for (const auto& w : j["warnings"])
    if (w.get<std::string>().find(text) != std::string::npos) return true;
  return false;
}

// 1 kHz, 20 mA peak, +1 mA DC (the capture), 200 kS/s.
constexpr double kF = 1000, kPeak = 0.020, kDc = 0.001, kRate = 200e3;

double sine(std::size_t n, double phase = 0.37) {
  return kDc + kPeak * std::sin(2 * M_PI * kF * static_cast<double>(n) / kRate + phase);
}

// White Gaussian noise has no periodic fundamental (its crossings are a random point process,
// Rice, Bell Syst. Tech. J. 24, 1945); the white noise got "184 kHz and 3 690 cycles".
// 0.1 s at 1 MS/s: tens of thousands of crossings.
TEST_F(RecordSanity, WhiteNoiseIsRefused) {
  std::mt19937_64 rng(11);
  std::normal_distribution<double> noise(0.0, 0.001);
  const fs::path p = write_csv("noise.csv", 1e6, 100'000, [&](std::size_t) { return noise(rng); });
  const RunResult r = run({"measure", p.string(), "--json", "-"});
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find("no periodic fundamental"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find(p.string()), std::string::npos) << r.err;
  EXPECT_EQ(r.out.find("fundamental_hz"), std::string::npos) << r.out;
}

// A single damped 1 kHz burst in 0.2 s of 10 µA noise: a transient, not a periodic signal.
// The issue: refused, never given a fundamental. The brief's 3 ms burst (τ = 1 ms) holds one
// whole cycle above the detector's band, so it is refused as too short; a 10 ms burst
// (τ = 3 ms) holds several regular cycles and must be refused as not periodic.
void write_burst(std::string& text, double length_s, double tau_s) {
  std::mt19937_64 rng(5);
  std::normal_distribution<double> noise(0.0, 1e-5);
  text = "time (s),current (A)\n";
  char row[96];
  for (int n = 0; n < 40'000; ++n) {
    const double t = n / kRate - 0.1;
    const double burst =
        t >= 0 && t < length_s ? 0.02 * std::exp(-t / tau_s) * std::sin(2 * M_PI * kF * t) : 0.0;
    std::snprintf(row, sizeof row, "%.7f,%.9e\n", n / kRate, burst + noise(rng));
    text += row;
  }
}

TEST_F(RecordSanity, SingleTransientIsRefused) {
  std::string text;
  write_burst(text, 0.003, 0.001);
  const fs::path p = file("burst3.csv", text);
  const RunResult r = run({"measure", p.string(), "--json", "-"});
  EXPECT_EQ(r.status, 2) << r.out;
  EXPECT_NE(r.err.find(p.string()), std::string::npos) << r.err;
  EXPECT_EQ(r.out.find("fundamental_hz"), std::string::npos) << r.out;

  write_burst(text, 0.010, 0.003);
  const fs::path q = file("burst10.csv", text);
  const RunResult s = run({"measure", q.string(), "--json", "-"});
  EXPECT_EQ(s.status, 2) << s.out;
  EXPECT_NE(s.err.find("no periodic fundamental"), std::string::npos) << s.err;
  EXPECT_EQ(s.out.find("fundamental_hz"), std::string::npos) << s.out;
}

// Item 5: a periodic current beside a voltage that is not (a converter's output: 300 V, a ramp
// of 40 V/s, a step at 0.2 s and 10 V rms of noise), 0.5 s. The failure took the
// voltage as the reference ("cycles" of 16–520 µs, 2.2 kHz on a 1 kHz signal, no warning).
struct ConverterOutput {
  const char* name;
  double step_v;
};

class NonPeriodicVoltage : public RecordSanity,
                           public ::testing::WithParamInterface<ConverterOutput> {
 protected:
  fs::path capture() {
    std::mt19937_64 rng(3);
    std::normal_distribution<double> noise(0.0, 10.0);
    const double step = GetParam().step_v;
    return write_csv(
        "two_channels.csv", kRate, 100'000, [](std::size_t n) { return sine(n); },
        [&](std::size_t n) {
          const double t = static_cast<double>(n) / kRate;
          return 300 + 40 * t + (t > 0.2 ? step : 0.0) + noise(rng);
        });
  }
};

TEST_P(NonPeriodicVoltage, DefaultUsesTheCurrentAndSaysWhy) {
  const fs::path p = capture();
  const json j = measure_json(p);
  EXPECT_EQ(j["reference"], "current");
  ASSERT_TRUE(j.contains("reference_note"));
  EXPECT_TRUE(j["reference_note"].is_string()) << j["reference_note"];
  EXPECT_TRUE(any_warning_has(j, "not periodic")) << j["warnings"];
  // A noise-free sine: the fundamental within its u95, or within 1e-6 where that is smaller
  // (sampling_accuracy_test.cpp: the boundary fit's residual on a clean sine).
  EXPECT_NEAR(j["fundamental_hz"]["value"].get<double>(), kF,
              std::max(j["fundamental_hz"]["u95"].get<double>(), kF * 1e-6));
  // 0.5 s at 1 kHz: 500 periods; phase 0.37 puts the last boundary 18.6 µs (3.7 samples)
  // before the end, too near it to be fitted: 498 whole cycles and 2 partial ones.
  EXPECT_EQ(j["cycle_count"].get<long>(), 498);
  EXPECT_EQ(j["partial_cycles"].get<long>(), 2);
  EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), kDc, 3e-4 * kPeak);
  // The text output says it too.
  const RunResult t = run({"measure", p.string(), "--full"});
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("rising crossings of the current"), std::string::npos) << t.out;
  EXPECT_NE(t.out.find("not periodic"), std::string::npos) << t.out;
}

// By hand the voltage is used, and its crossings are not given out as a fundamental: refused
// as non-periodic (exit 2), or measured with its irregular cycles left out and said.
TEST_P(NonPeriodicVoltage, ForcedVoltageReferenceIsRefusedOrReported) {
  const fs::path p = capture();
  const RunResult r = run({"measure", p.string(), "--reference", "voltage", "--json", "-"});
  if (r.status == 2) {
    EXPECT_NE(r.err.find(p.string()), std::string::npos) << r.err;
    EXPECT_TRUE(r.err.find("no periodic fundamental") != std::string::npos ||
                r.err.find("expected at least two whole cycles") != std::string::npos)
        << r.err;
  } else {
    ASSERT_EQ(r.status, 0) << r.err;
    const json j = json::parse(r.out);
    EXPECT_EQ(j["reference"], "voltage");
    EXPECT_GT(j["left_out_cycles"]["irregular"].get<long>(), 0) << r.out;
    EXPECT_TRUE(any_warning_has(j, "irregular")) << j["warnings"];
  }
  // And `--reference current` is taken as asked.
  const json c = measure_json(p, {"--reference", "current"});
  EXPECT_EQ(c["reference"], "current");
}

INSTANTIATE_TEST_SUITE_P(Shapes, NonPeriodicVoltage,
                         ::testing::Values(ConverterOutput{"large_step", 100},
                                           ConverterOutput{"small_step", 20}),
                         [](const auto& param_info) { return std::string(param_info.param.name); });

// Item 6 through the CLI: a +5 A single-sample glitch at 0.3 s in 0.5 s of the signal
// with 1 % of peak noise. Its cycles are left out, counted and said in the JSON and the text;
// the DC is the truth within 0.03 % of peak and its u95 (the issue's "+1.0045 mA ± 0.00002 mA
// significant" had a quarter of the cycles thrown away).
TEST_F(RecordSanity, GlitchIsLeftOutAndSaidInEveryOutput) {
  std::mt19937_64 rng(7);
  std::normal_distribution<double> noise(0.0, 0.01 * kPeak);
  const std::size_t at = 60'000;  // 0.3 s
  const fs::path p = write_csv("glitch.csv", kRate, 100'000, [&](std::size_t n) {
    return sine(n) + noise(rng) + (n == at ? 5.0 : 0.0);
  });
  const json j = measure_json(p);
  const long glitch = j["left_out_cycles"]["glitch"].get<long>();
  EXPECT_GE(glitch, 1);
  EXPECT_LE(glitch, 3);
  bool placed = false;
  for (const auto& e : j["left_out_stretches"]) {
    placed = placed || (e["reason"] == "glitch" && e["start_s"].get<double>() <= 0.3 &&
                        e["end_s"].get<double>() >= 0.3);
  }
  EXPECT_TRUE(placed) << j["left_out_stretches"];
  EXPECT_TRUE(any_warning_has(j, "glitch")) << j["warnings"];
  const double dc = j["dc_offset_a"]["value"].get<double>();
  const double u95 = j["dc_offset_a"]["u95"].get<double>();
  // Within 1.5·u95 (about 3σ): one seed, and a u95 is a 95 % interval (GUM 6.2), so a bare
  // u95 bound fails one seed in twenty by design (this one sits at 1.01·u95).
  EXPECT_NEAR(dc, kDc, 1.5 * u95) << "u95 " << u95;
  EXPECT_NEAR(dc, kDc, 3e-4 * kPeak);
  // Whole, left-out and partial cycles account for the 500 periods (phase 0.37: 498 whole
  // and 2 partial without the glitch; a faked crossing may add one piece).
  const long pieces = j["cycle_count"].get<long>() + j["partial_cycles"].get<long>() + glitch +
                      j["left_out_cycles"]["irregular"].get<long>() +
                      j["left_out_cycles"]["not_finite"].get<long>() +
                      j["left_out_cycles"]["neighbour"].get<long>();
  EXPECT_GE(pieces, 500);
  EXPECT_LE(pieces, 501);
  const RunResult t = run({"measure", p.string(), "--full"});
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("glitch"), std::string::npos) << t.out;
}

// A NaN cell in a text capture is bad input: refused with the file and the place (rules:
// exit 2, never a crash). Data row 1234 is line 1235 (the header is line 1).
TEST_F(RecordSanity, NanCellInTextIsRefusedNamingTheLine) {
  std::string text = "time (s),current (A)\n";
  char row[96];
  for (int n = 0; n < 20'000; ++n) {
    if (n == 1233) {
      std::snprintf(row, sizeof row, "%.7f,nan\n", n / kRate);
    } else {
      std::snprintf(row, sizeof row, "%.7f,%.9e\n", n / kRate, sine(static_cast<std::size_t>(n)));
    }
    text += row;
  }
  const fs::path p = file("nan.csv", text);
  const RunResult r = run({"measure", p.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find(p.string()), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("1235"), std::string::npos) << r.err;
  EXPECT_EQ(r.out.find("DC offset"), std::string::npos) << r.out;
}

// Two whole cycles: measured, with a fundamental whose u95 is not zero (the issue: "u95 is 0
// with two whole cycles") and holds the truth, and a warning that the figures are poorly
// determined. 1 kHz from a falling zero crossing: rising boundaries at (0.54 + k) ms, so
// 2.75 ms hold 2 whole cycles.
TEST_F(RecordSanity, TwoWholeCyclesWarnAndCarryAnHonestU95) {
  const fs::path p = write_csv("two.csv", kRate, 550, [](std::size_t n) {
    return kPeak * std::sin(2 * M_PI * kF * static_cast<double>(n) / kRate + M_PI);
  });
  const json j = measure_json(p);
  EXPECT_EQ(j["cycle_count"].get<long>(), 2);
  const double u95 = j["fundamental_hz"]["u95"].get<double>();
  EXPECT_GT(u95, 0.0);
  EXPECT_NEAR(j["fundamental_hz"]["value"].get<double>(), kF, u95);
  EXPECT_TRUE(any_warning_has(j, "poorly determined")) << j["warnings"];
  const RunResult t = run({"measure", p.string(), "--full"});
  ASSERT_EQ(t.status, 0) << t.err;
  EXPECT_NE(t.out.find("poorly determined"), std::string::npos) << t.out;
}

}  // namespace
