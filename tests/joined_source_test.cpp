// One acquisition saved as two files (current in one, voltage in the other): `--with FILE`
// joins them, in the library (join_captures) and through the built `lopside`; and `--zero`
// on standard input, which needs the capture read twice.
#include "lopside/joined_source.hpp"

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <sstream>
#include <string>
#include <vector>

#include "cli_support.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
using lopside::test::shell_quote;
using lopside::test::slurp;
namespace fs = std::filesystem;

// The test signal, known analytically: i(t) = I0 + Ia·sin(2πft), u(t) = Ua·sin(2πft + φ),
// sampled at fs = 100 f (100 samples per period, a whole number of periods in the file).
constexpr double kF = 1000.0;          // Hz
constexpr double kFs = 100000.0;       // Hz
constexpr double kI0 = 0.001;          // A, the DC to find
constexpr double kIa = 0.02;           // A
constexpr double kUa = 1000.0;         // V
constexpr double kPhi = 0.3;           // rad
constexpr double kProbeOffset = 5e-4;  // A, added to every sample of the --zero capture

struct Layout {
  std::size_t frames = 2000;
  double start_s = 0.0;
  double fs_hz = kFs;
  std::string voltage_header = "voltage (V)";
  double quiet_s = 0.0;  // the current is only the probe's offset before this time
};

double current_at(double t, const Layout& l) {
  if (t < l.quiet_s) return kProbeOffset;
  return (l.quiet_s > 0 ? kProbeOffset : 0.0) + kI0 + kIa * std::sin(2 * M_PI * kF * t);
}
double voltage_at(double t) {
  return kUa * std::sin(2 * M_PI * kF * t + kPhi);
}

// time, then the columns asked for; times printed to 10 ns, values to 1 nA and 1 µV, far
// below the tolerances used.
std::string capture_text(const Layout& l, bool current, bool voltage) {
  std::ostringstream s;
  s << "time (s)" << (current ? ",current (A)" : "")
    << (voltage ? "," + l.voltage_header : std::string()) << "\n";
  char line[128];
  for (std::size_t k = 0; k < l.frames; ++k) {
    const double t = l.start_s + static_cast<double>(k) / l.fs_hz;
    std::snprintf(line, sizeof line, "%.8f", t);
    s << line;
    if (current) {
      std::snprintf(line, sizeof line, ",%.9f", current_at(t, l));
      s << line;
    }
    if (voltage) {
      std::snprintf(line, sizeof line, ",%.6f", voltage_at(t));
      s << line;
    }
    s << "\n";
  }
  return s.str();
}

class Joined : public Cli {
 protected:
  fs::path current_file(const Layout& l = {}) {
    return file("A.csv", capture_text(l, true, false));
  }
  fs::path voltage_file(const Layout& l = {}, const std::string& name = "V.csv") {
    return file(name, capture_text(l, false, true));
  }
};

TEST_F(Joined, VoltageFromASecondFileGivesThePower) {
  const fs::path a = current_file();
  const fs::path v = voltage_file();
  const json j = run_json({"measure", a.string(), "--with", v.string(), "--json", "-"});
  ASSERT_FALSE(j["voltage"].is_null());
  EXPECT_EQ(j["input"]["voltage_channel"], "voltage");
  EXPECT_EQ(j["input"]["current_channel"], "current");
  EXPECT_EQ(j["input"]["path"], a.string());
  EXPECT_NE(j["input"]["detail"].get<std::string>().find("channel 2 from " + v.string()),
            std::string::npos);
  EXPECT_EQ(j["reference"], "voltage");
  // Mean of u·i over whole periods: (Ia·Ua/2)·cos φ (the DC times the voltage's zero mean adds
  // nothing). The trapezoid over whole sampled periods is exact for these harmonics; the cycle
  // boundaries fall between samples, where the engine interpolates linearly, an error of
  // about (2πf/fs)²/6 = 6.6e-4 over one sample of the 100 per period: 7e-6 relative, so 2e-5.
  const double power = kIa * kUa / 2 * std::cos(kPhi);
  EXPECT_NEAR(j["voltage"]["power_w"]["value"].get<double>(), power, 2e-5 * power);

  // The current figures are those of the current file alone: DC within the 0.03 % of
  // peak (measure_cli_test), RMS √(I0² + Ia²/2) (analytic) within 0.2 %.
  const json alone = run_json({"measure", a.string(), "--json", "-"});
  for (const json* r : {&j, &alone}) {
    EXPECT_NEAR((*r)["dc_offset_a"]["value"].get<double>(), kI0, 3e-4 * kIa);
    const double rms = std::sqrt(kI0 * kI0 + kIa * kIa / 2);
    EXPECT_NEAR((*r)["rms_a"]["value"].get<double>(), rms, 2e-3 * rms);
  }

  // And exactly what one file holding both columns gives: the same numbers read the same way,
  // so equal to rounding (1e-12 relative).
  const fs::path both = file("AV.csv", capture_text({}, true, true));
  const json one = run_json({"measure", both.string(), "--json", "-"});
  for (const char* key : {"dc_offset_a", "rms_a", "charge_asymmetry", "fundamental_hz"}) {
    const double x = one[key]["value"].get<double>();
    EXPECT_NEAR(j[key]["value"].get<double>(), x, 1e-12 * std::fabs(x) + 1e-18) << key;
  }
  EXPECT_NEAR(one["voltage"]["power_w"]["value"].get<double>(),
              j["voltage"]["power_w"]["value"].get<double>(), 1e-12 * power);
}

