// The `lopside` program run as a user runs it: inputs written to a temporary directory, the
// built binary started through the shell, its exit status, standard output and standard error
// checked. Bad input must end with status 2 (lopside/error.hpp) and a message that names the
// file and, where there is one, the line (as an editor counts it) or the byte offset.

#include <gtest/gtest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>
#include <optional>
#include <sstream>
#include <string>
#include <vector>

#include "cli_support.hpp"

namespace fs = std::filesystem;
using lopside::test::Cli;
using lopside::test::RunResult;
using lopside::test::shell_quote;
using lopside::test::slurp;
using lopside::test::write_file;
using nlohmann::json;

namespace {

/// The first line of standard error, checked for the program's prefix, the path and, where
/// `line` is given, `PATH:LINE:` (the form of InputError::what()).
void expect_bad_input(const RunResult& r, const fs::path& p,
                      std::optional<int> line = std::nullopt) {
  EXPECT_EQ(r.status, 2) << "stdout:\n" << r.out << "stderr:\n" << r.err;
  EXPECT_EQ(r.err.rfind("lopside: ", 0), 0u) << r.err;
  EXPECT_NE(r.err.find(p.string()), std::string::npos) << "message does not name the file:\n"
                                                       << r.err;
  if (line) {
    const std::string where = p.string() + ":" + std::to_string(*line) + ":";
    EXPECT_NE(r.err.find(where), std::string::npos) << "expected '" << where << "' in:\n" << r.err;
  }
  EXPECT_EQ(r.err.find("internal error"), std::string::npos) << r.err;
}

/// A message that gives a place: `PATH:LINE:` or `PATH: byte N:`.
void expect_place(const RunResult& r, const fs::path& p) {
  const std::string path = p.string();
  bool found = false;
  for (auto at = r.err.find(path); at != std::string::npos && !found;
       at = r.err.find(path, at + 1)) {
    std::size_t i = at + path.size();
    if (r.err.compare(i, 7, ": byte ") == 0) {
      i += 7;
    } else if (r.err.compare(i, 1, ":") == 0) {
      i += 1;
    } else {
      continue;
    }
    std::size_t digits = 0;
    while (i < r.err.size() && std::isdigit(static_cast<unsigned char>(r.err[i]))) ++i, ++digits;
    found = digits > 0 && i < r.err.size() && r.err[i] == ':';
  }
  EXPECT_TRUE(found) << "no line or byte offset in:\n" << r.err;
}

bool contains_ci(std::string hay, std::string needle) {
  auto lower = [](std::string& s) {
    std::transform(s.begin(), s.end(), s.begin(),
                   [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  };
  lower(hay);
  lower(needle);
  return hay.find(needle) != std::string::npos;
}

// The reference capture of most tests: 10 rows, time step 1 µs printed with 6 decimals, so
// the rate is 1/1 µs = 1 MHz and the record lasts 10 × 1 µs = 10 µs.
// current in mA: 0 25 25 25 0 −10 −25 −25 0 5
//   min −25 mA, max 25 mA; mean (75 − 10 − 50 + 5)/10 = 2 mA;
//   clipped: nothing. The run of three 25s is a level the record holds, with no whole cycle and
//   no flank on both sides whose curvature says the crest would have gone further (clipping.hpp).
// voltage in V: 0 10 20 … 90: min 0, max 90, mean 45, no run at either end.
const int kRows = 10;
const double kCurrentMa[kRows] = {0, 25, 25, 25, 0, -10, -25, -25, 0, 5};

std::string reference_csv() {
  std::string s = "time (s),current (mA),voltage (V)\n";
  for (int i = 0; i < kRows; ++i) {
    char row[96];
    std::snprintf(row, sizeof row, "%.6f,%g,%d\n", i * 1e-6, kCurrentMa[i], 10 * i);
    s += row;
  }
  return s;
}

/// A 16-bit PCM mono RIFF WAVE file (the canonical 44-byte header of the RIFF WAVE spec,
/// Microsoft/IBM 1991: "RIFF" size "WAVE", "fmt " chunk of 16 bytes, "data" chunk).
/// `claimed_data_bytes` is what the data chunk header states; only `samples` follow it.
std::string wav_bytes(const std::vector<std::int16_t>& samples, std::uint32_t rate_hz,
                      std::uint32_t claimed_data_bytes) {
  std::string s;
  auto u16 = [&s](std::uint32_t v) {
    s.push_back(static_cast<char>(v & 0xFFu));
    s.push_back(static_cast<char>((v >> 8) & 0xFFu));
  };
  auto u32 = [&](std::uint32_t v) {
    u16(v & 0xFFFFu);
    u16(v >> 16);
  };
  s += "RIFF";
  u32(36 + claimed_data_bytes);
  s += "WAVEfmt ";
  u32(16);
  u16(1);            // PCM
  u16(1);            // channels
  u32(rate_hz);      // sample rate
  u32(rate_hz * 2);  // byte rate
  u16(2);            // block align
  u16(16);           // bits per sample
  s += "data";
  u32(claimed_data_bytes);
  for (const std::int16_t v : samples) u16(static_cast<std::uint16_t>(v));
  return s;
}

// --- success ----------------------------------------------------------------------------

TEST_F(Cli, InspectJsonGivesTheReferenceValues) {
  const fs::path p = file("bench.csv", reference_csv());
  const json j = inspect_json(p);
  ASSERT_TRUE(j.is_object());
  EXPECT_EQ(j.at("schema"), "lopside.inspect/1");
  EXPECT_EQ(j.at("samples").get<std::uint64_t>(), 10u);
  // Rate from the time column; 6 printed decimals of 1 µs steps are exact to well below 1 ppm.
  EXPECT_NEAR(j.at("sample_rate_hz").get<double>(), 1e6, 1.0);
  EXPECT_NEAR(j.at("duration_s").get<double>(), 10e-6, 1e-11);
  EXPECT_NEAR(j.at("start_time_s").get<double>(), 0.0, 1e-9);
  ASSERT_EQ(j.at("channels").size(), 2u);  // the time column is not a channel

  const json& i = j.at("channels").at(0);
  EXPECT_EQ(i.at("index"), 1);
  EXPECT_EQ(i.at("name"), "current");
  EXPECT_EQ(i.at("unit"), "A");
  EXPECT_EQ(i.at("role"), "current");
  // mA → A is a factor 1e-3 (SI Brochure, table 7); 1e-15 A allows a rounding of the product.
  EXPECT_NEAR(i.at("min").get<double>(), -0.025, 1e-15);
  EXPECT_NEAR(i.at("max").get<double>(), 0.025, 1e-15);
  EXPECT_NEAR(i.at("mean").get<double>(), 0.002, 1e-15);
  EXPECT_DOUBLE_EQ(i.at("clipped_share").get<double>(), 0.0);
  EXPECT_DOUBLE_EQ(i.at("clipped_max_share").get<double>(), 0.0);
  EXPECT_DOUBLE_EQ(i.at("clipped_min_share").get<double>(), 0.0);

  const json& u = j.at("channels").at(1);
  EXPECT_EQ(u.at("unit"), "V");
  EXPECT_EQ(u.at("role"), "voltage");
  EXPECT_DOUBLE_EQ(u.at("min").get<double>(), 0.0);
  EXPECT_DOUBLE_EQ(u.at("max").get<double>(), 90.0);
  EXPECT_DOUBLE_EQ(u.at("mean").get<double>(), 45.0);
  EXPECT_DOUBLE_EQ(u.at("clipped_share").get<double>(), 0.0);

  // 30 % of channel 1 flat on its maximum is far above the 1 % warning threshold.
  bool clip_warning = false;
  for (const auto& w : j.at("warnings")) {
    const std::string text = w.get<std::string>();
    if (contains_ci(text, "clipped") && contains_ci(text, "channel 1")) clip_warning = true;
  }
  EXPECT_FALSE(clip_warning) << j.at("warnings").dump();
}

TEST_F(Cli, InspectTextSummary) {
  const fs::path p = file("bench.csv", reference_csv());
  const RunResult r = run({"inspect", p.string()});
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_TRUE(r.err.empty()) << r.err;
  // 1 MHz with four significant digits and an SI prefix, as the summary prints rates.
  EXPECT_NE(r.out.find("1.000 MHz"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("10 frames"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("10.00 µs"), std::string::npos) << r.out;  // 10 × 1 µs
  EXPECT_NE(r.out.find("-25.00 mA"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("25.00 mA"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("90.00 V"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("0.00 %"), std::string::npos) << r.out;  // nothing clipped
  EXPECT_NE(r.out.find("current"), std::string::npos) << r.out;
}

TEST_F(Cli, JsonFileIsWrittenAndTextStillPrinted) {
  const fs::path p = file("bench.csv", reference_csv());
  const fs::path out = dir_ / "summary.json";
  const RunResult r = run({"inspect", p.string(), "--json", out.string()});
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("1.000 MHz"), std::string::npos) << r.out;
  const json j = json::parse(slurp(out));
  EXPECT_EQ(j.at("samples").get<std::uint64_t>(), 10u);
  // AtomicOutput renames its temporary file over the target: none may be left behind.
  for (const auto& e : fs::directory_iterator(dir_)) {
    EXPECT_EQ(e.path().filename().string().find(".tmp-"), std::string::npos) << e.path();
  }
}

TEST_F(Cli, JsonToStdoutPrintsOnlyJson) {
  const fs::path p = file("bench.csv", reference_csv());
  const RunResult r = run({"inspect", p.string(), "--json", "-"});
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_TRUE(json::accept(r.out)) << r.out;
  EXPECT_EQ(r.out.find("MHz"), std::string::npos) << "text summary mixed into JSON";
}

TEST_F(Cli, GainAndRoleFlagsApply) {
  const fs::path p = file("bench.csv", reference_csv());
  // --gain 1=10: the current channel times 10, max 25 mA → 250 mA.
  const json j = inspect_json(p, {"--gain", "1=10", "--voltage", "2"});
  ASSERT_TRUE(j.contains("channels"));
  EXPECT_NEAR(j["channels"][0]["max"].get<double>(), 0.25, 1e-15);
  EXPECT_EQ(j["channels"][1]["role"], "voltage");
}

TEST_F(Cli, VersionAndHelp) {
  const RunResult v = run({"--version"});
  EXPECT_EQ(v.status, 0);
  EXPECT_EQ(v.out.rfind("lopside ", 0), 0u) << v.out;
  const RunResult h = run({"inspect", "--help"});
  EXPECT_EQ(h.status, 0);
  EXPECT_NE(h.out.find("--skip-bad-rows"), std::string::npos) << h.out;
}

TEST_F(Cli, WavWithKnownSamples) {
  // 16-bit PCM: full scale is 32768 steps (RIFF WAVE spec; libsndfile reads 16384 as 0.5 of
  // full scale). With --scale 1=10 full scale is 10 A: 16384 → 5 A, −32768 → −10 A.
  const fs::path p = file("probe.wav", wav_bytes({0, 16384, -32768, 8192, 0, 0}, 48000, 12));
  const json j = inspect_json(p, {"--scale", "1=10", "--unit", "1=A"});
  ASSERT_TRUE(j.contains("channels"));
  EXPECT_EQ(j["samples"].get<std::uint64_t>(), 6u);
  EXPECT_DOUBLE_EQ(j["sample_rate_hz"].get<double>(), 48000.0);  // from the fmt chunk
  ASSERT_EQ(j["channels"].size(), 1u);
  EXPECT_NEAR(j["channels"][0]["max"].get<double>(), 5.0, 1e-12);
  EXPECT_NEAR(j["channels"][0]["min"].get<double>(), -10.0, 1e-12);
  // (0 + 5 − 10 + 2.5 + 0 + 0) / 6 = −0.416666… A
  EXPECT_NEAR(j["channels"][0]["mean"].get<double>(), -2.5 / 6.0, 1e-12);
  EXPECT_EQ(j["channels"][0]["unit"], "A");
}

TEST_F(Cli, ClippedSineFromTheSynthTool) {
  // lopside-synth: 50 Hz sine of peak 20 mA sampled at 100 kHz for 0.1 s (5 whole periods of
  // 2000 samples), clipped at +15 mA. The share of a period where A·sin θ ≥ c is
  // (π − 2·asin(c/A)) / 2π (elementary trigonometry): c/A = 0.75 gives 0.230053. Sampling
  // moves each of the two edges per period by under one sample: tolerance 2/2000.
  const fs::path p = dir_ / "clipped.csv";
  const RunResult synth =
      run({"-o", p.string(), "--format", "csv", "--frequency", "50", "--rate", "100000",
           "--duration", "0.1", "--peak", "0.02", "--clip-high", "0.015"},
          LOPSIDE_SYNTH);
  ASSERT_EQ(synth.status, 0) << synth.err;
  const json j = inspect_json(p);
  ASSERT_TRUE(j.contains("channels"));
  EXPECT_EQ(j["samples"].get<std::uint64_t>(), 10000u);
  EXPECT_NEAR(j["sample_rate_hz"].get<double>(), 1e5, 1e5 * 1e-9);
  const json& c = j["channels"][0];
  const double pi = std::acos(-1.0);
  EXPECT_NEAR(c["clipped_max_share"].get<double>(), (pi - 2.0 * std::asin(0.75)) / (2.0 * pi),
              2.0 / 2000.0);
  // The trough of an unclipped sine is a single sample: its neighbours differ from it.
  EXPECT_EQ(c["clipped_min_share"].get<double>(), 0.0);
  EXPECT_NEAR(c["max"].get<double>(), 0.015, 1e-12);
  EXPECT_NEAR(c["min"].get<double>(), -0.020, 1e-9);  // sample 1500 of 2000 sits on 3π/2
}

// --- bad input: status 2, file named, place given -------------------------------------------

TEST_F(Cli, MissingFile) {
  const fs::path p = dir_ / "no_such_capture.csv";
  expect_bad_input(run({"inspect", p.string()}), p);
}

TEST_F(Cli, EmptyFile) {
  const fs::path p = file("empty.csv", "");
  expect_bad_input(run({"inspect", p.string()}), p);
}

TEST_F(Cli, HeaderButNoData) {
  const fs::path p = file("header_only.csv", "time (s),current (mA)\n");
  expect_bad_input(run({"inspect", p.string()}), p);
}

TEST_F(Cli, MalformedCellMidFileNamesItsLine) {
  // Header at line 1, data at lines 2–9; line 5 holds "abc" where a number belongs.
  std::string s = "time (s),current (mA)\n";
  for (int i = 0; i < 8; ++i) {
    char row[64];
    if (i == 3) {
      std::snprintf(row, sizeof row, "%.6f,abc\n", i * 1e-6);
    } else {
      std::snprintf(row, sizeof row, "%.6f,%d\n", i * 1e-6, i);
    }
    s += row;
  }
  const fs::path p = file("bad_cell.csv", s);
  const RunResult r = run({"inspect", p.string()});
  expect_bad_input(r, p, 5);
  EXPECT_TRUE(contains_ci(r.err, "expected")) << r.err;

  // --skip-bad-rows: the row is dropped (7 of 8 rows remain) and the skip is reported.
  const json j = inspect_json(p, {"--skip-bad-rows"});
  ASSERT_TRUE(j.contains("samples"));
  EXPECT_EQ(j["samples"].get<std::uint64_t>(), 7u);
  bool reported = false;
  for (const auto& w : j["warnings"]) {
    const std::string text = w.get<std::string>();
    if (contains_ci(text, "skip") && text.find('1') != std::string::npos &&
        text.find('5') != std::string::npos) {
      reported = true;
    }
  }
  EXPECT_TRUE(reported) << j["warnings"].dump();
}

TEST_F(Cli, NanCellNamesItsLine) {
  const fs::path p =
      file("nan.csv", "time (s),current (mA)\n0.000000,1\n0.000001,2\n0.000002,nan\n0.000003,4\n");
  expect_bad_input(run({"inspect", p.string()}), p, 4);
}

TEST_F(Cli, InfinityCellNamesItsLine) {
  const fs::path p =
      file("inf.csv", "time (s),current (mA)\n0.000000,1\n0.000001,-inf\n0.000002,3\n");
  expect_bad_input(run({"inspect", p.string()}), p, 3);
}

TEST_F(Cli, TimeGoingBackwardsNamesItsLine) {
  // Lines 2–6 rise by 1 µs; line 7 steps back to 2 µs.
  const fs::path p = file("backwards.csv",
                          "time (s),current (mA)\n0.000000,1\n0.000001,2\n0.000002,3\n"
                          "0.000003,4\n0.000004,5\n0.000002,6\n0.000006,7\n");
  expect_bad_input(run({"inspect", p.string()}), p, 7);
}

TEST_F(Cli, BinaryFileGivenAsText) {
  // Bytes 0…255 over and over: NULs and control bytes no text capture holds.
  std::string bytes;
  for (int k = 0; k < 16; ++k) {
    for (int b = 0; b < 256; ++b) bytes.push_back(static_cast<char>(b));
  }
  const fs::path p = file("scope_dump.csv", bytes);
  const RunResult r = run({"inspect", p.string()});
  expect_bad_input(r, p);
  expect_place(r, p);
}

TEST_F(Cli, TruncatedWav) {
  // The data chunk claims 48000 bytes (24000 samples), 100 bytes follow.
  const std::vector<std::int16_t> fifty(50, 1000);
  const fs::path p = file("truncated.wav", wav_bytes(fifty, 48000, 48000));
  const RunResult r = run({"inspect", p.string()});
  expect_bad_input(r, p);
  expect_place(r, p);
}

TEST_F(Cli, MalformedGainIsAUsageError) {
  const fs::path p = file("bench.csv", reference_csv());
  for (const std::vector<std::string>& flag : {std::vector<std::string>{"--gain", "2"},
                                               {"--gain", "1=abc"},
                                               {"--gain", "=3"},
                                               {"--gain", "1=0"},
                                               {"--unit", "1=furlong"},
                                               {"--scale", "1=-5"},
                                               {"--rate", "fast"},
                                               {"--rate", "-1e6"},
                                               // outside the README's 1 Hz … 100 GHz
                                               {"--rate", "0.5"},
                                               {"--rate", "2e11"},
                                               {"--rate", "inf"}}) {
    std::vector<std::string> args{"inspect", p.string()};
    args.insert(args.end(), flag.begin(), flag.end());
    const RunResult r = run(args);
    EXPECT_EQ(r.status, 2) << flag[0] << " " << flag[1] << ": " << r.err;
    EXPECT_NE(r.err.find(flag[0]), std::string::npos) << r.err;
    EXPECT_TRUE(contains_ci(r.err, "expected")) << r.err;
    EXPECT_TRUE(r.out.empty()) << r.out;
  }
}

TEST_F(Cli, UnknownChannelIsBadInput) {
  const fs::path p = file("bench.csv", reference_csv());
  expect_bad_input(run({"inspect", p.string(), "--current", "7"}), p);
}

TEST_F(Cli, UsageErrors) {
  EXPECT_EQ(run({}).status, 2);              // a subcommand is required
  EXPECT_EQ(run({"inspect"}).status, 2);     // CAPTURE is required
  EXPECT_EQ(run({"frobnicate"}).status, 2);  // no such subcommand
  EXPECT_EQ(run({"inspect", "--no-such-flag"}).status, 2);
}

// An output that cannot be created is an output failure (exit 3), not bad input (exit 2).
TEST_F(Cli, UnwritableJsonTargetIsOutputFailure) {
  const fs::path p = file("bench.csv", reference_csv());
  const fs::path target = dir_ / "no_such_dir" / "out.json";
  const RunResult r = run({"inspect", p.string(), "--json", target.string()});
  EXPECT_EQ(r.status, 3) << r.err;
  EXPECT_NE(r.err.find(target.string()), std::string::npos) << r.err;
}

// --- the shipped samples ----------------------------------------------------------------

bool is_capture(const fs::path& p) {
  static const std::vector<std::string> kExt{".csv", ".tsv",  ".txt", ".dat",
                                             ".wav", ".rf64", ".w64", ".flac"};
  const std::string name = p.filename().string();
  if (contains_ci(name, "readme")) return false;
  std::string ext = p.extension().string();
  std::transform(ext.begin(), ext.end(), ext.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return std::find(kExt.begin(), kExt.end(), ext) != kExt.end();
}

TEST_F(Cli, EveryShippedSampleInspects) {
  const fs::path samples = fs::path(LOPSIDE_SOURCE_DIR) / "samples";
  std::vector<fs::path> captures;
  if (fs::is_directory(samples)) {
    for (const auto& e : fs::directory_iterator(samples)) {
      if (e.is_regular_file() && is_capture(e.path())) captures.push_back(e.path());
    }
  }
  if (captures.empty()) GTEST_SKIP() << "no captures in " << samples << " yet";
  std::sort(captures.begin(), captures.end());
  for (const fs::path& p : captures) {
    SCOPED_TRACE(p.string());
    const json j = inspect_json(p);
    ASSERT_TRUE(j.contains("channels")) << j.dump();
    EXPECT_GT(j["channels"].size(), 0u);
    EXPECT_GT(j["samples"].get<std::uint64_t>(), 0u);
    EXPECT_GT(j["sample_rate_hz"].get<double>(), 0.0);
    const RunResult text = run({"inspect", p.string()});
    EXPECT_EQ(text.status, 0) << text.err;
  }
}

TEST_F(Cli, ShippedClippedSampleIsFlagged) {
  // samples/README.md: a symmetric 20 mA sine clipped at −15 mA, 32 kHz at 1 MHz. The share
  // of a period on the clip level is (π − 2·asin(15/20)) / 2π = 23.01 % (elementary
  // trigonometry); with 31.25 samples per period each of the two edges can move the count by
  // up to one sample a period: tolerance 2/31.25.
  const fs::path p = fs::path(LOPSIDE_SOURCE_DIR) / "samples" / "bt32k-unit0433-clipped.tsv";
  if (!fs::exists(p)) GTEST_SKIP() << p << " not shipped";
  const json j = inspect_json(p);
  ASSERT_TRUE(j.contains("channels"));
  const json& c = j["channels"][0];
  const double pi = std::acos(-1.0);
  EXPECT_NEAR(c["clipped_min_share"].get<double>(), (pi - 2.0 * std::asin(0.75)) / (2.0 * pi),
              2.0 / 31.25);
  EXPECT_NEAR(c["min"].get<double>(), -0.015, 1e-12);  // the clip level, printed exactly
  EXPECT_EQ(c["clipped_max_share"].get<double>(), 0.0);
  bool flagged = false;
  for (const auto& w : j["warnings"]) {
    if (contains_ci(w.get<std::string>(), "clipped")) flagged = true;
  }
  EXPECT_TRUE(flagged) << j["warnings"].dump();
}

// --- the current must be in amperes (issue 8, item 5) -------------------------------------

// 50 whole cycles of a 1 kHz sine of 0.2 (in the file's unit) on a DC of 0.01, 100 samples a
// cycle: the mean over whole cycles is the DC exactly (the sine's samples cancel, DFT
// orthogonality), so the expected DC is 0.01 × the gain, to 1e-7 of the sine's peak: the first
// boundary lies within 16 samples of the record's start, where the band-limited integral uses
// its shorter kernel (edge_weights.hpp, ~2e-6 of the amplitude on that one cycle of 49).
std::string probe_csv(const std::string& header) {
  std::string text = header + "\n";
  char row[96];
  for (int k = 0; k < 5000; ++k) {
    std::snprintf(row, sizeof row, "%.7f,%.12f\n", k * 1e-5,
                  0.01 + 0.2 * std::sin(2 * 3.14159265358979323846 * k / 100.0));
    text += row;
  }
  return text;
}

TEST_F(Cli, CurrentInVoltsIsRefusedUntilTheProbeRatioIsGiven) {
  const fs::path volts = file("probe_v.csv", probe_csv("time (s),probe (V)"));
  const RunResult refused = run({"measure", volts.string()});
  EXPECT_EQ(refused.status, 2) << refused.err;
  EXPECT_NE(refused.err.find("not amperes"), std::string::npos) << refused.err;
  EXPECT_NE(refused.err.find("--gain 1="), std::string::npos) << refused.err;
  // 100 mV/A: 10 A per volt.
  const json j = run_json({"measure", volts.string(), "--gain", "1=10", "--json", "-"});
  EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), 0.1, 10 * 0.2 * 1e-7);
  const json a = run_json({"measure", volts.string(), "--unit", "1=A", "--json", "-"});
  EXPECT_NEAR(a["dc_offset_a"]["value"].get<double>(), 0.01, 0.2 * 1e-7);
}

TEST_F(Cli, CurrentWithoutAUnitIsTakenAsAmperesAndSaid) {
  const fs::path bare = file("probe_bare.csv", probe_csv("time (s),probe"));
  const json j = run_json({"measure", bare.string(), "--json", "-"});
  EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), 0.01, 0.2 * 1e-7);
  bool said = false;
  for (const auto& w : j["warnings"])
    said = said || w.get<std::string>().find("taken as amperes") != std::string::npos;
  EXPECT_TRUE(said) << j["warnings"].dump();
}

// A serial number in the preamble travels with every JSON result (issue 8, item 2).
TEST_F(Cli, PreambleKeyValuesTravelInTheJson) {
  std::string text =
      "Serial Number;BT-32K-0042\nProbe;100 mV/A\nSample Interval;1e-05\n"
      "\xB5 note;latin-1\ncurrent (A)\n";
  char row[48];
  for (int k = 0; k < 5000; ++k) {
    std::snprintf(row, sizeof row, "%.12f\n",
                  0.01 + 0.2 * std::sin(2 * 3.14159265358979323846 * k / 100.0));
    text += row;
  }
  const fs::path p = file("serial.csv", text);
  const json m = run_json({"measure", p.string(), "--json", "-"});
  EXPECT_EQ(m["input"]["metadata"]["Serial Number"], "BT-32K-0042") << m["input"].dump();
  EXPECT_EQ(m["input"]["metadata"]["Probe"], "100 mV/A");
  EXPECT_EQ(m["input"]["metadata"]["\xC2\xB5 note"], "latin-1");  // Latin-1 µ re-encoded
  EXPECT_NEAR(m["input"]["sample_rate_hz"].get<double>(), 1e5, 1e-6);
  const json i = run_json({"inspect", p.string(), "--json", "-"});
  EXPECT_EQ(i["metadata"]["Serial Number"], "BT-32K-0042");
  // The swapped capture: the same bench file with its leads exchanged (the sine inverted).
  std::string swapped = text;
  const std::string head = "current (A)\n";
  std::string body = swapped.substr(swapped.find(head) + head.size());
  std::string flipped;
  for (std::size_t at = 0; at < body.size();) {
    const std::size_t end = body.find('\n', at);
    const double v = std::stod(body.substr(at, end - at));
    std::snprintf(row, sizeof row, "%.12f\n", -v);
    flipped += row;
    at = end + 1;
  }
  const fs::path q =
      file("serial_swapped.csv", swapped.substr(0, swapped.find(head) + head.size()) + flipped);
  const json w = run_json({"swap", p.string(), q.string(), "--json", "-"});
  EXPECT_EQ(w["normal"]["metadata"]["Serial Number"], "BT-32K-0042");
}

}  // namespace
