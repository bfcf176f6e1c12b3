// Dispatch by content: a file's first bytes say what it is more reliably than its name.
//
// The input is read strictly forward through a chain of stream layers (input_stream.hpp), so a
// pipe, a FIFO, standard input or `/dev/fd/N` is read like a file: the first bytes are peeked in
// the layer's buffer, never seeked back to, and then handed on to the reader.
#include "lopside/capture_reader.hpp"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <atomic>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <istream>
#include <map>
#include <mutex>
#include <optional>
#include <string_view>
#include <utility>
#include <vector>

#include "lopside/error.hpp"
#include "lopside/input_stream.hpp"
#include "lopside/joined_source.hpp"
#include "unique_fd.hpp"

namespace lopside {
namespace {

// Enough for every magic number looked at here (xz's is 6 bytes).
constexpr std::size_t kSniffBytes = 16;
constexpr const char* kStdinName = "standard input";

// Magic numbers of the containers libsndfile reads: RIFF/RIFX (WAV), RF64 and BW64 (EBU Tech
// 3306), "riff" (Sony Wave64 GUID starts with it), fLaC (FLAC format spec), FORM (AIFF),
// OggS (RFC 3533), ".snd" (Sun/NeXT AU), "caff" (Apple CAF).
bool looks_like_sound_file(std::string_view head) {
  static constexpr std::array<const char*, 10> kMagic{"RIFF", "RIFX", "RF64", "BW64", "riff",
                                                      "fLaC", "FORM", "OggS", ".snd", "caff"};
  if (head.size() < 4) return false;
  for (const char* m : kMagic) {
    if (std::memcmp(head.data(), m, 4) == 0) return true;
  }
  return false;
}

bool starts_with(std::string_view head, std::string_view magic) {
  return head.substr(0, magic.size()) == magic;
}

using detail::UniqueFd;

/// The layers between the descriptor and the text reader, in the order they are built; the
/// later ones read from the earlier ones.
struct InputChain {
  UniqueFd fd;
  std::unique_ptr<FdInputBuf> raw;
  std::unique_ptr<ChunkedInputBuf> decoded;  // gzip, xz or zstd
  std::unique_ptr<ChunkedInputBuf> utf16;    // UTF-16 → UTF-8
  std::optional<std::uint64_t> size;         // bytes the descriptor will give, when known
};

// Owns the stream layers that the text reader borrows.
class StreamTextSource final : public SampleSource {
 public:
  StreamTextSource(InputChain chain, std::streambuf* top, const std::string& shown,
                   const ReaderOptions& options)
      : chain_(std::move(chain)), stream_(top) {
    // A layer throws InputError (a corrupt compressed stream, a read error); with badbit in the
    // exception mask std::istream rethrows it as it is instead of only setting badbit
    // ([istream.unformatted]: "rethrow if badbit is on in exceptions()").
    stream_.exceptions(std::ios::badbit);
    inner_ = open_text_capture(stream_, shown, options);
  }
  const CaptureInfo& info() const override { return inner_->info(); }
  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    return inner_->read(block, max_frames);
  }
  const std::vector<std::string>& warnings() const override { return inner_->warnings(); }
  /// Share of the file's bytes consumed; for compressed input the compressed bytes, which is
  /// what the size counts.
  double progress() const override {
    if (!chain_.size || *chain_.size == 0) return -1.0;
    return std::min(
        1.0, static_cast<double>(chain_.raw->bytes_consumed()) / static_cast<double>(*chain_.size));
  }