TEST_F(Joined, DifferentStartIsRefusedNamingBothTimes) {
  const fs::path a = current_file();
  Layout late;
  late.start_s = 200e-6;
  const fs::path v = voltage_file(late);
  const RunResult r = run({"measure", a.string(), "--with", v.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_NE(r.err.find(v.string() + ": starts at 200.0 µs, the capture " + a.string() + " at 0"),
            std::string::npos)
      << r.err;
}

TEST_F(Joined, DifferentIntervalIsRefusedNamingBoth) {
  const fs::path a = current_file();
  Layout slow;
  slow.fs_hz = kFs / 2;
  slow.frames = 1000;
  const fs::path v = voltage_file(slow);
  const RunResult r = run({"measure", a.string(), "--with", v.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_NE(r.err.find(v.string() + ": sample interval 20.00 µs, the capture " + a.string() +
                       "'s 10.00 µs"),
            std::string::npos)
      << r.err;
}

TEST_F(Joined, DifferentLengthIsRefusedWithBothCounts) {
  const fs::path a = current_file();
  Layout shorter;
  shorter.frames = 1500;
  const fs::path v = voltage_file(shorter);
  RunResult r = run({"measure", a.string(), "--with", v.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_NE(r.err.find(v.string() + ": holds 1500 samples, the capture " + a.string() + " 2000"),
            std::string::npos)
      << r.err;
  // The other way round: the companion is the longer one, found once the main file ends.
  Layout longer;
  longer.frames = 2500;
  const fs::path w = voltage_file(longer, "W.csv");
  r = run({"inspect", a.string(), "--with", w.string()});
  EXPECT_EQ(r.status, 2) << r.err;
  EXPECT_NE(r.err.find(w.string() + ": holds 2500 samples, the capture " + a.string() + " 2000"),
            std::string::npos)
      << r.err;
}

TEST_F(Joined, InspectListsTheJoinedChannels) {
  const fs::path a = current_file();
  const fs::path v = voltage_file();
  const json j = inspect_json(a, {"--with", v.string()});
  ASSERT_EQ(j["channels"].size(), 2u);
  EXPECT_EQ(j["channels"][0]["index"], 1);
  EXPECT_EQ(j["channels"][0]["name"], "current");
  EXPECT_EQ(j["channels"][0]["unit"], "A");
  EXPECT_EQ(j["channels"][0]["role"], "current");
  EXPECT_EQ(j["channels"][1]["index"], 2);
  EXPECT_EQ(j["channels"][1]["name"], "voltage");
  EXPECT_EQ(j["channels"][1]["unit"], "V");
  EXPECT_EQ(j["channels"][1]["role"], "voltage");
  EXPECT_EQ(j["samples"], 2000);
  // The voltage's extremes: ±Ua to the printed 1 µV, sampled at 100 points per period, so
  // within Ua·(1 − cos(π/100)) = 0.05 % of the peak (analytic).
  EXPECT_NEAR(j["channels"][1]["max"].get<double>(), kUa, 5e-4 * kUa);
  EXPECT_NEAR(j["channels"][1]["min"].get<double>(), -kUa, 5e-4 * kUa);
  // Each file's own guesses are said once, in the joined numbering.
  int role_notes = 0;
  for (const auto& w : j["warnings"]) {
    if (w.get<std::string>().find("taken as the") != std::string::npos) ++role_notes;
  }
  EXPECT_EQ(role_notes, 2) << j["warnings"].dump();
}

TEST_F(Joined, ChannelOptionsUseTheJoinedNumbering) {
  const fs::path a = current_file();
  Layout plain;
  plain.voltage_header = "probe2";  // no unit, no telling name: no role unless told
  const fs::path v = voltage_file(plain);
  json j = run_json({"measure", a.string(), "--with", v.string(), "--json", "-"});
  EXPECT_TRUE(j["voltage"].is_null());

  j = run_json({"measure", a.string(), "--voltage", "2", "--gain", "2=0.5", "--with", v.string(),
                "--json", "-"});
  EXPECT_EQ(j["input"]["voltage_channel"], "probe2");
  // The gain of channel 2 halves the voltage, so the power: (Ia·Ua/4)·cos φ, tolerance as in
  // the power test above.
  const double power = kIa * kUa / 4 * std::cos(kPhi);
  EXPECT_NEAR(j["voltage"]["power_w"]["value"].get<double>(), power, 2e-5 * power);

  const RunResult r =
      run({"measure", a.string(), "--voltage", "3", "--with", v.string(), "--json", "-"});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("there is no channel 3; channels are numbered 1 to 2"), std::string::npos)
      << r.err;
}

TEST_F(Joined, SwapRefusesWithAndSaysWhy) {
  const fs::path a = current_file();
  const fs::path v = voltage_file();
  const RunResult r = run({"swap", a.string(), a.string(), "--with", v.string()});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("one --with FILE cannot belong to both"), std::string::npos) << r.err;
}

TEST_F(Joined, SkipBadRowsIsRefused) {
  const fs::path a = current_file();
  const fs::path v = voltage_file();
  const RunResult r = run({"measure", a.string(), "--with", v.string(), "--skip-bad-rows"});
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("--skip-bad-rows cannot be combined with --with"), std::string::npos)
      << r.err;
}

TEST_F(Joined, ReadsInLockstepWhateverTheBlockSize) {
  // In-process: blocks of 7 frames (not a divisor of 2000) come out interleaved, the second
  // file's value beside the first's at every frame (u and i read back to their printed digits).
  const fs::path a = current_file();
  const fs::path v = voltage_file();
  lopside::ReaderOptions part;
  std::vector<std::unique_ptr<lopside::SampleSource>> companions;
  companions.push_back(lopside::open_capture(v, part));
  const auto joined =
      lopside::join_captures(lopside::open_capture(a, part), std::move(companions), {});
  ASSERT_EQ(joined->info().channels.size(), 2u);
  lopside::SampleBlock block;
  std::size_t frame = 0;
  const Layout l;
  while (const std::size_t n = joined->read(block, 7)) {
    ASSERT_EQ(block.channels, 2u);
    for (std::size_t f = 0; f < n; ++f, ++frame) {
      const double t = static_cast<double>(frame) / kFs;
      ASSERT_NEAR(block.value(f, 0), current_at(t, l), 1e-9) << frame;
      ASSERT_NEAR(block.value(f, 1), voltage_at(t), 1e-6) << frame;
    }
  }
  EXPECT_EQ(frame, 2000u);
  ASSERT_TRUE(joined->info().frames.has_value());
  EXPECT_EQ(*joined->info().frames, 2000u);
}

// `cat A.csv | lopside measure - --zero 0:0.01` reads standard input twice (the offset, then
// the measurement): it must give what the file gives.
TEST_F(Joined, ZeroOnStandardInputEqualsZeroOnTheFile) {
  Layout l;
  l.quiet_s = 0.01;  // 10 ms of the probe's offset alone, then 40 ms of discharge
  l.frames = 5000;
  const fs::path a = current_file(l);
  const json from_file = run_json({"measure", a.string(), "--zero", "0:0.01", "--json", "-"});
  const fs::path out = dir_ / "piped.json";
  const fs::path err = dir_ / "piped.err";
  const std::string cmd = "cat " + shell_quote(a.string()) + " | " + shell_quote(LOPSIDE_BINARY) +
                          " measure - --zero 0:0.01 --json - >" + shell_quote(out.string()) +
                          " 2>" + shell_quote(err.string());
  const int raw = std::system(cmd.c_str());
  ASSERT_TRUE(WIFEXITED(raw) && WEXITSTATUS(raw) == 0) << slurp(err);
  const json piped = json::parse(slurp(out));
  EXPECT_EQ(piped["input"]["path"], "standard input");
  for (const char* key : {"dc_offset_a", "rms_a", "charge_asymmetry", "fundamental_hz"}) {
    EXPECT_EQ(piped[key]["value"].get<double>(), from_file[key]["value"].get<double>()) << key;
    EXPECT_EQ(piped[key]["u95"].get<double>(), from_file[key]["u95"].get<double>()) << key;
  }
  EXPECT_EQ(piped["cycle_count"], from_file["cycle_count"]);
  // The offset removed is the probe's: the DC left is the discharge's own I0, within the
  // issue's 0.03 % of peak (measure_cli_test).
  EXPECT_NEAR(piped["dc_offset_a"]["value"].get<double>(), kI0, 3e-4 * kIa);
}

}  // namespace
