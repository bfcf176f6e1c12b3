// Input streams: the stream layers (input_stream.hpp) on strings, and `lopside measure` on
// standard input, FIFOs, process substitution, gzip/xz/zstd files and UTF-16 text, each compared
// with the same capture read as a plain file.
//
// Compressed test data are written here with the libraries themselves (zlib, liblzma, libzstd),
// so the tests need no compression programs; the decoders are checked against these encoders,
// which implement the same formats (RFC 1952, The .xz File Format 1.1.0, RFC 8878).
#include <fcntl.h>
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cstring>
#include <sstream>
#include <string>
#include <thread>

#include "cli_support.hpp"
#include "compress_support.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/input_stream.hpp"

namespace lopside::test {
namespace {

using lopside::test::gzip_bytes;
using lopside::test::xz_bytes;
using lopside::test::zstd_bytes;

// ---------------------------------------------------------------------------------------------
// Encoders for the test data.

std::string compress(Compression c, const std::string& in) {
  switch (c) {
    case Compression::gzip:
      return gzip_bytes(in);
    case Compression::xz:
      return xz_bytes(in);
    case Compression::zstd:
      return zstd_bytes(in);
    case Compression::none:
      break;
  }
  return in;
}

/// UTF-16 code units of `units`, serialised in `order`, with a byte order mark if asked.
std::string utf16_bytes(const std::u16string& units, Utf16Order order, bool bom) {
  std::string out;
  std::u16string all = bom ? u"\uFEFF" + units : units;
  for (const char16_t u : all) {
    const auto hi = static_cast<char>(u >> 8);
    const auto lo = static_cast<char>(u & 0xFF);
    if (order == Utf16Order::little) {
      out += lo;
      out += hi;
    } else {
      out += hi;
      out += lo;
    }
  }
  return out;
}

/// A source that hands out at most `step` bytes per read, so that the layer above meets chunk
/// boundaries at chosen places (a pipe does the same).
class TrickleBuf : public std::streambuf {
 public:
  TrickleBuf(std::string bytes, std::size_t step) : bytes_(std::move(bytes)), step_(step) {}

 protected:
  std::streamsize xsgetn(char* out, std::streamsize n) override {
    const std::size_t k = std::min({static_cast<std::size_t>(n), step_, bytes_.size() - pos_});
    std::memcpy(out, bytes_.data() + pos_, k);
    pos_ += k;
    return static_cast<std::streamsize>(k);
  }
  int_type underflow() override {
    if (pos_ >= bytes_.size()) return traits_type::eof();
    return traits_type::to_int_type(bytes_[pos_]);
  }
  int_type uflow() override {
    if (pos_ >= bytes_.size()) return traits_type::eof();
    return traits_type::to_int_type(bytes_[pos_++]);
  }