 private:
  InputChain chain_;
  std::istream stream_;
  std::unique_ptr<SampleSource> inner_;
};

// libsndfile seeks, a pipe cannot: the container is copied to a temporary file that is unlinked
// at once (O_TMPFILE, open(2); mkstemp + unlink where the file system lacks it), so it vanishes
// with its descriptor whatever happens. Memory stays at one copy buffer.
// `what` names the copied input in messages.
int spool_to_temporary_file(std::streambuf& in, const std::string& shown,
                            const std::string& what = "the sound file read from a pipe") {
  const char* env = std::getenv("TMPDIR");
  const std::string dir = env != nullptr && *env != '\0' ? env : "/tmp";
  int fd = ::open(dir.c_str(), O_TMPFILE | O_RDWR | O_CLOEXEC, 0600);
  if (fd < 0) {
    std::string name = dir + "/lopside-spool-XXXXXX";
    fd = ::mkostemp(name.data(), O_CLOEXEC);
    if (fd >= 0) ::unlink(name.c_str());
  }
  if (fd < 0) {
    throw InputError(shown, "cannot create a temporary file in " + dir + " to hold " + what + " (" +
                                std::strerror(errno) + "); expected a writable TMPDIR");
  }
  UniqueFd spool(fd, true);
  std::vector<char> buffer(1 << 16);
  std::uint64_t total = 0;
  for (;;) {
    const std::streamsize got =
        in.sgetn(buffer.data(), static_cast<std::streamsize>(buffer.size()));
    if (got <= 0) break;
    std::size_t done = 0;
    while (done < static_cast<std::size_t>(got)) {
      const ssize_t put =
          ::write(spool.get(), buffer.data() + done, static_cast<std::size_t>(got) - done);
      if (put < 0 && errno == EINTR) continue;
      if (put < 0) {
        throw InputError(shown, "cannot copy " + what + " to a temporary file in " + dir +
                                    " after " + std::to_string(total + done) + " bytes (" +
                                    std::strerror(errno) +
                                    "); expected room in TMPDIR for the whole file");
      }
      done += static_cast<std::size_t>(put);
    }
    total += done;
  }
  ::lseek(spool.get(), 0, SEEK_SET);
  return spool.release();
}

// Inputs copied by keep_for_rereading(), by the path as given: descriptors of unlinked
// temporary files, open until the program ends (the file vanishes with them).
class Rereadable {
 public:
  static Rereadable& instance() {
    static Rereadable r;
    return r;
  }
  int find(const std::string& path) {
    const std::lock_guard<std::mutex> lock(mutex_);
    const auto it = fds_.find(path);
    return it == fds_.end() ? -1 : it->second.get();
  }
  void add(const std::string& path, UniqueFd fd) {
    const std::lock_guard<std::mutex> lock(mutex_);
    fds_.emplace(path, std::move(fd));
  }

 private:
  std::mutex mutex_;
  std::map<std::string, UniqueFd> fds_;
};

// A descriptor of its own on a kept copy, at its start: through /proc/self/fd, which opens the
// file anew (proc(5): the magic links), so two sources never share one offset; dup + lseek
// where /proc is not mounted.
int reopen_kept(int kept) {
  int fd = ::open(("/proc/self/fd/" + std::to_string(kept)).c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) {
    fd = ::fcntl(kept, F_DUPFD_CLOEXEC, 0);
    if (fd >= 0 && ::lseek(fd, 0, SEEK_SET) != 0) {
      ::close(fd);
      fd = -1;
    }
  }
  return fd;
}

}  // namespace

void keep_for_rereading(const std::filesystem::path& path) {
  const bool from_stdin = path == "-";
  const std::string shown = from_stdin ? kStdinName : path.string();
  if (Rereadable::instance().find(path.string()) >= 0) return;
  struct stat st {};
  // Standard input is copied even when it is a regular file: it may have been opened part-way,
  // and open_capture() reads it once only.
  if (!from_stdin && ::stat(path.c_str(), &st) == 0 && S_ISREG(st.st_mode)) return;
  UniqueFd in;
  if (from_stdin) {
    in = UniqueFd(STDIN_FILENO, false);
  } else {
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      throw InputError(shown, std::string("cannot open the capture: ") + std::strerror(errno));
    }
    in = UniqueFd(fd, true);
  }
  if (::fstat(in.get(), &st) == 0 && S_ISDIR(st.st_mode)) {
    throw InputError(shown, "is a directory; expected a capture file (CSV/TSV text or WAV)");
  }
  FdInputBuf raw(in.get(), shown);
  UniqueFd copy(spool_to_temporary_file(raw, shown, "the input"), true);
  Rereadable::instance().add(path.string(), std::move(copy));
}

