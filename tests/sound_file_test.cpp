// Tests of the libsndfile reader (open_sound_file) and writer (SoundFileWriter): round trips
// through every container and sample format against the generator's exact values, hand-made
// files checked against the container specifications, and bad input.

#include <gtest/gtest.h>
#include <sndfile.h>
#include <unistd.h>

#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/sound_file_writer.hpp"
#include "synth/synth.hpp"

namespace fs = std::filesystem;
using lopside::InputError;
using lopside::ReaderOptions;
using lopside::SoundContainer;
using lopside::SoundSampleFormat;

namespace {

/// A directory of its own under the system temp dir, removed with everything in it.
class TempDir {
 public:
  TempDir() {
    static int counter = 0;
    path_ = fs::temp_directory_path() / ("lopside_sound_file_test_" + std::to_string(::getpid()) +
                                         "_" + std::to_string(counter++));
    fs::create_directories(path_);
  }
  ~TempDir() {
    std::error_code ignored;
    fs::remove_all(path_, ignored);
  }
  fs::path operator/(const std::string& name) const { return path_ / name; }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

// A 32 kHz electronic supply: current with a weaker negative lobe and a DC, voltage with its
// own positive share, sampled for 2 ms (64 cycles) at 1 MHz, or at 500 kHz for FLAC, which
// holds rates up to 655350 Hz only.
lopside::synth::CaptureSpec supply_spec(double sample_rate_hz) {
  lopside::synth::CaptureSpec spec;
  spec.timebase.sample_rate_hz = sample_rate_hz;
  spec.timebase.duration_s = 2e-3;
  spec.timebase.start_frequency_hz = 32e3;
  spec.timebase.end_frequency_hz = 32e3;
  spec.timebase.start_phase_deg = 17.0;
  spec.current.peak = 0.021;
  spec.current.dc = 0.0015;
  spec.current.negative_ratio = 0.93;
  spec.voltage = lopside::synth::Waveform{};
  spec.voltage->peak = 1450.0;
  spec.voltage->positive_share = 0.52;
  return spec;
}

constexpr double full_scale_a = 0.05;
constexpr double full_scale_v = 2000.0;

ReaderOptions scaled_options() {
  ReaderOptions o;
  o.scales["1"] = full_scale_a;
  o.scales["ch2"] = full_scale_v;  // by name: the reader calls its channels ch1, ch2, …
  return o;
}

struct RoundTrip {
  SoundContainer container;
  SoundSampleFormat format;
  const char* format_id;  // CaptureInfo::format expected
  const char* detail;     // part of CaptureInfo::detail expected
  const char* extension;
  double sample_rate_hz = 1e6;
};

// Largest allowed |read − exact| for a normalised value x (full scale 1).
double tolerance(SoundSampleFormat f, double x) {
  switch (f) {
    // RIFF WAVE / FLAC b-bit PCM: code k is k / 2^(b−1) of full scale (libsndfile's read
    // normalisation); the writer rounds to the nearest code, so half a step.
    case SoundSampleFormat::pcm16:
      return 0.5 / 32768.0 + 1e-15;
    case SoundSampleFormat::pcm24:
      return 0.5 / 8388608.0 + 1e-15;
    case SoundSampleFormat::pcm32:
      return 0.5 / 2147483648.0 + 1e-15;
    // IEEE 754 binary32 round to nearest: relative error ≤ 2^−24 (unit roundoff).
    case SoundSampleFormat::float32:
      return std::abs(x) * std::ldexp(1.0, -24) + 1e-300;
    // binary64 storage is exact; the /full-scale and ×full-scale steps round twice: 2^−52.
    case SoundSampleFormat::float64:
      return std::abs(x) * std::ldexp(1.0, -52) + 1e-300;
  }
  return 0.0;
}

void check_round_trip(const RoundTrip& rt) {
  SCOPED_TRACE(std::string(rt.format_id) + " " + lopside::to_string(rt.format));
  TempDir dir;
  const fs::path path = dir / (std::string("supply.") + rt.extension);
  lopside::synth::Generator gen(supply_spec(rt.sample_rate_hz));
  lopside::synth::SoundFormat sf;
  sf.container = rt.container;
  sf.sample_format = rt.format;
  sf.current_full_scale_a = full_scale_a;
  sf.voltage_full_scale_v = full_scale_v;
  lopside::synth::write_sound(gen, sf, path);

  auto source = lopside::open_sound_file(path, scaled_options());
  const auto& info = source->info();
  EXPECT_EQ(info.format, rt.format_id);
  EXPECT_NE(info.detail.find(rt.detail), std::string::npos) << info.detail;
  EXPECT_NE(info.detail.find("2 channels"), std::string::npos) << info.detail;
  EXPECT_EQ(info.sample_rate_hz, rt.sample_rate_hz);
  const auto frames = static_cast<std::uint64_t>(2e-3 * rt.sample_rate_hz);  // 2 ms
  ASSERT_TRUE(info.frames.has_value());
  EXPECT_EQ(*info.frames, frames);
  ASSERT_EQ(info.channels.size(), 2u);
  EXPECT_EQ(info.channels[0].name, "ch1");
  EXPECT_EQ(info.channels[1].name, "ch2");
  EXPECT_EQ(info.channels[0].index, 1u);
  EXPECT_EQ(info.channels[1].index, 2u);
  EXPECT_TRUE(source->warnings().empty());  // both channels scaled

  lopside::SampleBlock block;
  std::uint64_t frame = 0;
  double worst_i = 0.0, worst_v = 0.0;
  while (const std::size_t n = source->read(block, 333)) {
    ASSERT_EQ(block.channels, 2u);
    for (std::size_t f = 0; f < n; ++f, ++frame) {
      const double t = gen.elapsed_s(frame);
      const double i_norm = gen.ideal_current_a(t) / full_scale_a;
      const double v_norm = gen.ideal_voltage_v(t) / full_scale_v;
      const double di = std::abs(block.value(f, 0) / full_scale_a - i_norm);
      const double dv = std::abs(block.value(f, 1) / full_scale_v - v_norm);
      ASSERT_LE(di, tolerance(rt.format, i_norm)) << "frame " << frame;
      ASSERT_LE(dv, tolerance(rt.format, v_norm)) << "frame " << frame;
      worst_i = std::max(worst_i, di);
      worst_v = std::max(worst_v, dv);
    }
  }
  EXPECT_EQ(frame, frames);
  // A quantising format must actually quantise: an error of at least a tenth of the allowed
  // one shows the check is not vacuous (values are not passed around unquantised).
  if (rt.format == SoundSampleFormat::pcm16) {
    EXPECT_GT(worst_i, 0.05 / 32768.0);
  }
  if (rt.format == SoundSampleFormat::float32) {
    EXPECT_GT(worst_v, 0.0);
  }
}

// Little-endian byte writer for hand-made headers.
struct Bytes {
  std::vector<unsigned char> b;
  void tag(const char* t) {
    for (int i = 0; i < 4; ++i) b.push_back(static_cast<unsigned char>(t[i]));
  }
  void le(std::uint64_t v, int n) {
    for (int i = 0; i < n; ++i) b.push_back(static_cast<unsigned char>((v >> (8 * i)) & 0xFF));
  }
  void be(std::uint64_t v, int n) {
    for (int i = n - 1; i >= 0; --i) b.push_back(static_cast<unsigned char>((v >> (8 * i)) & 0xFF));
  }
  void save(const fs::path& p) const {
    std::ofstream out(p, std::ios::binary);
    out.write(reinterpret_cast<const char*>(b.data()), static_cast<std::streamsize>(b.size()));
  }
};

// A canonical 44-byte-header PCM WAV (RIFF WAVE, Microsoft Multimedia Programming Interface
// 1.0: "RIFF" size "WAVE", "fmt " 16: tag 1, channels, rate, byte rate, block align, bits;
// "data" size). `data_size` may differ from the bytes given, to make damaged files.
Bytes pcm_wav(int channels, int bits, const std::vector<unsigned char>& data,
              std::uint64_t data_size) {
  const int block_align = channels * bits / 8;
  Bytes w;
  w.tag("RIFF");
  w.le(36 + data_size, 4);
  w.tag("WAVE");
  w.tag("fmt ");
  w.le(16, 4);
  w.le(1, 2);
  w.le(static_cast<std::uint64_t>(channels), 2);
  w.le(8000, 4);
  w.le(static_cast<std::uint64_t>(8000 * block_align), 4);
  w.le(static_cast<std::uint64_t>(block_align), 2);
  w.le(static_cast<std::uint64_t>(bits), 2);
  w.tag("data");
  w.le(data_size, 4);
  w.b.insert(w.b.end(), data.begin(), data.end());
  return w;
}

std::vector<unsigned char> le16(const std::vector<int>& codes) {
  Bytes b;
  for (int c : codes) b.le(static_cast<std::uint16_t>(static_cast<std::int16_t>(c)), 2);
  return b.b;
}

std::vector<double> read_all(lopside::SampleSource& source) {
  std::vector<double> out;
  lopside::SampleBlock block;
  while (source.read(block, 64) > 0) out.insert(out.end(), block.data.begin(), block.data.end());
  return out;
}

// Writes the supply spec (2000 frames at 1 MHz, 1000 at 500 kHz for FLAC; 2 channels) to
// `name` in `dir`; returns the path.
fs::path write_supply(const TempDir& dir, const std::string& name, SoundContainer c,
                      SoundSampleFormat f) {
  lopside::synth::Generator gen(supply_spec(c == SoundContainer::flac ? 500e3 : 1e6));
  lopside::synth::SoundFormat sf;
  sf.container = c;
  sf.sample_format = f;
  sf.current_full_scale_a = full_scale_a;
  sf.voltage_full_scale_v = full_scale_v;
  const fs::path path = dir / name;
  lopside::synth::write_sound(gen, sf, path);
  return path;
}

// Expects open_sound_file to throw InputError and returns it.
InputError open_error(const fs::path& path, const ReaderOptions& options = {}) {
  try {
    auto source = lopside::open_sound_file(path, options);
    read_all(*source);
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << path << ": no InputError";
  return InputError(path.string(), "none");
}

}  // namespace

TEST(SoundFileRoundTrip, Wav16) {
  check_round_trip({SoundContainer::wav, SoundSampleFormat::pcm16, "wav", "16-bit PCM", "wav"});
}
TEST(SoundFileRoundTrip, Wav24) {
  check_round_trip({SoundContainer::wav, SoundSampleFormat::pcm24, "wav", "24-bit PCM", "wav"});
}
TEST(SoundFileRoundTrip, Wav32) {
  check_round_trip({SoundContainer::wav, SoundSampleFormat::pcm32, "wav", "32-bit PCM", "wav"});
}
TEST(SoundFileRoundTrip, WavFloat32) {
  check_round_trip({SoundContainer::wav, SoundSampleFormat::float32, "wav", "32-bit float", "wav"});
}
TEST(SoundFileRoundTrip, WavFloat64) {
  check_round_trip({SoundContainer::wav, SoundSampleFormat::float64, "wav", "64-bit float", "wav"});
}
TEST(SoundFileRoundTrip, Rf64Pcm24) {
  check_round_trip({SoundContainer::rf64, SoundSampleFormat::pcm24, "rf64", "24-bit PCM", "rf64"});
}
TEST(SoundFileRoundTrip, Rf64Float32) {
  check_round_trip(
      {SoundContainer::rf64, SoundSampleFormat::float32, "rf64", "32-bit float", "rf64"});
}
TEST(SoundFileRoundTrip, W64Pcm16) {
  check_round_trip({SoundContainer::w64, SoundSampleFormat::pcm16, "w64", "16-bit PCM", "w64"});
}
TEST(SoundFileRoundTrip, W64Float64) {
  check_round_trip({SoundContainer::w64, SoundSampleFormat::float64, "w64", "64-bit float", "w64"});
}
TEST(SoundFileRoundTrip, Flac16) {
  check_round_trip(
      {SoundContainer::flac, SoundSampleFormat::pcm16, "flac", "16-bit", "flac", 500e3});
}
TEST(SoundFileRoundTrip, Flac24) {
  check_round_trip(
      {SoundContainer::flac, SoundSampleFormat::pcm24, "flac", "24-bit", "flac", 500e3});
}

TEST(SoundFileWriter, RoundsToNearestCodeAndClips) {
  TempDir dir;
  const fs::path path = dir / "codes.wav";
  // 16-bit PCM: step 2^−15. 3.4 steps rounds to 3; −1 is the lowest code; +1 and above clip to
  // the top code 32767/32768; −2 clips to −1 (two's complement range [−32768, 32767]).
  const double step = 1.0 / 32768.0;
  const std::vector<double> in{0.25, -1.0, 1.0, 1.5, -2.0, 3.4 * step, -3.6 * step};
  const std::vector<double> expected{0.25, -1.0,     32767 * step, 32767 * step,
                                     -1.0, 3 * step, -4 * step};
  lopside::SoundFileWriter w;
  w.open(path, SoundContainer::wav, SoundSampleFormat::pcm16, 1, 8000);
  w.write(in.data(), in.size());
  w.close();
  auto source = lopside::open_sound_file(path, {});
  EXPECT_EQ(read_all(*source), expected);
}

TEST(SoundFileWriter, FloatKeepsValuesBeyondFullScale) {
  TempDir dir;
  const fs::path path = dir / "float.wav";
  // binary32 holds 1.5 and −2 exactly: float formats do not clip.
  const std::vector<double> in{1.5, -2.0, 0.125};
  lopside::SoundFileWriter w;
  w.open(path, SoundContainer::wav, SoundSampleFormat::float32, 1, 8000);
  w.write(in.data(), in.size());
  w.close();
  auto source = lopside::open_sound_file(path, {});
  EXPECT_EQ(read_all(*source), in);
}

TEST(SoundFileWriter, RejectsBadSettingsAndLeavesNoFile) {
  TempDir dir;
  lopside::SoundFileWriter w;
  EXPECT_THROW(w.open(dir / "a.flac", SoundContainer::flac, SoundSampleFormat::float32, 1, 8000),
               InputError);
  EXPECT_THROW(w.open(dir / "b.wav", SoundContainer::wav, SoundSampleFormat::pcm16, 1, 8000.5),
               InputError);
  EXPECT_THROW(w.open(dir / "b.flac", SoundContainer::flac, SoundSampleFormat::pcm16, 1, 1e6),
               InputError);
  EXPECT_THROW(w.open(dir / "c.wav", SoundContainer::wav, SoundSampleFormat::pcm16, 0, 8000),
               InputError);
  EXPECT_THROW(
      w.open(dir / "no-such-dir" / "d.wav", SoundContainer::wav, SoundSampleFormat::pcm16, 1, 8000),
      lopside::OutputError);
  {
    lopside::SoundFileWriter abandoned;
    abandoned.open(dir / "e.wav", SoundContainer::wav, SoundSampleFormat::pcm16, 1, 8000);
    const double nan = std::nan("");
    EXPECT_THROW(abandoned.write(&nan, 1), InputError);
  }  // destroyed unclosed: nothing may remain, not even the temporary file
  EXPECT_TRUE(fs::is_empty(dir.path()));
}

TEST(SoundFileReader, HandMade16BitWavNormalisesByTwoToTheFifteen) {
  TempDir dir;
  const fs::path path = dir / "hand16.wav";
  // RIFF WAVE 16-bit PCM is signed two's complement; libsndfile reads code k as k/32768.
  const std::vector<int> codes{0, 16384, -32768, 32767, -1, 1};
  pcm_wav(1, 16, le16(codes), 12).save(path);
  ReaderOptions o;
  o.scales["1"] = 0.08;  // 80 mA full scale
  o.units["1"] = "A";
  auto source = lopside::open_sound_file(path, o);
  EXPECT_EQ(source->info().format, "wav");
  EXPECT_EQ(source->info().detail, "WAV, 16-bit PCM, 1 channel");
  EXPECT_EQ(source->info().sample_rate_hz, 8000.0);
  EXPECT_EQ(source->info().channels[0].unit, "A");
  EXPECT_EQ(source->info().channels[0].role, lopside::ChannelRole::current);
  const std::vector<double> got = read_all(*source);
  ASSERT_EQ(got.size(), codes.size());
  for (std::size_t i = 0; i < codes.size(); ++i) {
    EXPECT_DOUBLE_EQ(got[i], codes[i] / 32768.0 * 0.08) << i;
  }
}

// 16-bit PCM in WAV, RF64 and W64 is read from the data chunk directly, not through
// libsndfile's buffer (SoundFileSource::read_pcm16): every one of the 65 536 codes, in two
// channels with different scales, must read exactly as libsndfile reads it, and a file that
// loses its end while being read must still say where its data stops.
TEST(SoundFileReader, Direct16BitPathGivesLibsndfilesSamplesBitForBit) {
  TempDir dir;
  std::vector<double> frames;
  for (int code = -32768; code <= 32767; ++code) {
    frames.push_back(code / 32768.0);
    frames.push_back(-(code + 1) / 32768.0);
  }
  for (const auto& [container, name] :
       {std::pair{SoundContainer::wav, "a.wav"}, std::pair{SoundContainer::rf64, "b.rf64"},
        std::pair{SoundContainer::w64, "c.w64"}}) {
    SCOPED_TRACE(name);
    const fs::path path = dir / name;
    lopside::SoundFileWriter w;
    w.open(path, container, SoundSampleFormat::pcm16, 2, 8000);
    w.write(frames.data(), frames.size() / 2);
    w.close();
    // libsndfile's own reading, as the reference.
    SF_INFO sf{};
    SNDFILE* f = sf_open(path.c_str(), SFM_READ, &sf);
    ASSERT_NE(f, nullptr);
    std::vector<double> want(frames.size());
    ASSERT_EQ(sf_readf_double(f, want.data(), static_cast<sf_count_t>(frames.size() / 2)),
              static_cast<sf_count_t>(frames.size() / 2));
    sf_close(f);
    ReaderOptions o;
    o.scales["1"] = 0.3;
    o.scales["2"] = 7000;
    auto source = lopside::open_sound_file(path, o);
    const std::vector<double> got = read_all(*source);
    ASSERT_EQ(got.size(), want.size());
    std::size_t differ = 0;
    for (std::size_t k = 0; k < got.size(); ++k) {
      const double expected = want[k] * (k % 2 == 0 ? 0.3 : 7000.0);
      if (std::memcmp(&got[k], &expected, sizeof(double)) != 0) ++differ;
    }
    EXPECT_EQ(differ, 0u);
  }
  // Cut short after opening, through a frame (1000.5 frames gone): the whole frames are read
  // and the end of the data is named by its byte.
  const fs::path path = dir / "cut.wav";
  lopside::SoundFileWriter w;
  w.open(path, SoundContainer::wav, SoundSampleFormat::pcm16, 2, 8000);
  w.write(frames.data(), frames.size() / 2);
  w.close();
  auto source = lopside::open_sound_file(path, ReaderOptions{});
  fs::resize_file(path, fs::file_size(path) - 4 * 1000 - 2);
  try {
    read_all(*source);
    ADD_FAILURE() << "a capture cut short read without an error";
  } catch (const lopside::InputError& e) {
    EXPECT_NE(std::string(e.what()).find("the sample data ends after 64535 of the 65536 frames"),
              std::string::npos)
        << e.what();
  }
}

TEST(SoundFileReader, IntegerFormatsStateTheirFullScale) {
  // b-bit PCM holds codes −2^(b−1) … 2^(b−1) − 1, read as code/2^(b−1) (libsndfile's
  // normalisation, checked above): full scale is [−1, 1 − 2^−(b−1)] times --scale and --gain.
  // The writer puts ±1 on the end codes, so those samples read back exactly on the bounds.
  TempDir dir;
  const std::vector<double> in{1.0, -1.0, 0.25};
  struct Case {
    SoundContainer container;
    SoundSampleFormat format;
    const char* name;
    double top;  // 1 − 2^−(b−1)
  };
  for (const Case& c :
       {Case{SoundContainer::wav, SoundSampleFormat::pcm16, "a.wav", 32767.0 / 32768},
        Case{SoundContainer::wav, SoundSampleFormat::pcm24, "b.wav", 8388607.0 / 8388608},
        Case{SoundContainer::wav, SoundSampleFormat::pcm32, "c.wav", 2147483647.0 / 2147483648},
        Case{SoundContainer::flac, SoundSampleFormat::pcm16, "d.flac", 32767.0 / 32768}}) {
    SCOPED_TRACE(c.name);
    const fs::path path = dir / c.name;
    lopside::SoundFileWriter w;
    w.open(path, c.container, c.format, 1, 8000);
    w.write(in.data(), in.size());
    w.close();
    ReaderOptions o;
    o.scales["1"] = 0.08;  // 80 mA full scale
    auto source = lopside::open_sound_file(path, o);
    const lopside::ChannelInfo& ch = source->info().channels[0];
    ASSERT_TRUE(ch.full_scale_high.has_value());
    ASSERT_TRUE(ch.full_scale_low.has_value());
    EXPECT_EQ(*ch.full_scale_high, c.top * 0.08);
    EXPECT_EQ(*ch.full_scale_low, -0.08);
    const std::vector<double> got = read_all(*source);
    ASSERT_EQ(got.size(), 3u);
    EXPECT_EQ(got[0], *ch.full_scale_high);
    EXPECT_EQ(got[1], *ch.full_scale_low);
  }
  // A negative gain turns the range over: code −32768 is now the highest value.
  {
    ReaderOptions o;
    o.scales["1"] = 0.08;
    o.gains["1"] = -2;
    auto source = lopside::open_sound_file(dir / "a.wav", o);
    const lopside::ChannelInfo& ch = source->info().channels[0];
    EXPECT_EQ(*ch.full_scale_high, 0.16);
    EXPECT_EQ(*ch.full_scale_low, -32767.0 / 32768 * 0.16);
    const std::vector<double> got = read_all(*source);
    EXPECT_EQ(got[0], *ch.full_scale_low);
    EXPECT_EQ(got[1], *ch.full_scale_high);
  }
  // Float samples have no integer full scale (they hold values beyond ±1, test above).
  const fs::path float_path = dir / "f.wav";
  lopside::SoundFileWriter w;
  w.open(float_path, SoundContainer::wav, SoundSampleFormat::float32, 1, 8000);
  w.write(in.data(), in.size());
  w.close();
  auto source = lopside::open_sound_file(float_path, {});
  EXPECT_FALSE(source->info().channels[0].full_scale_high.has_value());
  EXPECT_FALSE(source->info().channels[0].full_scale_low.has_value());
}

TEST(SoundFileReader, EightBitUnsignedWavFullScale) {
  // 8-bit WAV bytes 0…255 read as (u − 128)/128 (the test below): full scale [−1, 127/128].
  TempDir dir;
  const fs::path path = dir / "u8.wav";
  pcm_wav(1, 8, {255, 0, 128}, 3).save(path);
  auto source = lopside::open_sound_file(path, {});
  const lopside::ChannelInfo& ch = source->info().channels[0];
  ASSERT_TRUE(ch.full_scale_high.has_value());
  EXPECT_EQ(*ch.full_scale_high, 127.0 / 128);
  EXPECT_EQ(*ch.full_scale_low, -1.0);
  EXPECT_EQ(read_all(*source), (std::vector<double>{127.0 / 128, -1.0, 0.0}));
}

TEST(SoundFileReader, HandMade8BitWavIsUnsignedAroundOneTwentyEight) {
  TempDir dir;
  const fs::path path = dir / "hand8.wav";
  // RIFF WAVE: 8-bit PCM samples are unsigned, 128 is zero; normalised (k − 128)/128.
  pcm_wav(2, 8, {128, 255, 0, 192}, 4).save(path);
  auto source = lopside::open_sound_file(path, {});
  EXPECT_EQ(source->info().channels.size(), 2u);
  EXPECT_NE(source->info().detail.find("8-bit"), std::string::npos);
  EXPECT_EQ(read_all(*source), (std::vector<double>{0.0, 127.0 / 128.0, -1.0, 0.5}));
}

TEST(SoundFileReader, HandMadeAiffIsBigEndian) {
  TempDir dir;
  const fs::path path = dir / "hand.aiff";
  // AIFF 1.3: "FORM" size "AIFF"; "COMM" 18: channels(2) frames(4) bits(2) rate (80-bit IEEE
  // extended: 8000 = 1.953125 · 2^12 → exponent 0x400B, mantissa 0xFA00…); "SSND": offset,
  // block size, big-endian two's-complement samples.
  Bytes a;
  a.tag("FORM");
  a.be(4 + 26 + 8 + 8 + 4, 4);
  a.tag("AIFF");
  a.tag("COMM");
  a.be(18, 4);
  a.be(1, 2);
  a.be(2, 4);
  a.be(16, 2);
  a.be(0x400B, 2);
  a.be(0xFA00000000000000u, 8);
  a.tag("SSND");
  a.be(8 + 4, 4);
  a.be(0, 4);
  a.be(0, 4);
  a.be(0x4000, 2);  // +16384 → 0.5
  a.be(0x8000, 2);  // −32768 → −1
  a.save(path);
  auto source = lopside::open_sound_file(path, {});
  EXPECT_EQ(source->info().format, "aiff");
  EXPECT_EQ(source->info().sample_rate_hz, 8000.0);
  EXPECT_EQ(read_all(*source), (std::vector<double>{0.5, -1.0}));

  // The same file cut inside the SSND data: 2 of the 4 declared sample bytes present.
  a.b.resize(a.b.size() - 2);
  a.save(path);
  const InputError e = open_error(path);
  ASSERT_TRUE(e.where().byte_offset.has_value());
  EXPECT_EQ(*e.where().byte_offset, a.b.size());
}

TEST(SoundFileReader, ScaleGainUnitAndWarnings) {
  TempDir dir;
  const fs::path path = dir / "s.wav";
  lopside::SoundFileWriter w;
  w.open(path, SoundContainer::wav, SoundSampleFormat::pcm24, 2, 48000);
  const std::vector<double> in{0.5, -0.25, -0.125, 0.75};
  w.write(in.data(), 2);
  w.close();

  // No --scale: fractions of full scale, unit unknown, and a warning that says so.
  {
    auto source = lopside::open_sound_file(path, {});
    EXPECT_EQ(read_all(*source), in);
    EXPECT_EQ(source->info().channels[0].unit, "");
    ASSERT_EQ(source->warnings().size(), 1u);
    EXPECT_NE(source->warnings()[0].find("full scale"), std::string::npos);
  }
  // --scale 1=50 --unit 1=mA → 50 mA full scale; --scale 2=3000 --gain 2=2 --unit 2=V.
  {
    ReaderOptions o;
    o.scales["1"] = 50;
    o.units["1"] = "mA";
    o.scales["2"] = 3000;
    o.gains["ch2"] = 2;
    o.units["2"] = "V";
    auto source = lopside::open_sound_file(path, o);
    const std::vector<double> got = read_all(*source);
    ASSERT_EQ(got.size(), 4u);
    EXPECT_DOUBLE_EQ(got[0], 0.5 * 50e-3);
    EXPECT_DOUBLE_EQ(got[1], -0.25 * 3000 * 2);
    EXPECT_DOUBLE_EQ(got[2], -0.125 * 50e-3);
    EXPECT_DOUBLE_EQ(got[3], 0.75 * 3000 * 2);
    EXPECT_EQ(source->info().channels[0].unit, "A");
    EXPECT_EQ(source->info().channels[1].unit, "V");
    EXPECT_EQ(source->info().channels[0].role, lopside::ChannelRole::current);
    EXPECT_EQ(source->info().channels[1].role, lopside::ChannelRole::voltage);
  }
  // Only channel 2 scaled: the warning names channel 1 alone.
  {
    ReaderOptions o;
    o.scales["2"] = 1.0;
    auto source = lopside::open_sound_file(path, o);
    ASSERT_EQ(source->warnings().size(), 1u);
    EXPECT_NE(source->warnings()[0].find("'ch1'"), std::string::npos);
    EXPECT_EQ(source->warnings()[0].find("'ch2'"), std::string::npos);
  }
  ReaderOptions no_channel;
  no_channel.scales["3"] = 1.0;
  EXPECT_THROW(lopside::open_sound_file(path, no_channel), InputError);
  ReaderOptions zero;
  zero.scales["1"] = 0.0;
  EXPECT_THROW(lopside::open_sound_file(path, zero), InputError);
  ReaderOptions twice;
  twice.scales["1"] = 1.0;
  twice.scales["ch1"] = 2.0;
  EXPECT_THROW(lopside::open_sound_file(path, twice), InputError);
}

// Truncation: libsndfile 1.2.0 silently shortens SF_INFO.frames when a WAV-family file ends
// inside its data chunk; the reader must refuse instead and say where the data ends.
void expect_truncation_caught(SoundContainer c, SoundSampleFormat f, const char* ext,
                              std::uint64_t declared_bytes) {
  SCOPED_TRACE(ext);
  TempDir dir;
  const fs::path path = write_supply(dir, std::string("cut.") + ext, c, f);
  const std::uint64_t full = fs::file_size(path);
  const std::uint64_t cut = full - 1001;  // not a whole frame: cut mid-sample
  fs::resize_file(path, cut);
  const InputError e = open_error(path);
  ASSERT_TRUE(e.where().byte_offset.has_value()) << e.what();
  EXPECT_EQ(*e.where().byte_offset, cut);
  EXPECT_NE(e.message().find("truncated"), std::string::npos) << e.what();
  EXPECT_NE(e.message().find(std::to_string(declared_bytes) + " bytes"), std::string::npos)
      << e.what();
  EXPECT_NE(e.message().find("1001 missing"), std::string::npos) << e.what();
}

TEST(SoundFileReader, TruncatedWavIsAnError) {
  // 2000 frames × 2 channels × 2 bytes (16-bit PCM block align, RIFF WAVE spec).
  expect_truncation_caught(SoundContainer::wav, SoundSampleFormat::pcm16, "wav", 8000);
}
TEST(SoundFileReader, TruncatedRf64IsAnError) {
  // RF64 (EBU Tech 3306): data size in the ds64 chunk; 2000 × 2 × 3 bytes.
  expect_truncation_caught(SoundContainer::rf64, SoundSampleFormat::pcm24, "rf64", 12000);
}
TEST(SoundFileReader, TruncatedW64IsAnError) {
  // Sony Wave64: 64-bit chunk sizes; 2000 × 2 × 4 bytes of float32.
  expect_truncation_caught(SoundContainer::w64, SoundSampleFormat::float32, "w64", 16000);
}
TEST(SoundFileReader, TruncatedHandMadeWavNamesTheOffset) {
  TempDir dir;
  const fs::path path = dir / "short.wav";
  // Header promises 10 samples (20 bytes) from byte 44; only 3 samples (6 bytes) follow.
  pcm_wav(1, 16, le16({1, 2, 3}), 20).save(path);
  const InputError e = open_error(path);
  ASSERT_TRUE(e.where().byte_offset.has_value());
  EXPECT_EQ(*e.where().byte_offset, 50u);
  EXPECT_NE(e.message().find("20 bytes from byte 44"), std::string::npos) << e.what();
  EXPECT_NE(e.message().find("14 missing"), std::string::npos) << e.what();
  EXPECT_NE(std::string(e.what()).find("byte 50"), std::string::npos) << e.what();
}

TEST(SoundFileReader, TruncatedFlacIsAnError) {
  TempDir dir;
  const fs::path path =
      write_supply(dir, "cut.flac", SoundContainer::flac, SoundSampleFormat::pcm16);
  fs::resize_file(path, fs::file_size(path) / 2);
  open_error(path);
}

TEST(SoundFileReader, CorruptFlacFramesAreAnError) {
  TempDir dir;
  const fs::path path =
      write_supply(dir, "bad.flac", SoundContainer::flac, SoundSampleFormat::pcm24);
  // Overwrite 64 bytes in the middle of the frame data: libsndfile's FLAC decoder loses sync
  // and (measured, 1.2.0) hands out zeros with a full count, flagging only sf_error.
  std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
  f.seekp(static_cast<std::streamoff>(fs::file_size(path) / 2));
  const std::string junk(64, '\xFF');
  f.write(junk.data(), static_cast<std::streamsize>(junk.size()));
  f.close();
  const InputError e = open_error(path);
  EXPECT_NE(e.message().find("cannot decode"), std::string::npos) << e.what();
}

TEST(SoundFileReader, FileShrinkingWhileReadIsAnErrorWithByteOffset) {
  TempDir dir;
  const fs::path path = dir / "shrink.wav";
  // 1000 frames of mono 16-bit, 2 bytes a frame after a 44-byte header.
  std::vector<int> codes(1000, 100);
  pcm_wav(1, 16, le16(codes), 2000).save(path);
  auto source = lopside::open_sound_file(path, {});
  lopside::SampleBlock block;
  ASSERT_EQ(source->read(block, 100), 100u);
  fs::resize_file(path, 44 + 2 * 300);  // the data now ends after frame 300
  try {
    while (source->read(block, 100) > 0) {
    }
    FAIL() << "no InputError";
  } catch (const InputError& e) {
    ASSERT_TRUE(e.where().byte_offset.has_value()) << e.what();
    EXPECT_EQ(*e.where().byte_offset, 44u + 2 * 300);
    EXPECT_NE(e.message().find("1000"), std::string::npos) << e.what();
  }
}

TEST(SoundFileReader, DamagedHeadersAreErrors) {
  TempDir dir;
  // Channel count 0 in the fmt chunk.
  const fs::path zero = dir / "zero.wav";
  pcm_wav(0, 16, le16({1, 2}), 4).save(zero);
  open_error(zero);
  // Cut inside the header, before the data chunk.
  const fs::path cut = dir / "cut.wav";
  Bytes w = pcm_wav(1, 16, le16({1, 2}), 4);
  w.b.resize(30);
  w.save(cut);
  EXPECT_EQ(open_error(cut).where().byte_offset, std::optional<std::uint64_t>(0));
  // "fmt " chunk renamed: no format description.
  const fs::path nofmt = dir / "nofmt.wav";
  w = pcm_wav(1, 16, le16({1, 2}), 4);
  w.b[12] = 'x';
  w.save(nofmt);
  open_error(nofmt);
}

TEST(SoundFileReader, NonSoundFilesAreErrors) {
  TempDir dir;
  const fs::path csv = dir / "capture.csv";
  std::ofstream(csv) << "time,current\n0,0.001\n";
  EXPECT_NE(open_error(csv).message().find("not a sound file"), std::string::npos);
  // libsndfile would guess a headerless µ-law stream from these extensions (measured, 1.2.0).
  for (const char* name : {"capture.au", "capture.snd", "capture.gsm", "capture.vox"}) {
    std::ofstream(dir / name) << "time,current\n0,0.001\n";
    EXPECT_NE(open_error(dir / name).message().find("not a sound file"), std::string::npos) << name;
  }
  const fs::path empty = dir / "empty.wav";
  std::ofstream{empty};
  EXPECT_NE(open_error(empty).message().find("empty"), std::string::npos);
  EXPECT_NE(open_error(dir / "missing.wav").message().find("no such file"), std::string::npos);
  const fs::path sub = dir / "folder.wav";
  fs::create_directory(sub);
  EXPECT_NE(open_error(sub).message().find("directory"), std::string::npos);
  // The error names the file as given.
  EXPECT_EQ(open_error(csv).path(), csv.string());
}
