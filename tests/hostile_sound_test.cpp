// Hostile sound files (issue 14, points 3 and 6). Every count a header claims (channels, frames,
// chunk sizes, the sample rate) is checked against the file and the stated limits before
// anything is sized by it, and every refusal is an InputError (exit status 2) naming the file
// and the byte offset of the field at fault; nothing loops, nothing ends in "internal error".
// The files are written here byte by byte after the container specifications; the byte
// offsets expected follow from their layouts, worked out next to each builder.

#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <limits>
#include <nlohmann/json.hpp>
#include <numbers>
#include <optional>
#include <string>
#include <vector>

#include "cli_support.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/pipeline.hpp"

namespace fs = std::filesystem;
using lopside::InputError;
using lopside::test::Cli;
using lopside::test::RunResult;
using lopside::test::shell_quote;
using lopside::test::slurp;
using nlohmann::json;

namespace {

/// 2^64 − k, for sizes that wrap.
constexpr std::uint64_t two_to_64_minus(std::uint64_t k) {
  return std::uint64_t{0} - k;
}

// ---------------------------------------------------------------------------------------------
// Byte builders.

struct Bytes {
  std::string b;
  Bytes& raw(const std::string& s) {
    b += s;
    return *this;
  }
  Bytes& le(std::uint64_t v, int n) {
    for (int i = 0; i < n; ++i) b += static_cast<char>((v >> (8 * i)) & 0xFF);
    return *this;
  }
  Bytes& be(std::uint64_t v, int n) {
    for (int i = n - 1; i >= 0; --i) b += static_cast<char>((v >> (8 * i)) & 0xFF);
    return *this;
  }
};

/// A RIFF chunk: 4-byte id, 32-bit little-endian size (the payload's unless given), payload, and
/// the pad byte that keeps chunks at even offsets.
std::string chunk(const std::string& id, const std::string& payload,
                  std::optional<std::uint64_t> size = std::nullopt) {
  Bytes c;
  c.raw(id).le(size.value_or(payload.size()), 4).raw(payload);
  if (payload.size() % 2) c.raw(std::string(1, '\0'));
  return c.b;
}

/// WAVEFORMATEX without its cbSize: tag, channels, rate, bytes per second, block align, bits.
std::string fmt_payload(std::uint64_t tag, std::uint64_t channels, std::uint64_t rate,
                        std::uint64_t align, std::uint64_t bits) {
  return Bytes{}
      .le(tag, 2)
      .le(channels, 2)
      .le(rate, 4)
      .le(rate * align, 4)
      .le(align, 2)
      .le(bits, 2)
      .b;
}

/// "RIFF" size "WAVE" and the chunks. With a 16-byte 'fmt ' chunk first, its fields lie at
/// tag 20, channels 22, rate 24, block align 32, bits 34, and the next chunk starts at 36.
std::string riff(const std::vector<std::string>& chunks) {
  std::string body = "WAVE";
  for (const auto& c : chunks) body += c;
  return Bytes{}.raw("RIFF").le(body.size(), 4).raw(body).b;
}

std::string pcm16(const std::vector<int>& codes) {
  Bytes b;
  for (const int c : codes) b.le(static_cast<std::uint16_t>(static_cast<std::int16_t>(c)), 2);
  return b.b;
}

/// Mono 16-bit PCM at 8 kHz holding `codes`: the 'data' chunk's size field at byte 40, its
/// samples from byte 44.
std::string mono16_wav(const std::vector<int>& codes, std::vector<std::string> before = {},
                       std::vector<std::string> after = {}) {
  std::vector<std::string> chunks{chunk("fmt ", fmt_payload(1, 1, 8000, 2, 16))};
  chunks.insert(chunks.end(), before.begin(), before.end());
  chunks.push_back(chunk("data", pcm16(codes)));
  chunks.insert(chunks.end(), after.begin(), after.end());
  return riff(chunks);
}

// Sony Wave64 GUIDs (riff, wave, 'fmt ', data) and one of no meaning.
const std::string kW64Riff("riff\x2E\x91\xCF\x11\xA5\xD6\x28\xDB\x04\xC1\x00\x00", 16);
const std::string kW64Wave("wave\xF3\xAC\xD3\x11\x8C\xD1\x00\xC0\x4F\x8E\xDB\x8A", 16);
const std::string kW64Fmt("fmt \xF3\xAC\xD3\x11\x8C\xD1\x00\xC0\x4F\x8E\xDB\x8A", 16);
const std::string kW64Data("data\xF3\xAC\xD3\x11\x8C\xD1\x00\xC0\x4F\x8E\xDB\x8A", 16);
const std::string kW64Other("junk\xF3\xAC\xD3\x11\x8C\xD1\x00\xC0\x4F\x8E\xDB\x8A", 16);

/// W64: GUID ids, 64-bit sizes that count the 24-byte header, 8-byte alignment. With a 16-byte
/// format the 'fmt ' chunk spans bytes 40–80 (channels at 66); then `extra`, then the data
/// chunk, whose size field lies 16 bytes after its start (96 without extra chunks) and whose
/// samples follow 24 bytes after it (104).
std::string w64(const std::string& fmt, const std::string& samples,
                std::optional<std::uint64_t> data_size = std::nullopt,
                const std::string& extra = "") {
  Bytes body;
  body.raw(kW64Wave).raw(kW64Fmt).le(24 + fmt.size(), 8).raw(fmt);
  while (body.b.size() % 8 != 0) body.raw(std::string(1, '\0'));
  body.raw(extra).raw(kW64Data).le(data_size.value_or(24 + samples.size()), 8).raw(samples);
  return Bytes{}.raw(kW64Riff).le(24 + body.b.size(), 8).raw(body.b).b;
}

/// RF64 (EBU Tech 3306): "RF64" −1 "WAVE", a 'ds64' chunk (bytes 12–48: RIFF size, data size
/// at byte 28, sample count, table length), 'fmt ' (48–72), then 'data' with size −1 and the
/// samples from byte 80.
std::string rf64(const std::string& fmt, const std::string& samples, std::uint64_t ds64_data,
                 const std::vector<std::string>& after_fmt = {}) {
  const std::string ds64 = Bytes{}.le(0, 8).le(ds64_data, 8).le(0, 8).le(0, 4).b;
  std::string body = "WAVE" + chunk("ds64", ds64) + chunk("fmt ", fmt);
  for (const auto& c : after_fmt) body += c;
  body += Bytes{}.raw("data").le(0xFFFFFFFFu, 4).raw(samples).b;
  return Bytes{}.raw("RF64").le(0xFFFFFFFFu, 4).raw(body).b;
}

/// IEEE 754 80-bit extended, big-endian: sign and 15-bit exponent biased by 16383, then a
/// 64-bit mantissa with an explicit integer bit. x = m · 2^e with m in [0.5, 1) is
/// (m · 2^64) · 2^(e − 1 − 63).
std::string ext80(double x) {
  if (x == 0) return std::string(10, '\0');
  int e = 0;
  const double m = std::frexp(std::fabs(x), &e);
  const auto mantissa = static_cast<std::uint64_t>(std::ldexp(m, 64));
  const std::uint64_t sign = x < 0 ? 0x8000 : 0;
  return Bytes{}.be(sign | static_cast<std::uint64_t>(e - 1 + 16383), 2).be(mantissa, 8).b;
}

/// AIFF (or AIFF-C with `compression`): 'COMM' at byte 12 (channels at 20, frames at 22,
/// bits at 26, rate at 28; AIFF-C's compression type at 38), then 'SSND' with its offset and
/// block size, the samples from byte 54 in AIFF.
std::string aiff(std::int64_t channels, std::uint64_t frames, std::int64_t bits,
                 const std::string& rate80, const std::string& samples,
                 std::optional<std::uint64_t> ssnd_size = std::nullopt,
                 const std::string& compression = "", std::uint64_t ssnd_offset = 0) {
  Bytes comm;
  comm.be(static_cast<std::uint64_t>(channels) & 0xFFFF, 2)
      .be(frames, 4)
      .be(static_cast<std::uint64_t>(bits) & 0xFFFF, 2)
      .raw(rate80);
  if (!compression.empty()) comm.raw(compression).raw(std::string(2, '\0'));  // empty name
  const std::string ssnd = Bytes{}.be(ssnd_offset, 4).be(0, 4).raw(samples).b;
  Bytes body;
  body.raw(compression.empty() ? "AIFF" : "AIFC");
  body.raw("COMM").be(comm.b.size(), 4).raw(comm.b);
  body.raw("SSND").be(ssnd_size.value_or(ssnd.size()), 4).raw(ssnd);
  return Bytes{}.raw("FORM").be(body.b.size(), 4).raw(body.b).b;
}

std::vector<double> read_all(lopside::SampleSource& s) {
  std::vector<double> out;
  lopside::SampleBlock block;
  while (s.read(block, lopside::kBlockFrames) > 0) {
    out.insert(out.end(), block.data.begin(), block.data.end());
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The fixture: a temporary folder and the built binary (cli_support.hpp).

class HostileSound : public Cli {
 protected:
  /// Expects the reader to refuse `name` with an InputError at byte `at` whose message holds
  /// `fragment`, naming the file.
  void expect_refused(const std::string& name, const std::string& bytes, std::uint64_t at,
                      const std::string& fragment) {
    SCOPED_TRACE(name);
    const fs::path p = file(name, bytes);
    try {
      auto source = lopside::open_sound_file(p, {});
      read_all(*source);
      ADD_FAILURE() << "no InputError";
    } catch (const InputError& e) {
      EXPECT_EQ(e.path(), p.string());
      ASSERT_TRUE(e.where().byte_offset.has_value()) << e.what();
      EXPECT_EQ(*e.where().byte_offset, at) << e.what();
      EXPECT_NE(e.message().find(fragment), std::string::npos) << e.what();
    }
  }

  /// The reader's samples of `name`, which it must accept.
  std::vector<double> accepted(const std::string& name, const std::string& bytes) {
    const fs::path p = file(name, bytes);
    try {
      auto source = lopside::open_sound_file(p, {});
      return read_all(*source);
    } catch (const InputError& e) {
      ADD_FAILURE() << name << " refused: " << e.what();
    }
    return {};
  }

  /// `lopside ARGS` under `timeout 20`: a loop shows as status 124, not as a test that never
  /// ends.
  RunResult run_limited(const std::vector<std::string>& args) {
    std::vector<std::string> all{"20", LOPSIDE_BINARY};
    all.insert(all.end(), args.begin(), args.end());
    return run(all, "timeout");
  }

  /// Status 2 with `lopside: NAME: byte AT:` on standard error.
  static void expect_exit_2_at(const RunResult& r, const std::string& shown, std::uint64_t at) {
    EXPECT_EQ(r.status, 2) << r.err;
    const std::string where = "lopside: " + shown + ": byte " + std::to_string(at) + ":";
    EXPECT_NE(r.err.find(where), std::string::npos) << "expected '" << where << "' in\n" << r.err;
    EXPECT_EQ(r.err.find("internal error"), std::string::npos) << r.err;
  }
};

// ---------------------------------------------------------------------------------------------
// 1. Claimed counts against limits and the file; memory bounded whatever the channel count.

TEST_F(HostileSound, ManyChannelsAreReadInBlocksOfAtMostTwoToTheTwentySamples) {
  // 1024 channels of 16-bit PCM, 2100 frames (4.3 MB): code (31 f + 7 c) mod 65536, read as
  // code / 32768 after the two's-complement wrap (libsndfile's normalisation of 16-bit PCM).
  constexpr std::uint64_t kChannels = 1024, kFrames = 2100;
  Bytes samples;
  for (std::uint64_t f = 0; f < kFrames; ++f) {
    for (std::uint64_t c = 0; c < kChannels; ++c) samples.le((31 * f + 7 * c) % 65536, 2);
  }
  const fs::path p =
      file("wide.wav", riff({chunk("fmt ", fmt_payload(1, kChannels, 48000, 2 * kChannels, 16)),
                             chunk("data", samples.b)}));
  auto source = lopside::open_sound_file(p, {});
  ASSERT_EQ(source->info().channels.size(), kChannels);
  lopside::SampleBlock block;
  std::uint64_t frame = 0;
  std::uint64_t wrong = 0;
  while (const std::size_t got = source->read(block, lopside::kBlockFrames)) {
    // At most 2^20 samples a block: 1024 frames of 1024 channels (8 MiB of doubles).
    EXPECT_LE(got, 1024u);
    EXPECT_LE(block.data.capacity(), std::size_t{1} << 20);
    for (std::size_t f = 0; f < got; ++f, ++frame) {
      for (std::size_t c = 0; c < kChannels; ++c) {
        const auto code =
            static_cast<std::int16_t>(static_cast<std::uint16_t>((31 * frame + 7 * c) % 65536));
        if (block.value(f, c) != code / 32768.0) ++wrong;  // exact: k / 2^15 is a double
      }
    }
  }
  EXPECT_EQ(frame, kFrames);
  EXPECT_EQ(wrong, 0u);
}

TEST_F(HostileSound, ASmallFileWithManyChannelsAllocatesOnlyWhatItHolds) {
  // The file of issue 14: 1024 channels of 16-bit PCM in 131000 data bytes, 63 whole frames;
  // before, the first read sized its block for 65536 frames × 1024 channels (512 MiB).
  const fs::path p = file("ch1024.wav", riff({chunk("fmt ", fmt_payload(1, 1024, 48000, 2048, 16)),
                                              chunk("data", std::string(131000, '\0'))}));
  auto source = lopside::open_sound_file(p, {});
  ASSERT_TRUE(source->info().frames.has_value());
  EXPECT_EQ(*source->info().frames, 63u);  // ⌊131000 / 2048⌋
  lopside::SampleBlock block;
  EXPECT_EQ(source->read(block, lopside::kBlockFrames), 63u);
  EXPECT_LE(block.data.capacity(), std::size_t{63} * 1024);
  EXPECT_EQ(source->read(block, lopside::kBlockFrames), 0u);
}

TEST_F(HostileSound, ChannelCountsOutsideOneTo1024AreRefusedAtTheirField) {
  const std::string two = pcm16({1, 2});
  expect_refused("zero.wav",
                 riff({chunk("fmt ", fmt_payload(1, 0, 8000, 2, 16)), chunk("data", two)}), 22,
                 "gives 0 channels; expected 1 to 1024");
  expect_refused("c1025.wav",
                 riff({chunk("fmt ", fmt_payload(1, 1025, 8000, 2050, 16)), chunk("data", two)}),
                 22, "gives 1025 channels; expected 1 to 1024");
  expect_refused("c65535.wav",
                 riff({chunk("fmt ", fmt_payload(1, 65535, 8000, 65534, 16)), chunk("data", two)}),
                 22, "gives 65535 channels");
  expect_refused("zero.aiff", aiff(0, 1, 16, ext80(8000), two), 20, "gives 0 channels");
  expect_refused("negative.aiff", aiff(-3, 1, 16, ext80(8000), two), 20, "gives -3 channels");
  expect_refused("c5000.aiff", aiff(5000, 1, 16, ext80(8000), std::string(10000, '\0')), 20,
                 "gives 5000 channels");
  expect_refused("c2000.w64", w64(fmt_payload(1, 2000, 8000, 4000, 16), std::string(4000, '\0')),
                 66, "gives 2000 channels");
}

TEST_F(HostileSound, DataOfLessThanOneFrameIsRefusedAtItsSize) {
  // 1024 channels of 64-bit float make 8192-byte frames; 400 bytes hold none.
  expect_refused("wide.wav",
                 riff({chunk("fmt ", fmt_payload(3, 1024, 8000, 8192, 64)),
                       chunk("data", std::string(400, '\0'))}),
                 40, "declares 400 bytes of samples, less than one frame (8192 bytes");
  expect_refused("empty.wav", mono16_wav({}), 40, "declares 0 bytes of samples");
  // One byte of a 2-byte frame (and its pad byte, which libsndfile counted as a frame).
  expect_refused("odd.wav",
                 riff({chunk("fmt ", fmt_payload(1, 1, 8000, 2, 16)), chunk("data", "x")}), 40,
                 "declares 1 bytes of samples");
  // AIFF: 3 channels of 16 bits, 4 bytes of samples.
  expect_refused("short.aiff", aiff(3, 0, 16, ext80(8000), pcm16({1, 2})), 42,
                 "declares 4 bytes of samples, less than one frame (6 bytes");
}

// ---------------------------------------------------------------------------------------------
// 2. Sizes that wrap past 2^64 (or 2^32) when added to their offset.

TEST_F(HostileSound, W64DataSizeThatWrapsIsATruncatedFile) {
  // Data size 2^64 − 8: 2^64 − 32 bytes of samples from byte 104, an end past 2^64.
  const std::string bytes =
      w64(fmt_payload(1, 1, 8000, 2, 16), pcm16({1, 2, 3, 4}), two_to_64_minus(8));
  expect_refused("wrap.w64", bytes, bytes.size(),
                 "promises 18446744073709551584 bytes from byte 104 (to byte "
                 "18446744073709551688); 8 bytes present");
  // Size 2^64 − 1: the same, one byte further.
  const std::string ones = w64(fmt_payload(1, 1, 8000, 2, 16), pcm16({1, 2, 3, 4}),
                               std::numeric_limits<std::uint64_t>::max());
  expect_refused("ones.w64", ones, ones.size(), "promises 18446744073709551591 bytes");
}

TEST_F(HostileSound, W64ChunkBeforeTheDataThatWrapsIsRefused) {
  // A chunk of no meaning, 2^64 − 8 bytes long, between 'fmt ' and the data.
  const std::string junk = Bytes{}.raw(kW64Other).le(two_to_64_minus(8), 8).b;
  const std::string bytes =
      w64(fmt_payload(1, 1, 8000, 2, 16), pcm16({1, 2, 3, 4}), std::nullopt, junk);
  expect_refused("junk.w64", bytes, 0,
                 "the chunk at byte 80 declares 18446744073709551608 bytes, but the file ends");
}

TEST_F(HostileSound, Rf64DataSizeThatWrapsIsATruncatedFile) {
  const std::string bytes =
      rf64(fmt_payload(1, 1, 8000, 2, 16), pcm16({1, 2, 3, 4}), two_to_64_minus(16));
  expect_refused("wrap.rf64", bytes, bytes.size(),
                 "the 'ds64' chunk promises 18446744073709551600 bytes from byte 80 (to byte "
                 "18446744073709551680)");
}

TEST_F(HostileSound, ThirtyTwoBitSizesNearTheirLimitAreTruncatedFiles) {
  const std::string wav = riff(
      {chunk("fmt ", fmt_payload(1, 1, 8000, 2, 16)), chunk("data", pcm16({1, 2}), 0xFFFFFFF0u)});
  expect_refused("wrap.wav", wav, wav.size(),
                 "the 'data' chunk promises 4294967280 bytes from byte 44 (to byte 4294967324)");
  // AIFF: SSND size 2^32 − 8, less its 8-byte offset and block size.
  const std::string a = aiff(1, 2, 16, ext80(8000), pcm16({1, 2}), 0xFFFFFFF8u);
  expect_refused("wrap.aiff", a, a.size(),
                 "the 'SSND' chunk promises 4294967280 bytes from byte 54");
}

// ---------------------------------------------------------------------------------------------
// 3. Sample rates: AIFF's 80-bit rate read here, and every rate within 1 Hz … 100 GHz.

TEST_F(HostileSound, AiffRatesOutsideTheRangeAreRefusedAtTheRateField) {
  const std::string s = pcm16({1, 2});
  expect_refused("r0.aiff", aiff(1, 2, 16, ext80(0), s), 28, "a sample rate of 0 Hz; expected");
  expect_refused("rhalf.aiff", aiff(1, 2, 16, ext80(0.5), s), 28, "a sample rate of 0.5 Hz");
  expect_refused("r1e12.aiff", aiff(1, 2, 16, ext80(1e12), s), 28,
                 "a sample rate of 1e+12 Hz; expected a sample rate from 1 Hz to 100 GHz");
  expect_refused("rneg.aiff", aiff(1, 2, 16, ext80(-8000), s), 28, "a sample rate of -8000 Hz");
  const std::string nan = Bytes{}.be(0x7FFF, 2).be(0xC000000000000000u, 8).b;
  expect_refused("rnan.aiff", aiff(1, 2, 16, nan, s), 28, "not a number");
  const std::string inf = Bytes{}.be(0x7FFF, 2).be(0x8000000000000000u, 8).b;
  expect_refused("rinf.aiff", aiff(1, 2, 16, inf, s), 28, "not a number");
}

TEST_F(HostileSound, AiffRatesLibsndfileWouldMisreadAreRefused) {
  const std::string s = pcm16({1, 2});
  // libsndfile 1.2.0 reads every rate from 2^30 Hz up as 800 MHz.
  expect_refused("r2p30.aiff", aiff(1, 2, 16, ext80(1073741824.0), s), 28,
                 "a sample rate of 1073741824 Hz, which libsndfile reads as 800000000 Hz");
  expect_refused("rfrac.aiff", aiff(1, 2, 16, ext80(44100.5), s), 28,
                 "44100.5 Hz, which libsndfile reads as 44100 Hz");
}

TEST_F(HostileSound, AiffRatesLibsndfileReadsExactlyAreKept) {
  for (const double rate : {1.0, 8000.0, 1073741823.0}) {
    // Big-endian 16-bit codes 0x4000 and 0x8000: +16384 and −32768, read as 0.5 and −1.
    const fs::path p =
        file("ok.aiff", aiff(1, 2, 16, ext80(rate), Bytes{}.be(0x4000, 2).be(0x8000, 2).b));
    auto source = lopside::open_sound_file(p, {});
    EXPECT_EQ(source->info().sample_rate_hz, rate);
    EXPECT_EQ(read_all(*source), (std::vector<double>{0.5, -1.0}));
  }
}

TEST_F(HostileSound, WavRateZeroIsRefusedAtItsField) {
  expect_refused("r0.wav",
                 riff({chunk("fmt ", fmt_payload(1, 1, 0, 2, 16)), chunk("data", pcm16({1}))}), 24,
                 "a sample rate of 0 Hz");
}

TEST_F(HostileSound, TheCommandsRefuseBadRatesWithStatusTwo) {
  const fs::path r0 = file("rate0.aiff", aiff(1, 1000, 16, ext80(0), std::string(2000, '\0')));
  const fs::path big =
      file("rate1e12.aiff", aiff(1, 1000, 16, ext80(1e12), std::string(2000, '\0')));
  for (const fs::path& p : {r0, big}) {
    expect_exit_2_at(run({"inspect", p.string()}), p.string(), 28);
    expect_exit_2_at(run({"measure", p.string(), "--current", "1"}), p.string(), 28);
  }
}

// ---------------------------------------------------------------------------------------------
// 4. NaN and infinity in float samples: inspect refuses them at their frame, measure leaves
// the cycles they reach out and says so, swap and lot measure on; never status 1.

// 50 Hz at 10 kHz (200 samples a cycle) for 8 s: 80000 frames, past inspect's first block of
// 65536. The current is 20 mA·cos plus 0.5 mA, so rising crossings lie near frames 150 + 200k:
// frame 0 and frame 79999 fall in the partial cycles at either end, frame 40000 on a crest
// in the middle of a whole cycle.
constexpr std::uint64_t kRate = 10000, kFrames = 80000;
double current_a(std::uint64_t n, double dc_a) {
  return 0.02 * std::cos(2 * std::numbers::pi * 50.0 * static_cast<double>(n) / kRate) + dc_a;
}

enum class Container { wav, w64, rf64, aifc };

// A mono float capture with `bad` at frame `at` (none if at ≥ kFrames).
std::string float_capture(Container c, int bits, std::uint64_t at, double bad, double dc_a = 5e-4) {
  Bytes samples;
  for (std::uint64_t n = 0; n < kFrames; ++n) {
    const double x = n == at ? bad : current_a(n, dc_a);
    std::uint64_t word = 0;
    if (bits == 32) {
      const float f = static_cast<float>(x);
      std::uint32_t w32 = 0;
      std::memcpy(&w32, &f, 4);
      word = w32;
    } else {
      std::memcpy(&word, &x, 8);
    }
    if (c == Container::aifc) {
      samples.be(word, bits / 8);
    } else {
      samples.le(word, bits / 8);
    }
  }
  const auto bytes = static_cast<std::uint64_t>(bits / 8);
  const std::string fmt = fmt_payload(3, 1, kRate, bytes, static_cast<std::uint64_t>(bits));
  switch (c) {
    case Container::wav:
      return riff({chunk("fmt ", fmt), chunk("data", samples.b)});
    case Container::w64:
      return w64(fmt, samples.b);
    case Container::rf64:
      return rf64(fmt, samples.b, samples.b.size());
    case Container::aifc:
      return aiff(1, kFrames, bits, ext80(kRate), samples.b, std::nullopt,
                  bits == 32 ? "fl32" : "fl64");
  }
  return {};
}

struct FloatCase {
  Container container;
  int bits;
  const char* name;
};
const FloatCase kFloatCases[] = {
    {Container::wav, 32, "f32.wav"},   {Container::wav, 64, "f64.wav"},
    {Container::w64, 32, "f32.w64"},   {Container::rf64, 64, "f64.rf64"},
    {Container::aifc, 32, "f32.aifc"}, {Container::aifc, 64, "f64.aifc"},
};

TEST_F(HostileSound, TheReaderHandsNonFiniteSamplesOnAsTheyAre) {
  for (const FloatCase& fc : kFloatCases) {
    SCOPED_TRACE(fc.name);
    const fs::path p = file(fc.name, float_capture(fc.container, fc.bits, 40000, NAN));
    auto source = lopside::open_sound_file(p, {});
    const std::vector<double> v = read_all(*source);
    ASSERT_EQ(v.size(), kFrames);
    EXPECT_TRUE(std::isnan(v[40000]));
    EXPECT_TRUE(std::isfinite(v[39999]) && std::isfinite(v[40001]));
  }
}

TEST_F(HostileSound, InspectRefusesNonFiniteSamplesAtTheirFrame) {
  const double inf = std::numeric_limits<double>::infinity();
  struct Bad {
    std::uint64_t at;
    double value;
  };
  // First frame, a crest mid-file, the last frame (in inspect's second block).
  const Bad bads[] = {{0, NAN}, {40000, inf}, {kFrames - 1, -inf}, {kFrames - 1, NAN}};
  for (const FloatCase& fc : kFloatCases) {
    for (const Bad& b : bads) {
      const std::string name = std::to_string(b.at) + "_" + fc.name;
      SCOPED_TRACE(name);
      const fs::path p = file(name, float_capture(fc.container, fc.bits, b.at, b.value));
      const RunResult r = run({"inspect", p.string()});
      EXPECT_EQ(r.status, 2) << r.err;
      // Frames are counted from 1 in the message.
      const std::string where =
          "lopside: " + p.string() + ": frame " + std::to_string(b.at + 1) + " (t = ";
      EXPECT_NE(r.err.find(where), std::string::npos) << r.err;
      EXPECT_NE(r.err.find("channel 1: the sample is not finite"), std::string::npos) << r.err;
    }
  }
}

TEST_F(HostileSound, MeasureLeavesOutTheCyclesNonFiniteSamplesReach) {
  // A NaN on the crest of a whole cycle leaves that one cycle out; one in the partial cycles
  // at either end leaves none out (those are not measured); each is one non-finite sample.
  struct Bad {
    std::uint64_t at;
    double value;
    int cycles_left_out;
  };
  const Bad bads[] = {{0, NAN, 0}, {40000, NAN, 1}, {kFrames - 1, NAN, 0}};
  for (const FloatCase& fc : kFloatCases) {
    for (const Bad& b : bads) {
      const std::string name = std::to_string(b.at) + "_" + fc.name;
      SCOPED_TRACE(name);
      const fs::path p = file(name, float_capture(fc.container, fc.bits, b.at, b.value));
      const RunResult r = run({"measure", p.string(), "--current", "1", "--scale", "1=1", "--unit",
                               "1=A", "--json", "-"});
      ASSERT_EQ(r.status, 0) << r.err;
      const json j = json::parse(r.out);
      EXPECT_EQ(j["not_finite_samples"], 1);
      EXPECT_EQ(j["left_out_cycles"]["not_finite"], b.cycles_left_out);
      // The cosine averages to zero over whole cycles, so the DC is the 0.5 mA added. 1e-8 A
      // allows for float32 rounding (2^-24 of 20 mA, 1.2e-9 A, a sample) and for cycle bounds
      // at interpolated crossings that cut the cosine slightly off whole periods.
      EXPECT_NEAR(j["dc_offset_a"]["value"].get<double>(), 5e-4, 1e-8);
    }
  }
}

TEST_F(HostileSound, SwapAndLotMeasureOnPastNonFiniteSamples) {
  // The supply's part of the DC reverses with the leads: +0.5 mA normal, −0.5 mA swapped.
  const fs::path normal = file("normal.wav", float_capture(Container::wav, 32, kFrames, 0, 5e-4));
  const fs::path swapped =
      file("swapped.w64", float_capture(Container::w64, 64, 40000, NAN, -5e-4));
  const RunResult s = run({"swap", normal.string(), swapped.string(), "--current", "1", "--scale",
                           "1=1", "--unit", "1=A", "--json", "-"});
  ASSERT_EQ(s.status, 0) << s.err;
  const json sj = json::parse(s.out);
  bool told = false;
  for (const auto& w : sj["warnings"]) {
    told = told || w.get<std::string>().find("swapped: 1 sample(s) are not finite") == 0;
  }
  EXPECT_TRUE(told) << sj["warnings"].dump();

  const fs::path limits = file("limits.toml",
                               "[lot]\ndecision = \"simple\"\n\n[limits.dc_offset_a]\n"
                               "min = -0.01\nmax = 0.01\n");
  const fs::path bad = file("unit2.rf64", float_capture(Container::rf64, 32, 40000, NAN));
  const RunResult l = run({"lot", normal.string(), bad.string(), "--limits", limits.string(),
                           "--current", "1", "--scale", "1=1", "--unit", "1=A", "--json", "-"});
  ASSERT_EQ(l.status, 0) << l.err;
  const json lj = json::parse(l.out);
  ASSERT_EQ(lj["units"].size(), 2u);
  for (const auto& u : lj["units"]) EXPECT_EQ(u["verdict"], "pass") << u.dump();
}

// ---------------------------------------------------------------------------------------------
// 5. LIST chunks that make libsndfile 1.2.0's sf_open loop forever, and LIST chunks as they
// really come, which must still be read.

// The trigger, found by generating small RIFF files with LIST chunks of every kind of odd size:
// in a LIST, an entry whose size is 2^32 − 8 (or 2^32 − 12) after "INFO" (or "adtl"). The
// file below is 59 bytes: RIFF header 12, 'fmt ' 24, then at byte 36 "LIST" 15 "INFO",
// "IXYZ" at byte 48, its size 0xFFFFFFF8 at byte 52, and 3 bytes (no pad byte: the file ends).
std::string list_spin_wav() {
  const std::string list = Bytes{}.raw("INFOIXYZ").le(0xFFFFFFF8u, 4).raw("abc").b;
  return riff({chunk("fmt ", fmt_payload(1, 1, 8000, 2, 16)),
               Bytes{}.raw("LIST").le(list.size(), 4).raw(list).b});
}

TEST_F(HostileSound, ListEntriesThatWouldLoopLibsndfileAreRefusedNotHung) {
  const std::string tiny = list_spin_wav();
  ASSERT_EQ(tiny.size(), 59u);
  const std::string info_data =
      mono16_wav({1, 2}, {chunk("LIST", Bytes{}.raw("INFOabcd").le(0xFFFFFFF4u, 4).b)});
  const std::string after_data =
      mono16_wav({1, 2}, {}, {chunk("LIST", Bytes{}.raw("adtlabcd").le(0xFFFFFFF8u, 4).b)});
  const std::string in_rf64 = rf64(fmt_payload(1, 1, 8000, 2, 16), pcm16({1, 2}), 4,
                                   {chunk("LIST", Bytes{}.raw("INFOabcd").le(0xFFFFFFF8u, 4).b)});
  struct Case {
    const char* name;
    const std::string* bytes;
    std::uint64_t at;
  };
  // The entry's size lies 16 bytes after 'LIST': at 36 + 16, after a 12-byte data chunk at
  // 48 + 16, and in RF64 (after 'ds64' and 'fmt ') at 72 + 16.
  const Case cases[] = {{"tiny.wav", &tiny, 52},
                        {"before.wav", &info_data, 52},
                        {"after.wav", &after_data, 64},
                        {"in.rf64", &in_rf64, 88}};
  for (const Case& c : cases) {
    SCOPED_TRACE(c.name);
    const fs::path p = file(c.name, *c.bytes);
    const RunResult r = run_limited({"inspect", p.string()});
    ASSERT_NE(r.status, 124) << "lopside still loops in sf_open";
    expect_exit_2_at(r, p.string(), c.at);
    EXPECT_NE(r.err.find("expected sub-chunks that fit inside their LIST chunk"), std::string::npos)
        << r.err;
  }
}

TEST_F(HostileSound, ListEntriesAsLibsndfileReadsThemAreChecked) {
  // A list type other than INFO/adtl is taken by libsndfile as an entry of its own, whose size
  // is the next 4 bytes: here the first entry's id, F8 FF FF FF, read as 2^32 − 8. By the RIFF
  // layout the LIST is sound (one 0-byte entry); by libsndfile's reading it loops forever.
  const std::string bytes = mono16_wav(
      {1, 2},
      {chunk("LIST", Bytes{}.raw("wavl").raw(std::string("\xF8\xFF\xFF\xFF", 4)).le(0, 4).b)});
  const fs::path p = file("wavl.wav", bytes);
  const RunResult r = run_limited({"measure", p.string(), "--current", "1"});
  ASSERT_NE(r.status, 124) << "lopside still loops in sf_open";
  expect_exit_2_at(r, p.string(), 48);
  EXPECT_NE(r.err.find("its reader would loop forever"), std::string::npos) << r.err;
}

TEST_F(HostileSound, ListChecksCoverStandardInputAndPipes) {
  // Standard input from a file reaches the reader as a descriptor (open_sound_file(int fd)),
  // a pipe as a spooled temporary file: both are checked before sf_open_fd.
  const fs::path p = file("spin.wav", list_spin_wav());
  const std::string bin = shell_quote(LOPSIDE_BINARY);
  for (const std::string& line :
       {"timeout 20 " + bin + " inspect - < " + shell_quote(p.string()),
        "cat " + shell_quote(p.string()) + " | timeout 20 " + bin + " inspect -"}) {
    SCOPED_TRACE(line);
    const RunResult r = shell(line);
    ASSERT_NE(r.status, 124) << "lopside still loops in sf_open_fd";
    expect_exit_2_at(r, "standard input", 52);
  }
}

TEST_F(HostileSound, ListChunksAsRecordersWriteThemAreRead) {
  const std::vector<double> expect{0.5, -0.25};
  const std::vector<int> codes{16384, -8192};
  // INFO entries of odd length with their pad byte (RIFF: padded to even, size without pad).
  const std::string info = Bytes{}
                               .raw("INFO")
                               .raw(chunk("ISFT", std::string("lopside-synth\0", 14)))
                               .raw(chunk("ICMT", std::string("bench 3, unit 0417\0", 19)))
                               .raw(chunk("ICRD", std::string("2026-05-01\0", 11)))
                               .b;
  EXPECT_EQ(accepted("info.wav", mono16_wav(codes, {chunk("LIST", info)})), expect);
  EXPECT_EQ(accepted("info_after.wav", mono16_wav(codes, {}, {chunk("LIST", info)})), expect);
  // The last entry's pad byte left out of the LIST's size (and out of the file).
  const std::string unpadded = Bytes{}.raw("INFO").raw("ICMT").le(5, 4).raw("hello").b;
  EXPECT_EQ(accepted("unpadded.wav", mono16_wav(codes, {chunk("LIST", unpadded)})), expect);
  // Cue labels (adtl: labl and note carry a cue id before their text).
  const std::string adtl = Bytes{}
                               .raw("adtl")
                               .raw(chunk("labl", Bytes{}.le(1, 4).raw(std::string("arc\0", 4)).b))
                               .raw(chunk("note", Bytes{}.le(1, 4).raw(std::string("ok\0", 3)).b))
                               .b;
  EXPECT_EQ(accepted("adtl.wav", mono16_wav(codes, {chunk("LIST", adtl)})), expect);
  // Unused LIST space filled with zeros by the recorder.
  EXPECT_EQ(
      accepted("zeros.wav", mono16_wav(codes, {chunk("LIST", "INFO" + std::string(36, '\0'))})),
      expect);
  // Exif (JEITA CP-3451 §5): a version and text entries.
  const std::string exif = Bytes{}
                               .raw("exif")
                               .raw(chunk("ever", "0220"))
                               .raw(chunk("etim", std::string("12:34:56.00\0", 12)))
                               .b;
  EXPECT_EQ(accepted("exif.wav", mono16_wav(codes, {chunk("LIST", exif)})), expect);
  // A LIST after the samples, cut short by the end of the file: the samples are whole.
  std::string cut = mono16_wav(codes, {}, {chunk("LIST", info)});
  cut.resize(cut.size() - 20);
  EXPECT_EQ(accepted("cut_list.wav", cut), expect);
  // A file cut inside its sample data keeps the truncation message.
  std::string short_data = mono16_wav({1, 2, 3, 4}, {chunk("LIST", info)});
  short_data.resize(short_data.size() - 3);
  expect_refused("cut_data.wav", short_data, short_data.size(), "truncated file");
}

// ---------------------------------------------------------------------------------------------
// 6. Every other malformed header: status 2 with the byte of the field at fault, never 1.

struct Malformed {
  const char* name;
  std::string bytes;
  std::uint64_t at;
  const char* fragment;
};

std::vector<Malformed> malformed_headers() {
  const std::string two = pcm16({1, 2});
  std::vector<Malformed> m;
  auto wav_fmt = [&](std::uint64_t tag, std::uint64_t ch, std::uint64_t align, std::uint64_t bits) {
    return riff({chunk("fmt ", fmt_payload(tag, ch, 8000, align, bits)), chunk("data", two)});
  };
  m.push_back({"ch0.wav", wav_fmt(1, 0, 2, 16), 22, "gives 0 channels"});
  m.push_back({"ch2000.wav", wav_fmt(1, 2000, 4000, 16), 22, "gives 2000 channels"});
  m.push_back({"tag.wav", wav_fmt(0x1234, 1, 2, 16), 20,
               "format tag 0x1234 (16 bits per sample, block align 2), an encoding libsndfile "
               "cannot read"});
  m.push_back({"bits0.wav", wav_fmt(1, 1, 2, 0), 34, "gives 0 bits per sample; expected 1 to 32"});
  m.push_back({"bits255.wav", wav_fmt(1, 1, 32, 255), 34, "gives 255 bits per sample"});
  m.push_back({"float16.wav", wav_fmt(3, 1, 2, 16), 34, "expected 32 or 64 for IEEE float"});
  m.push_back({"align0.wav", wav_fmt(1, 1, 0, 16), 32, "block align of 0"});
  m.push_back({"align3.wav", wav_fmt(1, 2, 3, 16), 32,
               "block align of 3 bytes, but 2 channels × 2 bytes per sample (16 bits) make 4"});
  m.push_back({"bits0.aiff", aiff(1, 1, 0, ext80(8000), two), 26, "gives 0 bits per sample"});
  m.push_back({"bits255.aiff", aiff(1, 1, 255, ext80(8000), two), 26, "gives 255 bits per sample"});
  m.push_back({"frames.aiff", aiff(1, 100000, 16, ext80(8000), two), 22,
               "claims 100000 frames (200000 bytes of samples), but the 'SSND' chunk holds 4 "
               "bytes (2 frames)"});
  m.push_back({"offset.aiff", aiff(1, 1, 16, ext80(8000), two, std::nullopt, "", 1000), 46,
               "puts its samples 1000 bytes after its header, past its own end"});
  // Chunks before the samples that claim more than the file holds: libsndfile cannot find the
  // data; the message names the chunk (at byte 0, the header as a whole, as for a file cut
  // inside its header).
  m.push_back(
      {"fmt.wav",
       riff({chunk("fmt ", fmt_payload(1, 1, 8000, 2, 16), 0x7FFFFFF0u), chunk("data", two)}), 0,
       "the 'fmt ' chunk at byte 12 declares 2147483632 bytes, but the file ends"});
  m.push_back({"list.wav", mono16_wav({1, 2}, {chunk("LIST", "INFO", 0x7FFFFFF0u)}), 0,
               "the 'LIST' chunk at byte 36 declares 2147483632 bytes"});
  return m;
}

TEST_F(HostileSound, MalformedHeadersAreRefusedAtTheirField) {
  for (const Malformed& m : malformed_headers()) expect_refused(m.name, m.bytes, m.at, m.fragment);
}

TEST_F(HostileSound, EveryCommandRefusesMalformedHeadersWithTheirPlace) {
  const fs::path good = file("good.wav", mono16_wav({1, 2, 3, 4}));
  const fs::path limits = file("limits.toml", "[limits.dc_offset_a]\nmin = -0.01\nmax = 0.01\n");
  for (const Malformed& m : malformed_headers()) {
    SCOPED_TRACE(m.name);
    const fs::path p = file(m.name, m.bytes);
    expect_exit_2_at(run({"inspect", p.string()}), p.string(), m.at);
    expect_exit_2_at(run({"measure", p.string(), "--current", "1"}), p.string(), m.at);
    expect_exit_2_at(run({"swap", p.string(), good.string(), "--current", "1"}), p.string(), m.at);
    // lot judges the others on: an unreadable capture is a unit not measured (status 4), its
    // reason the reader's message with the place.
    const RunResult r =
        run({"lot", p.string(), "--limits", limits.string(), "--current", "1", "--json", "-"});
    EXPECT_EQ(r.status, 4) << r.err;
    const json j = json::parse(r.out);
    ASSERT_EQ(j["units"].size(), 1u);
    EXPECT_EQ(j["units"][0]["verdict"], "not_measured");
    const std::string reason = j["units"][0]["reason"].get<std::string>();
    EXPECT_NE(reason.find("byte " + std::to_string(m.at) + ": "), std::string::npos) << reason;
  }
}

}  // namespace