std::unique_ptr<SampleSource> open_capture(const std::filesystem::path& path,
                                           const ReaderOptions& options) {
  const bool from_stdin = path == "-";
  const std::string shown = from_stdin ? kStdinName : path.string();

  if (!options.with_paths.empty()) {
    check_joinable(options, shown);
    const ReaderOptions part = part_reader_options(options);
    std::unique_ptr<SampleSource> main = open_capture(path, part);
    std::vector<std::unique_ptr<SampleSource>> companions;
    for (const std::string& with : options.with_paths)
      companions.push_back(open_capture(with, part));
    return join_captures(std::move(main), std::move(companions), options);
  }

  InputChain chain;
  const int kept = Rereadable::instance().find(path.string());
  if (kept >= 0) {
    const int fd = reopen_kept(kept);
    if (fd < 0) {
      throw InputError(shown, std::string("cannot reopen the temporary copy of the input: ") +
                                  std::strerror(errno));
    }
    chain.fd = UniqueFd(fd, true);
  } else if (from_stdin) {
    // Standard input can be read once: a second open (an option that reads the capture twice,
    // such as measure's --zero) would find it spent and call it empty.
    static std::atomic<bool> stdin_taken{false};
    if (stdin_taken.exchange(true)) {
      throw InputError(shown,
                       "standard input has already been read once; this use reads the "
                       "capture twice, so expected a file name");
    }
    chain.fd = UniqueFd(STDIN_FILENO, false);
  } else {
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      throw InputError(shown, std::string("cannot open the capture: ") + std::strerror(errno));
    }
    chain.fd = UniqueFd(fd, true);
  }
  struct stat st {};
  const bool regular = ::fstat(chain.fd.get(), &st) == 0 && S_ISREG(st.st_mode);
  if (!regular && S_ISDIR(st.st_mode)) {
    throw InputError(shown, "is a directory; expected a capture file (CSV/TSV text or WAV)");
  }
  // Standard input may be a file opened part-way (`(head -n 3; lopside measure -) < f`): what
  // is left from the current offset is what will be read.
  off_t start = 0;
  if (regular) {
    start = std::max<off_t>(0, ::lseek(chain.fd.get(), 0, SEEK_CUR));
    chain.size = static_cast<std::uint64_t>(std::max<off_t>(0, st.st_size - start));
  }

  chain.raw = std::make_unique<FdInputBuf>(chain.fd.get(), shown);
  std::string_view head = chain.raw->peek(kSniffBytes);
  if (head.empty()) {
    throw InputError(shown, "the file is empty; expected a capture (CSV/TSV text or WAV)");
  }
  ChunkedInputBuf* top = chain.raw.get();

  const Compression compression = detect_compression(head);
  if (compression != Compression::none) {
    const std::string name = to_string(compression);
    chain.decoded = make_decompressor(compression, *chain.raw, shown);
    head = chain.decoded->peek(kSniffBytes);
    if (head.empty()) {
      throw InputError(shown, "the " + name +
                                  " data decompress to nothing; expected a compressed "
                                  "capture (CSV/TSV text)");
    }
    if (looks_like_sound_file(head)) {
      throw InputError(shown, "a sound container compressed with " + name +
                                  " is not read; expected " + name +
                                  "-compressed text, or the sound file itself (decompress it "
                                  "first; FLAC compresses without loss)");
    }
    if (const Compression inner = detect_compression(head); inner != Compression::none) {
      throw InputError(shown, std::string("holds ") + to_string(inner) + " data inside " + name +
                                  "; expected one layer of compression around a text capture");
    }
    top = chain.decoded.get();
  } else if (looks_like_sound_file(head)) {
    if (!from_stdin && regular && kept < 0) {
      // A file on disk: libsndfile opens it by name, as before, and checks it against its size.
      chain = InputChain{};
      return open_sound_file(path, options);
    }
    if (regular && start == 0) {
      // Standard input redirected from a file is seekable already.
      const int fd = ::fcntl(chain.fd.get(), F_DUPFD_CLOEXEC, 0);
      if (fd >= 0 && ::lseek(fd, 0, SEEK_SET) == 0) return open_sound_file(fd, shown, options);
      if (fd >= 0) ::close(fd);
    }
    return open_sound_file(spool_to_temporary_file(*chain.raw, shown), shown, options);
  }

  // Byte order marks (Unicode 15.0 §3.10, D98; §23.8): FF FE 00 00 is UTF-32LE, which shares
  // UTF-16LE's first two bytes.
  if (starts_with(head, std::string_view("\xFF\xFE\x00\x00", 4)) ||
      starts_with(head, std::string_view("\x00\x00\xFE\xFF", 4))) {
    throw InputError(shown, InputLocation::at_byte(0),
                     "UTF-32 text (byte order mark) is not read; expected UTF-8 or UTF-16 text");
  }
  const bool utf16le = starts_with(head, "\xFF\xFE");
  if (utf16le || starts_with(head, "\xFE\xFF")) {
    top->sbumpc();  // the byte order mark is no part of the text
    top->sbumpc();
    chain.utf16 =
        std::make_unique<Utf16ToUtf8Buf>(*top, utf16le ? Utf16Order::little : Utf16Order::big);
    top = chain.utf16.get();
  }
  return std::make_unique<StreamTextSource>(std::move(chain), top, shown, options);
}

}  // namespace lopside
