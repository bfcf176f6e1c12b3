// `lopside inspect` and clipping (issue 9, item 1): the real binary on captures whose answer is
// known. A slow sine on an 8-bit recorder sits on its top code for many samples without being
// clipped; a sine cut at 80 % of its crest is; a 16-bit WAV whose crests reach the top code
// has reached the recorder's range.

#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <string>
#include <vector>

#include "cli_support.hpp"
#include "lopside/sound_file_writer.hpp"

namespace {

using lopside::test::Cli;
using lopside::test::json;
using lopside::test::RunResult;
namespace fs = std::filesystem;

constexpr double kSpc = 1000;    // samples per cycle
constexpr int kCycles = 20;      // 20 ms of 1 kHz at 1 MHz
constexpr double kPeakA = 0.02;  // 20 mA crest

/// A CSV capture "time (s),current (A)" at 1 MHz of kCycles cycles of
/// kPeakA·shape(sin(2πk/kSpc + 0.3)); values printed with 9 significant digits, so equal
/// samples stay equal and distinct codes distinct.
template <typename Shape>
std::string sine_csv(Shape shape) {
  std::string s = "time (s),current (A)\n";
  for (int k = 0; k < kCycles * static_cast<int>(kSpc); ++k) {
    const double v = shape(std::sin(2 * M_PI * k / kSpc + 0.3));
    char row[64];
    std::snprintf(row, sizeof row, "%.6f,%.9g\n", k * 1e-6, kPeakA * v);
    s += row;
  }
  return s;
}

double eight_bit(double v) {
  return std::round(127 * v) / 127;
}

/// kCycles cycles of 1.00001·sin(2πk/kSpc + 0.3) of full scale, a sound file at 1 MHz.
void write_sine_sound(const fs::path& path, lopside::SoundSampleFormat format) {
  std::vector<double> x;
  for (int k = 0; k < kCycles * static_cast<int>(kSpc); ++k) {
    x.push_back(1.00001 * std::sin(2 * M_PI * k / kSpc + 0.3));
  }
  lopside::SoundFileWriter w;
  w.open(path, lopside::SoundContainer::wav, format, 1, 1e6);
  w.write(x.data(), x.size());
  w.close();
}

/// The warnings of an inspect JSON document that speak of clipping.
std::vector<std::string> clip_warnings(const json& j) {
  std::vector<std::string> out;
  for (const auto& w : j.at("warnings")) {
    const std::string text = w.get<std::string>();
    if (text.find("clipped") != std::string::npos) out.push_back(text);
  }
  return out;
}

TEST_F(Cli, EightBitQuantisedSineIsNotCalledClipped) {
  // round(127·sin)/127 holds its top code while 127·sin θ ≥ 126.5: 28 samples of 1000 a cycle
  // (|θ| ≤ acos(126.5/127) = 0.0888 rad), which the old rule (3 equal samples at the extreme)
  // reported as clipped. The rule's allowance is 3·n_q + 2 = 122 samples
  // (n_q = (1000/π)·acos(1 − 1/127) = 40.0), and the flank is a sine's: no clipping, no warning.
  const json j = inspect_json(file("eight_bit.csv", sine_csv(eight_bit)));
  ASSERT_TRUE(j.contains("channels")) << j.dump();
  const json& c = j["channels"][0];
  EXPECT_NEAR(c["max"].get<double>(), kPeakA, 1e-12);
  EXPECT_EQ(c["clipped_share"].get<double>(), 0.0);
  EXPECT_EQ(c["clipped_max_crests"].get<long>(), 0);
  EXPECT_TRUE(c["full_scale_max"].is_null());  // text has no integer full scale
  EXPECT_TRUE(clip_warnings(j).empty()) << j["warnings"].dump();
}

TEST_F(Cli, SineClippedAtEightyPercentIsCalledClipped) {
  // Cut at +0.8 of the crest: flat for (π − 2·asin 0.8)/2π = 20.48 % of each cycle (elementary
  // trigonometry; ±2 samples a cycle by sampling), 205 samples against the allowance of 128–181
  // (3·n_q + 2 with q one or two codes, A = 0.9), entered by a flank still rising. Every crest is
  // clipped, the troughs are not, and the warning names the channel and the side.
  const json j = inspect_json(
      file("clipped.csv", sine_csv([](double v) { return eight_bit(std::min(v, 0.8)); })));
  ASSERT_TRUE(j.contains("channels")) << j.dump();
  const json& c = j["channels"][0];
  EXPECT_EQ(c["clipped_max_crests"].get<long>(), kCycles);
  const double level = 101.5 / 127;  // 8-bit code 102 is reached from 101.5/127 on
  EXPECT_NEAR(c["clipped_max_share"].get<double>(), (M_PI - 2 * std::asin(level)) / (2 * M_PI),
              2 / kSpc);
  EXPECT_EQ(c["clipped_min_share"].get<double>(), 0.0);
  const std::vector<std::string> w = clip_warnings(j);
  ASSERT_EQ(w.size(), 1u) << j["warnings"].dump();
  EXPECT_NE(w[0].find("channel 1 'current'"), std::string::npos) << w[0];
  EXPECT_NE(w[0].find("maximum"), std::string::npos) << w[0];
  EXPECT_EQ(w[0].find("minimum"), std::string::npos) << w[0];

  // The text summary shows the share in its table and the warning below it.
  const RunResult r = run({"inspect", (dir_ / "clipped.csv").string()});
  ASSERT_EQ(r.status, 0) << r.err;
  EXPECT_NE(r.out.find("is clipped"), std::string::npos) << r.out;
}

TEST_F(Cli, SixteenBitWavOnItsFullScaleIsCalledClipped) {
  // A sine of 1.00001 full scale written as 16-bit PCM: the writer limits it to the top code
  // 32767 (read as 32767/32768) for |θ| ≤ acos(32766.5/32768.33) = 10.6 mrad, 3 or 4 samples
  // of 1000 a cycle, and to the bottom code −32768 (read as −1) for |θ| ≤ acos(32767.5/32768.33)
  // = 7.1 mrad. Runs that short are nothing the run rule calls clipped; on the integer full scale
  // they are the recorder's range reached, on both sides. With --scale 1=0.05 the full scale is
  // [−0.05, 32767/32768·0.05] A.
  const fs::path path = dir_ / "rail.wav";
  write_sine_sound(path, lopside::SoundSampleFormat::pcm16);
  const json j = inspect_json(path, {"--scale", "1=0.05", "--unit", "1=A"});
  ASSERT_TRUE(j.contains("channels")) << j.dump();
  const json& c = j["channels"][0];
  EXPECT_EQ(c["full_scale_max"].get<double>(), 32767.0 / 32768 * 0.05);
  EXPECT_EQ(c["full_scale_min"].get<double>(), -0.05);
  EXPECT_EQ(c["max"].get<double>(), c["full_scale_max"].get<double>());
  EXPECT_EQ(c["min"].get<double>(), -0.05);
  EXPECT_EQ(c["clipped_max_crests"].get<long>(), kCycles);
  EXPECT_EQ(c["clipped_min_crests"].get<long>(), kCycles);
  // At most 4 samples a crest on the top code, 3 on the bottom one (above): ≤ 7 of 1000.
  EXPECT_GT(c["clipped_share"].get<double>(), 0.0);
  EXPECT_LE(c["clipped_share"].get<double>(), 7 / kSpc);
  const std::vector<std::string> warned = clip_warnings(j);
  ASSERT_EQ(warned.size(), 1u) << j["warnings"].dump();
  EXPECT_NE(warned[0].find("channel 1"), std::string::npos) << warned[0];
  EXPECT_NE(warned[0].find("full scale"), std::string::npos) << warned[0];

  // The same sine as 32-bit float: no integer full scale and no flat run at a crest (no two
  // samples lie symmetric about it: (π/2 − 0.3)/2π·1000 = 202.26 is no half-integer), so no
  // clipping.
  const fs::path float_path = dir_ / "float.wav";
  write_sine_sound(float_path, lopside::SoundSampleFormat::float32);
  const json f = inspect_json(float_path, {"--scale", "1=0.05", "--unit", "1=A"});
  ASSERT_TRUE(f.contains("channels")) << f.dump();
  EXPECT_TRUE(f["channels"][0]["full_scale_max"].is_null());
  EXPECT_EQ(f["channels"][0]["clipped_share"].get<double>(), 0.0);
  EXPECT_TRUE(clip_warnings(f).empty()) << f["warnings"].dump();
}

}  // namespace