 private:
  std::string bytes_;
  std::size_t step_;
  std::size_t pos_ = 0;
};

/// Everything a layer gives, read `step` bytes at a time.
std::string drain(std::streambuf& b, std::size_t step = 7) {
  std::string out;
  std::string chunk(step, '\0');
  for (;;) {
    const std::streamsize got = b.sgetn(chunk.data(), static_cast<std::streamsize>(step));
    if (got <= 0) break;
    out.append(chunk.data(), static_cast<std::size_t>(got));
  }
  return out;
}

const char* kShortText =
    "time (s),current (A)\n0,0.001\n1e-05,0.00106283\n2e-05,-0.0004\n# note: Zoë\n";

// ---------------------------------------------------------------------------------------------
// The layers on strings.

TEST(InputStream, DetectsCompressionByMagicNumberOnly) {
  // Magic numbers: RFC 1952 §2.3.1, The .xz File Format 1.1.0 §2.1.1.1, RFC 8878 §3.1.1.
  EXPECT_EQ(detect_compression(std::string_view("\x1F\x8B\x08", 3)), Compression::gzip);
  EXPECT_EQ(detect_compression(std::string_view("\xFD"
                                                "7zXZ\x00\x00",
                                                7)),
            Compression::xz);
  EXPECT_EQ(detect_compression(std::string_view("\xFD"
                                                "7zXZ",
                                                5)),
            Compression::none);
  EXPECT_EQ(detect_compression(std::string_view("\x28\xB5\x2F\xFD", 4)), Compression::zstd);
  EXPECT_EQ(detect_compression("time,current"), Compression::none);
  EXPECT_EQ(detect_compression(""), Compression::none);
}

TEST(InputStream, PeekDoesNotConsumeAndReplaysEveryByte) {
  // On the descriptor layer over a pipe, where open_capture() sniffs magic numbers.
  int fds[2];
  ASSERT_EQ(::pipe(fds), 0);
  const std::string text = kShortText;
  std::thread writer([&] {
    // Written in pieces of 3 bytes: the peek has to gather across short reads.
    for (std::size_t i = 0; i < text.size(); i += 3) {
      const std::size_t k = std::min<std::size_t>(3, text.size() - i);
      EXPECT_EQ(::write(fds[1], text.data() + i, k), static_cast<ssize_t>(k));
    }
    ::close(fds[1]);
  });
  FdInputBuf raw(fds[0], "pipe", 8);
  EXPECT_EQ(raw.peek(6), "time (");
  EXPECT_EQ(raw.peek(100), "time (s)");  // capped at the 8-byte buffer
  EXPECT_EQ(drain(raw, 5), text);
  EXPECT_EQ(raw.bytes_consumed(), text.size());
  EXPECT_EQ(raw.peek(4), "");
  writer.join();
  ::close(fds[0]);
}

class Decoders : public ::testing::TestWithParam<Compression> {};

TEST_P(Decoders, RoundTripAtEveryChunkBoundary) {
  const std::string text = kShortText;
  const std::string packed = compress(GetParam(), text);
  // Every source step from 1 byte to the whole stream, and output buffers from the smallest
  // (4 bytes) up: each boundary of the compressed input and of the output is met somewhere.
  for (std::size_t step = 1; step <= packed.size(); ++step) {
    for (const std::size_t buffer : {4u, 5u, 13u, 64u, 4096u}) {
      TrickleBuf src(packed, step);
      auto dec = make_decompressor(GetParam(), src, "t", buffer);
      ASSERT_EQ(drain(*dec, 3), text) << "step " << step << " buffer " << buffer;
    }
  }
}

TEST_P(Decoders, ConcatenatedStreamsDecodeToTheirConcatenation) {
  // gzip members (RFC 1952 §2.2), xz streams (.xz format §2), zstd frames (RFC 8878 §3.1).
  const std::string a = "time,current\n0,1\n";
  const std::string b = "1,2\n2,3\n";
  std::stringbuf src(compress(GetParam(), a) + compress(GetParam(), b));
  auto dec = make_decompressor(GetParam(), src, "t", 16);
  EXPECT_EQ(drain(*dec), a + b);
}

TEST_P(Decoders, EveryTruncationThrowsWithAByteOffset) {
  const std::string text = kShortText;
  const std::string packed = compress(GetParam(), text);
  for (std::size_t cut = 1; cut < packed.size(); ++cut) {
    std::stringbuf src(packed.substr(0, cut));
    auto dec = make_decompressor(GetParam(), src, "cut.bin", 64);
    try {
      const std::string got = drain(*dec);
      ADD_FAILURE() << "cut at " << cut << " of " << packed.size() << " read " << got.size()
                    << " bytes without an error";
    } catch (const InputError& e) {
      EXPECT_EQ(e.path(), "cut.bin");
      ASSERT_TRUE(e.where().byte_offset.has_value()) << e.what();
      EXPECT_LE(*e.where().byte_offset, cut) << e.what();
    }
  }
}

TEST_P(Decoders, TrailingGarbageIsAnError) {
  std::stringbuf src(compress(GetParam(), kShortText) + "garbage!");
  auto dec = make_decompressor(GetParam(), src, "g", 64);
  EXPECT_THROW(drain(*dec), InputError);
}

INSTANTIATE_TEST_SUITE_P(AllFormats, Decoders,
                         ::testing::Values(Compression::gzip, Compression::xz, Compression::zstd),
                         [](const auto& p) { return std::string(to_string(p.param)); });

TEST(Utf16, TranscodesBothByteOrdersAtEveryChunkBoundary) {
  // "t,I\n" + é (U+00E9, 2 UTF-8 bytes) + € (U+20AC, 3 bytes) + 😀 (U+1F600, surrogate pair
  // D83D DE00, 4 bytes): UTF-8 per Unicode Table 3-6.
  const std::u16string units = u"t,I\n\u00E9\u20AC\U0001F600,1\n";
  const std::string utf8 = "t,I\n\xC3\xA9\xE2\x82\xAC\xF0\x9F\x98\x80,1\n";
  for (const Utf16Order order : {Utf16Order::little, Utf16Order::big}) {
    const std::string bytes = utf16_bytes(units, order, false);
    for (std::size_t step = 1; step <= bytes.size(); ++step) {
      for (const std::size_t buffer : {4u, 5u, 6u, 7u, 64u}) {
        TrickleBuf src(bytes, step);
        Utf16ToUtf8Buf u(src, order, buffer);
        ASSERT_EQ(drain(u, 1 + step % 5), utf8) << "step " << step << " buffer " << buffer;
      }
    }
  }
}

TEST(Utf16, UnpairedSurrogatesAndALoneByteBecomeReplacementCharacters) {
  // U+FFFD is EF BF BD in UTF-8; one per ill-formed unit (Unicode §3.9, U+FFFD substitution).
  const std::string fffd = "\xEF\xBF\xBD";
  const auto decode = [](const std::string& bytes) {
    std::stringbuf src(bytes);
    Utf16ToUtf8Buf u(src, Utf16Order::little, 4);
    return drain(u, 1);
  };
  EXPECT_EQ(decode(utf16_bytes(u"a\xD83D"
                               u"b",
                               Utf16Order::little, false)),
            "a" + fffd + "b");
  EXPECT_EQ(decode(utf16_bytes(u"a\xDE00"
                               u"b",
                               Utf16Order::little, false)),
            "a" + fffd + "b");
  EXPECT_EQ(decode(utf16_bytes(u"\xD83D\xD83D\xDE00", Utf16Order::little, false)),
            fffd + "\xF0\x9F\x98\x80");
  EXPECT_EQ(decode(utf16_bytes(u"a\xD83D", Utf16Order::little, false)), "a" + fffd);
  EXPECT_EQ(decode(std::string("a\0b", 3)), "a" + fffd);
  EXPECT_EQ(decode(std::string("a\0\x3D\xD8z", 5)), "a" + fffd + fffd);
}

// ---------------------------------------------------------------------------------------------
// The reader on files and pipes.

TEST(OpenCapture, ProgressCountsCompressedBytes) {
  const fs::path dir = fs::temp_directory_path() / ("lopside_stream_" + std::to_string(::getpid()));
  fs::create_directories(dir);
  std::string text = "time (s),current (A)\n";
  for (int k = 0; k < 20000; ++k) {
    text += std::to_string(k * 1e-5) + "," + std::to_string(0.001 * (k % 7)) + "\n";
  }
  const fs::path p = dir / "p.csv.gz";
  write_file(p, gzip_bytes(text));
  auto source = open_capture(p, ReaderOptions{});
  SampleBlock block;
  std::uint64_t frames = 0;
  while (const std::size_t n = source->read(block, 4096)) frames += n;
  EXPECT_EQ(frames, 20000u);
  EXPECT_DOUBLE_EQ(source->progress(), 1.0);  // every compressed byte consumed
  fs::remove_all(dir);
}

// Figures the stream tests compare: they must not depend on how the bytes arrived.
struct Figures {
  double dc_a = 0, rms_a = 0, rate_hz = 0;
  long cycles = 0, samples = 0;
  bool operator==(const Figures&) const = default;
};
std::ostream& operator<<(std::ostream& o, const Figures& f) {
  return o << "dc " << f.dc_a << " rms " << f.rms_a << " cycles " << f.cycles << " samples "
           << f.samples << " rate " << f.rate_hz;
}

class Streams : public Cli {
 protected:
  /// Runs a shell command line, capturing both streams.
  RunResult shell(const std::string& cmd) {
    const fs::path out = dir_ / "stdout.txt";
    const fs::path err = dir_ / "stderr.txt";
    const std::string full = "cd " + shell_quote(dir_.string()) + " && { " + cmd + " ; } >" +
                             shell_quote(out.string()) + " 2>" + shell_quote(err.string());
    const int raw = std::system(("bash -c " + shell_quote(full)).c_str());
    RunResult r;
    r.status = (raw != -1 && WIFEXITED(raw)) ? WEXITSTATUS(raw) : -1;
    r.out = slurp(out);
    r.err = slurp(err);
    return r;
  }
  static Figures figures(const json& j) {
    Figures f;
    f.dc_a = j["dc_offset_a"]["value"].get<double>();
    f.rms_a = j["rms_a"]["value"].get<double>();
    f.cycles = j["cycle_count"].get<long>();
    f.samples = j["input"]["samples"].get<long>();
    f.rate_hz = j["input"]["sample_rate_hz"].get<double>();
    return f;
  }
  Figures shell_figures(const std::string& cmd) {
    const RunResult r = shell(cmd);
    EXPECT_EQ(r.status, 0) << cmd << "\n" << r.err;
    try {
      return figures(json::parse(r.out));
    } catch (const std::exception& e) {
      ADD_FAILURE() << cmd << ": " << e.what() << "\n" << r.out << r.err;
      return {};
    }
  }
  static std::string lopside() { return shell_quote(LOPSIDE_BINARY); }

  /// A capture with a known DC (synth), 50 Hz with a voltage channel, 0.2 s at 100 kHz.
  fs::path make_csv() {
    const fs::path p = dir_ / "c.csv";
    const RunResult g = run({"-o", p.string(), "--dc", "0.001", "--duration", "0.2",
                             "--voltage-peak", "300", "--noise-rms", "0.0001"},
                            LOPSIDE_SYNTH);
    EXPECT_EQ(g.status, 0) << g.err;
    return p;
  }
};

TEST_F(Streams, PipesFifosProcessSubstitutionAndCompressionGiveTheFileFigures) {
  const fs::path csv = make_csv();
  const Figures plain = figures(run_json({"measure", csv.string(), "--json", "-"}));
  ASSERT_GT(plain.cycles, 5);
  const std::string text = slurp(csv);
  write_file(dir_ / "c.csv.gz", gzip_bytes(text));
  write_file(dir_ / "c.csv.xz", xz_bytes(text));
  write_file(dir_ / "c.csv.zst", zstd_bytes(text));
  // Three gzip members, as `cat a.gz b.gz c.gz` makes.
  const std::size_t third = text.size() / 3;
  write_file(dir_ / "multi.gz", gzip_bytes(text.substr(0, third)) +
                                    gzip_bytes(text.substr(third, third)) +
                                    gzip_bytes(text.substr(2 * third)));
  const std::string m = lopside() + " measure ";
  EXPECT_EQ(shell_figures("cat c.csv | " + m + "- --json -"), plain);
  EXPECT_EQ(shell_figures(m + "- --json - < c.csv"), plain);
  EXPECT_EQ(shell_figures(m + "c.csv.gz --json -"), plain);
  EXPECT_EQ(shell_figures(m + "c.csv.xz --json -"), plain);
  EXPECT_EQ(shell_figures(m + "c.csv.zst --json -"), plain);
  EXPECT_EQ(shell_figures(m + "multi.gz --json -"), plain);
  EXPECT_EQ(shell_figures("cat c.csv.zst | " + m + "- --json -"), plain);
  EXPECT_EQ(shell_figures(m + "<(cat c.csv.xz) --json -"), plain);
  ASSERT_EQ(::mkfifo((dir_ / "fifo").c_str(), 0600), 0);
  EXPECT_EQ(shell_figures("{ cat c.csv > fifo & } ; " + m + "fifo --json -"), plain);

  // The name shown for standard input.
  const RunResult r = shell("cat c.csv | " + m + "- --json -");
  EXPECT_EQ(json::parse(r.out)["input"]["path"], "standard input");
}

TEST_F(Streams, Utf16WithByteOrderMarkReadsTheSame) {
  const fs::path csv = make_csv();
  const Figures plain = figures(run_json({"measure", csv.string(), "--json", "-"}));
  std::u16string units;
  for (const char c : slurp(csv)) units += static_cast<char16_t>(static_cast<unsigned char>(c));
  write_file(dir_ / "le.csv", utf16_bytes(units, Utf16Order::little, true));
  write_file(dir_ / "be.csv.gz", gzip_bytes(utf16_bytes(units, Utf16Order::big, true)));
  const std::string m = lopside() + " measure ";
  EXPECT_EQ(shell_figures(m + "le.csv --json -"), plain);
  EXPECT_EQ(shell_figures("cat le.csv | " + m + "- --json -"), plain);
  EXPECT_EQ(shell_figures(m + "be.csv.gz --json -"), plain);
}

TEST_F(Streams, WavOnStandardInputReadsTheSameAsTheFile) {
  const fs::path wav = dir_ / "w.wav";
  const RunResult g =
      run({"-o", wav.string(), "--dc", "0.001", "--duration", "0.2", "--voltage-peak", "300"},
          LOPSIDE_SYNTH);
  ASSERT_EQ(g.status, 0) << g.err;
  const std::string flags = " --scale 1=0.1 --scale 2=1000 --current 1 --voltage 2 --json -";
  const std::string m = lopside() + " measure ";
  const Figures file = shell_figures(m + "w.wav" + flags);
  ASSERT_GT(file.cycles, 5);
  EXPECT_EQ(shell_figures("cat w.wav | " + m + "-" + flags), file);  // spooled
  EXPECT_EQ(shell_figures(m + "-" + flags + " < w.wav"), file);      // seekable stdin
  EXPECT_EQ(shell_figures(m + "<(cat w.wav)" + flags), file);

  // A cut pipe is caught by the same header check as a cut file.
  const RunResult cut = shell("head -c 20000 w.wav | " + m + "-" + flags);
  EXPECT_EQ(cut.status, 2);
  EXPECT_NE(cut.err.find("standard input: byte 20000: truncated"), std::string::npos) << cut.err;

  // A compressed sound container is refused with the reason.
  write_file(dir_ / "w.wav.gz", gzip_bytes(slurp(wav)));
  const RunResult gz = shell(m + "w.wav.gz");
  EXPECT_EQ(gz.status, 2);
  EXPECT_NE(gz.err.find("sound container compressed with gzip"), std::string::npos) << gz.err;
}

TEST_F(Streams, TruncatedOrCorruptCompressedFilesExitTwoNamingTheByte) {
  const fs::path csv = make_csv();
  const std::string text = slurp(csv);
  const std::string gz = gzip_bytes(text);
  write_file(dir_ / "cut.csv.gz", gz.substr(0, gz.size() / 2));
  const RunResult cut = run({"measure", (dir_ / "cut.csv.gz").string()});
  EXPECT_EQ(cut.status, 2);
  const std::string at =
      ": byte " + std::to_string(gz.size() / 2) + ": the gzip stream is cut short";
  EXPECT_NE(cut.err.find((dir_ / "cut.csv.gz").string() + at), std::string::npos) << cut.err;

  std::string xz = xz_bytes(text);
  xz[xz.size() / 2] = static_cast<char>(xz[xz.size() / 2] ^ 0x55);
  write_file(dir_ / "bad.csv.xz", xz);
  const RunResult bad = run({"measure", (dir_ / "bad.csv.xz").string()});
  EXPECT_EQ(bad.status, 2);
  EXPECT_NE(bad.err.find("bad.csv.xz: byte "), std::string::npos) << bad.err;
  EXPECT_NE(bad.err.find("corrupt xz data"), std::string::npos) << bad.err;

  // Cut on a pipe: the same message, named as standard input.
  const RunResult piped = shell("head -c " + std::to_string(gz.size() / 2) + " cut.csv.gz | " +
                                lopside() + " measure -");
  EXPECT_EQ(piped.status, 2);
  EXPECT_NE(piped.err.find("standard input" + at), std::string::npos) << piped.err;
}

TEST_F(Streams, ReadingStandardInputTwiceIsRefusedNotCalledEmpty) {
  // Standard input named twice (as the capture and as its companion file) cannot be read
  // twice: said as such, never taken for an empty file. (--zero on a pipe is spooled once:
  // tests/joined_source_test.cpp.)
  const fs::path csv = make_csv();
  const RunResult r = shell("cat c.csv | " + lopside() + " measure - --with -");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("standard input has already been read once"), std::string::npos) << r.err;
}

TEST_F(Streams, EmptyStandardInputIsBadInput) {
  const RunResult r = shell(lopside() + " measure - < /dev/null");
  EXPECT_EQ(r.status, 2);
  EXPECT_NE(r.err.find("standard input: the file is empty"), std::string::npos) << r.err;
}

}  // namespace
}  // namespace lopside::test
