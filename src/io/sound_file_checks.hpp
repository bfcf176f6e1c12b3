#pragma once
// What a sound container's own header claims, read and checked by lopside before libsndfile
// sees the file (sound_file.cpp is the only includer). libsndfile 1.2.0 trusts these claims:
// it sizes buffers by the channel count; it accepts a data chunk that promises more bytes than
// the file holds, logs "data : 40000 (should be 29956)" and shortens SF_INFO.frames without a
// word, so a recorder that died mid-capture would pass for a shorter, complete capture; it
// misreads AIFF sample rates; and it loops forever on a LIST entry whose size runs its 32-bit
// count past 4 GiB (all measured on 1.2.0). So every count is checked here against the file's
// real size and the stated limits, with the byte offset of the field at fault, and nothing is
// allocated from a claim.
//
// All size arithmetic compares a claim with what is left (`end - offset`, the offset known to
// be inside the file), never `offset + size`, which a hostile 64-bit size wraps.

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <filesystem>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "lopside/error.hpp"
#include "lopside/reader_options.hpp"

namespace lopside::sound_checks {

// The limits every reader holds to (lopside/reader_options.hpp): sample rates 1 Hz … 100 GHz
// (below, a zero or a misread field; above, no digitiser made: a damaged header); at most 1024
// channels (libsndfile 1.2.0's own ceiling, SF_MAX_CHANNELS, and the sound-file writer's); a
// read block of at most 2^20 values.
using lopside::kMaxChannels;
using lopside::kMaxSampleRateHz;
using lopside::kMinSampleRateHz;
inline constexpr std::size_t kMaxBlockSamples = kMaxBlockValues;

/// Reads a file's header bytes with pread, leaving the descriptor's offset (which libsndfile
/// uses) alone. Small reads are served from a window, so walking a chunk list or a LIST
/// chunk's entries costs one system call per 64 KiB.
class HeaderReader {
 public:
  explicit HeaderReader(const std::filesystem::path& path)
      : fd_(::open(path.c_str(), O_RDONLY | O_CLOEXEC)) {}
  /// Reads through its own duplicate of `fd`.
  explicit HeaderReader(int fd) : fd_(::fcntl(fd, F_DUPFD_CLOEXEC, 0)) {}
  ~HeaderReader() {
    if (fd_ >= 0) ::close(fd_);
  }
  HeaderReader(const HeaderReader&) = delete;
  HeaderReader& operator=(const HeaderReader&) = delete;

  bool ok() const { return fd_ >= 0; }

  /// Reads `n` bytes at `pos`; false if the file ends first.
  bool read(std::uint64_t pos, unsigned char* out, std::size_t n) {
    if (n > kWindow / 2) return read_upto(pos, out, n) == n;
    if (pos < window_pos_ || pos - window_pos_ > window_.size() ||
        window_.size() - (pos - window_pos_) < n) {
      window_.resize(kWindow);
      window_.resize(read_upto(pos, window_.data(), kWindow));
      window_pos_ = pos;
      if (window_.size() < n) return false;
    }
    std::memcpy(out, window_.data() + (pos - window_pos_), n);
    return true;
  }

  /// Reads up to `n` bytes at `pos`, unbuffered; returns how many came before the file's end.
  std::size_t read_upto(std::uint64_t pos, unsigned char* out, std::size_t n) {
    std::size_t got = 0;
    while (fd_ >= 0 && got < n) {
      if (pos > static_cast<std::uint64_t>(std::numeric_limits<off_t>::max()) - got) break;
      const ssize_t r = ::pread(fd_, out + got, n - got, static_cast<off_t>(pos + got));
      if (r < 0 && errno == EINTR) continue;
      if (r <= 0) break;
      got += static_cast<std::size_t>(r);
    }
    return got;
  }

 private:
  static constexpr std::size_t kWindow = std::size_t{1} << 16;

  int fd_;
  std::vector<unsigned char> window_;
  std::uint64_t window_pos_ = 0;
};

inline std::uint64_t le(const unsigned char* p, std::size_t n) {
  std::uint64_t v = 0;
  for (std::size_t i = n; i-- > 0;) v = (v << 8) | p[i];
  return v;
}
inline std::uint64_t be(const unsigned char* p, std::size_t n) {
  std::uint64_t v = 0;
  for (std::size_t i = 0; i < n; ++i) v = (v << 8) | p[i];
  return v;
}
inline bool tag_is(const unsigned char* p, const char* tag) {
  return std::memcmp(p, tag, 4) == 0;
}

/// A chunk id for messages: 'fmt ' or, for bytes that are not printable ASCII, 0x00FFFFF8.
inline std::string fourcc_text(const unsigned char* p) {
  if (std::all_of(p, p + 4, [](unsigned char c) { return c >= 0x20 && c < 0x7F; })) {
    return "'" + std::string(reinterpret_cast<const char*>(p), 4) + "'";
  }
  static const char* digits = "0123456789ABCDEF";
  std::string s = "0x";
  for (int i = 0; i < 4; ++i) {
    s += digits[p[i] >> 4];
    s += digits[p[i] & 0xF];
  }
  return s;
}

/// a + b in decimal, exact even where the sum passes 2^64 (a hostile size in a message).
inline std::string sum_text(std::uint64_t a, std::uint64_t b) {
  const std::uint64_t low = a + b;
  if (low >= a) return std::to_string(low);
  // The sum is 2^64 + low: add the digits of 2^64 and of low.
  const std::string big = "18446744073709551616";
  std::string small = std::to_string(low);
  small.insert(0, big.size() - small.size(), '0');
  std::string out(big.size(), '0');
  int carry = 0;
  for (std::size_t i = big.size(); i-- > 0;) {
    const int d = (big[i] - '0') + (small[i] - '0') + carry;
    out[i] = static_cast<char>('0' + d % 10);
    carry = d / 10;
  }
  return carry ? "1" + out : out;
}

/// A number as short as it reads back exactly ("44100.5", "1e+12"), for messages.
inline std::string number_text(double v) {
  char buf[32];
  const auto res = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, res.ptr);
}

/// Where the sample data of an uncompressed container lies, as its header declares it.
struct DataExtent {
  std::uint64_t offset = 0;      ///< byte offset of the first sample byte
  std::uint64_t bytes = 0;       ///< declared length of the sample data
  const char* chunk = "";        ///< the chunk that declares it, for messages
  std::uint64_t size_field = 0;  ///< byte offset of the field that declares the length
};

/// What the header walk learned, for the checks made once libsndfile has opened the file.
struct ContainerFacts {
  std::optional<DataExtent> extent;  ///< unset: not a container read here, or length left open
  bool have_format = false;          ///< a complete 'fmt ' or 'COMM' chunk was read
  bool format_known = false;         ///< an encoding whose fields were checked here
  std::uint64_t format_field = 0;    ///< byte offset of the format tag / compression type
  std::string format_text;           ///< e.g. "format tag 0x1234 (16 bits, block align 2)"
  std::uint64_t channels_field = 0;
  std::uint64_t rate_field = 0;
  std::optional<double> header_rate_hz;  ///< AIFF: the 80-bit rate as stated
  bool header_rate_whole = true;
  std::uint64_t frame_bytes = 0;  ///< bytes of one frame of an uncompressed encoding, else 0
  std::string overrun;            ///< a chunk before the samples that runs past the file's end
                                  ///< (refused by check_container; kept for its message)
};

namespace detail {

inline std::string hex4(std::uint64_t v) {
  static const char* digits = "0123456789ABCDEF";
  std::string s = "0x";
  for (int shift = 12; shift >= 0; shift -= 4) s += digits[(v >> shift) & 0xF];
  return s;
}

// Bounds the walks on hostile files; real captures have a handful of chunks and a LIST chunk
// a few dozen entries, so hitting either bound is refused rather than left half checked.
inline constexpr std::uint64_t kMaxChunks = 65536;
inline constexpr std::uint64_t kMaxListSteps = std::uint64_t{1} << 20;

// The parts of the file libsndfile's WAV header parser may read: everything but the sample
// data. A LIST chunk anywhere in them is checked, not only at the places where this walk
// finds chunks, in case libsndfile's walk and ours ever part.
struct Region {
  std::uint64_t from = 0, to = 0;
};

class Checker {
 public:
  Checker(HeaderReader& in, std::optional<std::uint64_t> file_size, const std::string& shown)
      : in_(in),
        end_(file_size.value_or(std::numeric_limits<std::uint64_t>::max())),
        sized_(file_size.has_value()),
        shown_(shown) {}

  [[noreturn]] void refuse(std::uint64_t at, const std::string& message) const {
    throw InputError(shown_, InputLocation::at_byte(at), message);
  }

  std::uint64_t u32(const unsigned char* p) const { return big_ ? be(p, 4) : le(p, 4); }
  std::uint64_t u16(const unsigned char* p) const { return big_ ? be(p, 2) : le(p, 2); }

  // --- RIFF WAVE (Microsoft/IBM Multimedia Programming Interface and Data Specifications 1.0)
  // and its 64-bit successors RF64 (EBU Tech 3306) and BW64 (ITU-R BS.2088): 4-byte ids, 32-bit
  // sizes padded to even; RF64 data size 0xFFFFFFFF defers to the 64-bit size in "ds64".
  void walk_riff(bool big_endian, bool rf64) {
    big_ = big_endian;
    std::optional<std::uint64_t> ds64_data;
    std::uint64_t ds64_field = 0;
    std::uint64_t pos = 12;
    std::uint64_t region_start = 12;
    bool data_seen = false;
    unsigned char h[8];
    for (std::uint64_t count = 0; end_ - pos >= 8 && in_.read(pos, h, 8); ++count) {
      if (count == kMaxChunks) {
        refuse(pos, "more than " + std::to_string(kMaxChunks) +
                        " chunks before this one; expected a capture's handful");
      }
      const std::uint64_t size = u32(h + 4);
      const std::uint64_t payload = pos + 8;
      const std::uint64_t left = end_ - payload;
      if (rf64 && tag_is(h, "ds64")) {
        unsigned char d[16];
        if (size >= 16 && left >= 16 && in_.read(payload, d, 16)) {
          ds64_data = le(d + 8, 8);
          ds64_field = payload + 8;
        }
      } else if (tag_is(h, "fmt ") && !facts.have_format) {
        check_wave_format(payload, std::min(size, left),
                          "'fmt ' chunk at byte " + std::to_string(pos));
      } else if (tag_is(h, "LIST")) {
        check_list_entries(pos, size);
      } else if (tag_is(h, "data") && !data_seen) {
        data_seen = true;
        DataExtent e{payload, size, "'data' chunk", pos + 4};
        bool open = size == 0xFFFFFFFFu;
        if (rf64 && open && ds64_data) {
          e.bytes = *ds64_data;
          e.chunk = "'ds64' chunk";
          e.size_field = ds64_field;
          open = false;
        }
        regions_.push_back({region_start, payload});
        region_start = end_;
        // A streaming writer's open length runs the samples to the end; a length beyond the
        // end is for the truncation check.
        if (open) break;
        facts.extent = e;
        if (e.bytes > left) break;
        pos = payload + e.bytes;
        if ((e.bytes & 1u) && pos < end_) ++pos;
        region_start = pos;
        continue;
      }
      // RF64 may give a chunk's size in the 'ds64' table instead (EBU Tech 3306): not followed.
      if (rf64 && size == 0xFFFFFFFFu) break;
      if (size > left) {
        if (!data_seen) facts.overrun = overrun_text(fourcc_text(h), pos, size, left);
        break;
      }
      pos = payload + size;
      if ((size & 1u) && pos < end_) ++pos;
    }
    if (region_start < end_) regions_.push_back({region_start, end_});
    scan_for_lists();
  }

  // A chunk before the samples that claims more bytes than the file has left.
  std::string overrun_text(const std::string& id, std::uint64_t pos, std::uint64_t size,
                           std::uint64_t left) const {
    return "the " + id + " chunk at byte " + std::to_string(pos) + " declares " +
           std::to_string(size) + " bytes, but the file ends " + std::to_string(left) +
           " bytes after its header (at byte " + std::to_string(end_) +
           "); expected every chunk before the samples to end within the file";
  }

  // --- Sony Wave64: 16-byte GUID ids, 64-bit little-endian sizes that include the 24-byte chunk
  // header, chunks aligned to 8 bytes.
  void walk_w64() {
    static constexpr std::array<unsigned char, 16> fmt_guid = {0x66, 0x6D, 0x74, 0x20, 0xF3, 0xAC,
                                                               0xD3, 0x11, 0x8C, 0xD1, 0x00, 0xC0,
                                                               0x4F, 0x8E, 0xDB, 0x8A};
    static constexpr std::array<unsigned char, 16> data_guid = {0x64, 0x61, 0x74, 0x61, 0xF3, 0xAC,
                                                                0xD3, 0x11, 0x8C, 0xD1, 0x00, 0xC0,
                                                                0x4F, 0x8E, 0xDB, 0x8A};
    big_ = false;
    std::uint64_t pos = 40;  // riff GUID, riff size, wave GUID
    unsigned char h[24];
    for (std::uint64_t count = 0; end_ - pos >= 24 && in_.read(pos, h, 24); ++count) {
      if (count == kMaxChunks) {
        refuse(pos, "more than " + std::to_string(kMaxChunks) +
                        " chunks before this one; expected a capture's handful");
      }
      const std::uint64_t size = le(h + 16, 8);
      const std::uint64_t left = end_ - pos;
      const bool is_data = std::memcmp(h, data_guid.data(), 16) == 0;
      if (size < 24) {
        facts.overrun = "the chunk at byte " + std::to_string(pos) + " declares " +
                        std::to_string(size) +
                        " bytes, less than its own 24-byte header; expected a size that covers "
                        "the header and the chunk's data";
        return;
      }
      if (is_data) {
        facts.extent = DataExtent{pos + 24, size - 24, "'data' chunk", pos + 16};
        return;
      }
      if (std::memcmp(h, fmt_guid.data(), 16) == 0 && !facts.have_format) {
        check_wave_format(pos + 24, std::min(size, left) - 24,
                          "'fmt ' chunk at byte " + std::to_string(pos));
      }
      if (size > left) {
        facts.overrun = "the chunk at byte " + std::to_string(pos) + " declares " +
                        std::to_string(size) + " bytes, but the file ends " + std::to_string(left) +
                        " bytes after its start (at byte " + std::to_string(end_) +
                        "); expected every chunk before the samples to end within the file";
        return;
      }
      const std::uint64_t step = size + (8 - size % 8) % 8;
      if (step < size || step > left) return;  // the last chunk, its padding cut off
      pos += step;
    }
  }

  // --- AIFF / AIFF-C (Apple, Audio Interchange File Format 1.3 and the AIFF-C draft of
  // 1991): big-endian sizes padded to even; "COMM" describes the samples, "SSND" holds them
  // after an 8-byte offset/blockSize pair.
  void walk_aiff(bool aifc) {
    big_ = true;
    std::uint64_t pos = 12;
    std::uint64_t frames_field = 0;
    std::optional<std::uint64_t> frames;
    unsigned char h[8];
    for (std::uint64_t count = 0; end_ - pos >= 8 && in_.read(pos, h, 8); ++count) {
      if (count == kMaxChunks) {
        refuse(pos, "more than " + std::to_string(kMaxChunks) +
                        " chunks before this one; expected a capture's handful");
      }
      const std::uint64_t size = be(h + 4, 4);
      const std::uint64_t payload = pos + 8;
      const std::uint64_t left = end_ - payload;
      if (tag_is(h, "COMM") && !facts.have_format) {
        frames = check_comm(pos, std::min(size, left), aifc);
        frames_field = payload + 2;
      } else if (tag_is(h, "SSND") && !facts.extent) {
        if (size < 8) {
          refuse(pos + 4, "the 'SSND' chunk at byte " + std::to_string(pos) + " declares " +
                              std::to_string(size) +
                              " bytes; expected at least its 8-byte offset and block size");
        }
        unsigned char o[4];
        if (left < 8 || !in_.read(payload, o, 4)) {
          // Cut inside the offset and block size: the samples would start 8 bytes in at the
          // earliest, and the truncation check says what is missing.
          facts.extent = DataExtent{payload + 8, size - 8, "'SSND' chunk", pos + 4};
          break;
        }
        const std::uint64_t skip = be(o, 4);
        if (skip > size - 8) {
          refuse(payload, "the 'SSND' chunk at byte " + std::to_string(pos) + " puts its samples " +
                              std::to_string(skip) + " bytes after its header, past its own end (" +
                              std::to_string(size) + " bytes); expected an offset of at most " +
                              std::to_string(size - 8));
        }
        facts.extent = DataExtent{payload + 8 + skip, size - 8 - skip, "'SSND' chunk", pos + 4};
        if (size > left) break;  // cut short: the truncation check says so
      }
      if (size > left) {
        if (!facts.extent) facts.overrun = overrun_text(fourcc_text(h), pos, size, left);
        break;
      }
      pos = payload + size;
      if ((size & 1u) && pos < end_) ++pos;
    }
    check_truncation();
    check_overrun();
    if (!frames || !facts.extent || facts.frame_bytes == 0) return;
    // COMM's numSampleFrames against what SSND holds: both are claims, and libsndfile takes
    // the smaller without a word. Products stay far below 2^64 (2^32 frames × 8 KiB frames).
    const DataExtent& e = *facts.extent;
    const std::uint64_t claimed = *frames * facts.frame_bytes;
    if (claimed > e.bytes) {
      refuse(frames_field, "the 'COMM' chunk claims " + std::to_string(*frames) + " frames (" +
                               std::to_string(claimed) + " bytes of samples), but the " + e.chunk +
                               " holds " + std::to_string(e.bytes) + " bytes (" +
                               std::to_string(e.bytes / facts.frame_bytes) +
                               " frames); expected no more frames than the samples hold");
    }
  }

  // The declared sample data against the file's size, then at least one whole frame in it.
  void check_truncation() {
    if (!facts.extent) return;
    const DataExtent& e = *facts.extent;
    if (sized_ && (e.offset > end_ || e.bytes > end_ - e.offset)) {
      const std::uint64_t present = end_ > e.offset ? end_ - e.offset : 0;
      refuse(end_, "truncated file: it ends at byte " + std::to_string(end_) +
                       ", inside the sample data; the " + e.chunk + " promises " +
                       std::to_string(e.bytes) + " bytes from byte " + std::to_string(e.offset) +
                       " (to byte " + sum_text(e.offset, e.bytes) + "); " +
                       std::to_string(present) + " bytes present, " +
                       std::to_string(e.bytes - present) + " missing");
    }
    if (facts.frame_bytes > 0 && e.bytes < facts.frame_bytes) {
      refuse(e.size_field,
             "the " + std::string(e.chunk) + " declares " + std::to_string(e.bytes) +
                 " bytes of samples, less than one frame (" + std::to_string(facts.frame_bytes) +
                 " bytes: every channel once); expected at least one frame (a recorder that "
                 "stopped before finishing its header leaves 0 here)");
    }
  }

  // A chunk before the samples that runs past the end of the file: a header cut short, or a
  // size that hides what follows it (libsndfile then searches on by guesses of its own). The
  // place is byte 0, the header as a whole, as for any other damaged header.
  void check_overrun() const {
    if (facts.overrun.empty()) return;
    refuse(0, "damaged sound file header: " + facts.overrun);
  }

  ContainerFacts facts;

 private:
  // The WAVE format chunk (WAVEFORMATEX, and WAVEFORMATEXTENSIBLE of Microsoft's "Multiple
  // channel audio data and WAVE files", 2007): tag 2, channels 2, rate 4, bytes/s 4, block
  // align 2, bits 2 [, cbSize 2, valid bits 2, channel mask 4, subformat GUID 16].
  void check_wave_format(std::uint64_t at, std::uint64_t size, const std::string& where) {
    unsigned char f[40] = {};
    const std::size_t n = static_cast<std::size_t>(std::min<std::uint64_t>(size, 40));
    if (n < 14 || !in_.read(at, f, n)) return;  // too short to describe samples: libsndfile says
    const std::uint64_t tag = u16(f);
    const std::uint64_t channels = u16(f + 2);
    const std::uint64_t rate = u32(f + 4);
    const std::uint64_t align = u16(f + 12);
    facts.channels_field = at + 2;
    facts.rate_field = at + 4;
    facts.format_field = at;
    check_channels(channels, at + 2, where);
    if (rate == 0) {
      refuse(at + 4, "the " + where + " gives a sample rate of 0 Hz; expected " + rate_range());
    }
    if (align == 0) {
      refuse(at + 12, "the " + where +
                          " gives a block align of 0; expected the bytes of one frame "
                          "(channels × bytes per sample)");
    }
    if (n < 16) return;
    const std::uint64_t bits = u16(f + 14);
    facts.have_format = true;
    facts.format_text = "format tag " + hex4(tag) + " (" + std::to_string(bits) +
                        " bits per sample, block align " + std::to_string(align) + ")";
    // WAVE_FORMAT_EXTENSIBLE names the encoding by a GUID whose first two bytes are the old
    // tag, the rest KSDATAFORMAT_SUBTYPE's fixed tail (ksmedia.h); ambisonic B-format uses
    // another tail (libsndfile reads both).
    std::uint64_t kind = tag;
    if (tag == 0xFFFE) {
      static constexpr unsigned char ks_tail[14] = {0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80,
                                                    0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71};
      static constexpr unsigned char bformat_tail[14] = {0x00, 0x00, 0x21, 0x07, 0xD3, 0x11, 0x86,
                                                         0x44, 0xC8, 0xC1, 0xCA, 0x00, 0x00, 0x00};
      kind = 0;
      if (n >= 40 && u16(f + 16) >= 22 &&
          (std::memcmp(f + 26, ks_tail, 14) == 0 || std::memcmp(f + 26, bformat_tail, 14) == 0)) {
        kind = u16(f + 24);
      }
    }
    std::uint64_t bytes_per_sample = 0;
    if (kind == 1) {
      if (bits < 1 || bits > 32) {
        refuse(at + 14, "the " + where + " gives " + std::to_string(bits) +
                            " bits per sample; expected 1 to 32 for integer PCM");
      }
      bytes_per_sample = (bits + 7) / 8;
    } else if (kind == 3) {
      if (bits != 32 && bits != 64) {
        refuse(at + 14, "the " + where + " gives " + std::to_string(bits) +
                            " bits per sample; expected 32 or 64 for IEEE float");
      }
      bytes_per_sample = bits / 8;
    } else if (kind == 6 || kind == 7) {
      if (bits != 8) {
        refuse(at + 14, "the " + where + " gives " + std::to_string(bits) +
                            " bits per sample; expected 8 for A-law or µ-law");
      }
      bytes_per_sample = 1;
    } else {
      return;  // compressed or unknown: libsndfile decides, and a refusal names the tag
    }
    facts.format_known = true;
    facts.frame_bytes = channels * bytes_per_sample;
    if (align != facts.frame_bytes) {
      refuse(at + 12, "the " + where + " gives a block align of " + std::to_string(align) +
                          " bytes, but " + std::to_string(channels) + " channels × " +
                          std::to_string(bytes_per_sample) + " bytes per sample (" +
                          std::to_string(bits) + " bits) make " +
                          std::to_string(facts.frame_bytes) + "; expected " +
                          std::to_string(facts.frame_bytes));
    }
  }

  void check_channels(std::uint64_t channels, std::uint64_t at, const std::string& where) const {
    if (channels < 1 || channels > kMaxChannels) {
      refuse(at, "the " + where + " gives " + std::to_string(channels) +
                     " channels; expected 1 to " + std::to_string(kMaxChannels));
    }
  }

  static std::string rate_range() { return "a sample rate from 1 Hz to 100 GHz"; }

  // AIFF "COMM": numChannels 2 (signed), numSampleFrames 4, sampleSize 2 (signed), sampleRate
  // 10 (IEEE 754 80-bit extended: sign and 15-bit exponent biased by 16383, then a 64-bit
  // mantissa whose top bit is the explicit integer bit); AIFF-C adds compressionType 4 and a
  // name. Returns numSampleFrames when the chunk is whole.
  std::optional<std::uint64_t> check_comm(std::uint64_t pos, std::uint64_t size, bool aifc) {
    const std::uint64_t at = pos + 8;
    const std::string where = "'COMM' chunk at byte " + std::to_string(pos);
    unsigned char c[22] = {'N', 'O', 'N', 'E'};
    if (size < 18 || !in_.read(at, c, 18)) return std::nullopt;
    const bool named = aifc && size >= 22 && in_.read(at + 18, c + 18, 4);
    const auto channels = static_cast<std::int16_t>(be(c, 2));
    const std::uint64_t frames = be(c + 2, 4);
    const auto bits = static_cast<std::int16_t>(be(c + 6, 2));
    facts.channels_field = at;
    facts.rate_field = at + 8;
    facts.format_field = named ? at + 18 : at + 6;
    if (channels < 1) {
      refuse(at, "the " + where + " gives " + std::to_string(channels) +
                     " channels; expected 1 to " + std::to_string(kMaxChannels));
    }
    check_channels(static_cast<std::uint64_t>(channels), at, where);
    check_extended_rate(c + 8, at + 8, where);

    facts.have_format = true;
    std::string compression = "NONE";
    if (named) compression.assign(reinterpret_cast<const char*>(c + 18), 4);
    facts.format_text = (named ? "compression type " + fourcc_text(c + 18) : "integer PCM") + " (" +
                        std::to_string(bits) + " bits per sample)";
    std::uint64_t bytes_per_sample = 0;
    if (compression == "NONE" || compression == "twos" || compression == "sowt" ||
        compression == "raw ") {
      if (bits < 1 || bits > 32) {
        refuse(at + 6, "the " + where + " gives " + std::to_string(bits) +
                           " bits per sample; expected 1 to 32 for integer PCM");
      }
      bytes_per_sample = static_cast<std::uint64_t>(bits + 7) / 8;
    } else if (compression == "fl32" || compression == "FL32") {
      bytes_per_sample = 4;
    } else if (compression == "fl64" || compression == "FL64") {
      bytes_per_sample = 8;
    } else {
      return frames;  // companded or compressed: no fixed frame size to check
    }
    facts.format_known = true;
    facts.frame_bytes = static_cast<std::uint64_t>(channels) * bytes_per_sample;
    return frames;
  }

  // The 80-bit rate, decoded exactly: its value (as a double, exact for every whole rate up to
  // 2^53) and whether it is a whole number of hertz.
  void check_extended_rate(const unsigned char* r, std::uint64_t at, const std::string& where) {
    const bool negative = (r[0] & 0x80) != 0;
    const int exponent = static_cast<int>(be(r, 2) & 0x7FFF);
    const std::uint64_t mantissa = be(r + 2, 8);
    facts.rate_field = at;
    if (exponent == 0x7FFF) {
      refuse(at, "the " + where +
                     " gives a sample rate that is not a number (an 80-bit infinity or NaN); "
                     "expected " +
                     rate_range());
    }
    const double value =
        mantissa == 0 ? 0.0 : std::ldexp(static_cast<double>(mantissa), exponent - 16383 - 63);
    const int e = exponent - 16383;  // value = mantissa · 2^(e − 63)
    bool whole = true;
    if (mantissa != 0) {
      if (e < 0) {
        whole = false;
      } else if (e < 63) {
        whole = (mantissa << (e + 1)) == 0;  // no bits below the binary point
      }
    }
    if (negative && value != 0.0) {
      refuse(at, "the " + where + " gives a sample rate of -" + number_text(value) +
                     " Hz; expected " + rate_range());
    }
    if (!(value >= kMinSampleRateHz) || value > kMaxSampleRateHz) {
      refuse(at, "the " + where + " gives a sample rate of " + number_text(value) +
                     " Hz; expected " + rate_range());
    }
    facts.header_rate_hz = value;
    facts.header_rate_whole = whole;
  }

  // A LIST chunk's entries as the RIFF specification lays them out (a 4-byte list type, then
  // sub-chunks of id, size and data padded to even), each inside its LIST. The last entry's
  // pad byte may lie outside the LIST's size; four zero bytes where an id belongs end the walk,
  // as recorders fill unused LIST space with zeros (libsndfile skips the rest there too).
  void check_list_entries(std::uint64_t pos, std::uint64_t declared) {
    if (declared < 4) return;
    const std::uint64_t payload = pos + 8;
    unsigned char type[4];
    if (!in_.read(payload, type, 4)) return;
    std::uint64_t used = 4;
    unsigned char h[8];
    for (std::uint64_t k = 0; declared - used >= 8 && in_.read(payload + used, h, 8); ++k) {
      if (k == kMaxListSteps) {
        refuse(payload + used, "the LIST chunk at byte " + std::to_string(pos) +
                                   " holds more than " + std::to_string(kMaxListSteps) +
                                   " entries; expected a list of tags");
      }
      if (be(h, 4) == 0) return;
      const std::uint64_t size = u32(h + 4);
      const std::uint64_t left = declared - used - 8;
      if (size > left) {
        refuse(payload + used + 4,
               "the LIST chunk at byte " + std::to_string(pos) + " (list type " +
                   fourcc_text(type) + ", " + std::to_string(declared) +
                   " bytes) holds a sub-chunk " + fourcc_text(h) + " at byte " +
                   std::to_string(payload + used) + " that claims " + std::to_string(size) +
                   " bytes, but only " + std::to_string(left) +
                   " bytes of the LIST follow its header; expected sub-chunks that fit inside "
                   "their LIST chunk");
      }
      used += 8 + size + (size & 1u);
      if (used > declared) return;
    }
  }

  // libsndfile 1.2.0 reads a LIST chunk in wavlike_subchunk_parse (src/wavlike.c): a 4-byte
  // marker at a time; "INFO" and "adtl" stand alone, "exif" goes to its Exif reader, zero ends
  // the list, the I??? text tags, "labl" and "note"/"ltxt"/"DISP" have bounded lengths, and any
  // other marker is followed by a size that is skipped. Its byte count is a uint32_t, and the
  // test for "too big" is `bytesread + chunk_size > chunk_length` in 32 bits: a size that
  // carries that sum past 2^32 passes the test and moves the count back or not at all, and
  // sf_open never returns (measured: sizes 0xFFFFFFF4 and 0xFFFFFFF8 after "INFO" hang it in a
  // 56-byte file). This replays that loop on the file's bytes and refuses such a size.
  void check_list_parse(std::uint64_t pos) {
    unsigned char h[8];
    if (!in_.read(pos + 4, h, 4)) return;
    const std::uint64_t declared = u32(h);
    if (declared <= 8) return;  // its "weird length" path: one marker, no loop
    const std::uint64_t payload = pos + 8;
    if (payload >= end_) return;
    const std::uint64_t length = std::min(declared, end_ - payload);  // clipped to the file
    std::uint64_t count = 0;                                          // libsndfile's `bytesread`
    for (std::uint64_t step = 0; count < length; ++step) {
      if (step == kMaxListSteps) {
        refuse(payload + count, "the LIST chunk at byte " + std::to_string(pos) +
                                    " holds more than " + std::to_string(kMaxListSteps) +
                                    " entries; expected a list of tags");
      }
      unsigned char m[8];
      if (!in_.read(payload + count, m, 4)) return;  // the file ends: the loop stops
      count += 4;
      if (tag_is(m, "INFO") || tag_is(m, "adtl")) continue;
      // The Exif reader advances at least 4 bytes a step and refuses strings of 4 KiB or more.
      if (tag_is(m, "exif") || be(m, 4) == 0) return;
      if (tag_is(m, "labl")) {
        if (!in_.read(payload + count, m, 8)) return;
        count += 8;
        std::uint32_t size = static_cast<std::uint32_t>(u32(m)) - 4u;
        size += size & 1u;
        if (size < 1 || size >= 2048 || count + size > length) return;
        count += size;
        continue;
      }
      if (!in_.read(payload + count, m + 4, 4)) return;
      const std::uint64_t size_at = payload + count;
      count += 4;
      const std::uint64_t size = u32(m + 4);
      const std::uint64_t padded = size + (size & 1u);
      if (count + padded > 0xFFFFFFFFu) {
        refuse(size_at, "the LIST chunk at byte " + std::to_string(pos) + " (" +
                            std::to_string(declared) + " bytes) holds an entry " + fourcc_text(m) +
                            " whose size, " + std::to_string(size) +
                            " bytes, carries libsndfile's 32-bit count of the list past 4 GiB: "
                            "its reader would loop forever; expected sub-chunks that fit "
                            "inside their LIST chunk");
      }
      if (is_text_tag(m) && padded >= 2048) return;  // "too big": it skips to the end
      if (tag_is(m, "note") || tag_is(m, "ltxt") || tag_is(m, "DISP")) return;
      if (count + padded > length) return;
      count += padded;
    }
  }

  static bool is_text_tag(const unsigned char* m) {
    for (const char* t : {"ISFT", "ICOP", "IARL", "IART", "ICMT", "ICRD", "IENG", "IGNR", "INAM",
                          "IPRD", "ISBJ", "ISRC", "IAUT", "ITRK"}) {
      if (tag_is(m, t)) return true;
    }
    return false;
  }

  // Every "LIST" in the parts libsndfile's header parser reads, in steps of 64 KiB that overlap
  // by 3 bytes so that no marker is split.
  void scan_for_lists() {
    constexpr std::size_t kStep = std::size_t{1} << 16;
    std::vector<unsigned char> buf(kStep + 3);
    for (const Region& r : regions_) {
      for (std::uint64_t at = r.from; at < r.to;) {
        const std::size_t want =
            static_cast<std::size_t>(std::min<std::uint64_t>(kStep + 3, r.to - at));
        const std::size_t got = in_.read_upto(at, buf.data(), want);
        for (std::size_t i = 0; i + 4 <= got; ++i) {
          if (buf[i] == 'L' && tag_is(buf.data() + i, "LIST")) check_list_parse(at + i);
        }
        if (got < want || got <= 3) break;  // the end of the file or of the region
        at += got - 3;
      }
    }
  }

  HeaderReader& in_;
  std::uint64_t end_;
  bool sized_;
  const std::string& shown_;
  bool big_ = false;
  std::vector<Region> regions_;
};

}  // namespace detail

/// Walks the header of a WAV, RIFX, RF64, BW64, W64, AIFF or AIFF-C file and refuses, with the
/// byte offset of the field at fault, what must not reach libsndfile: channel counts outside
/// 1…1024, sample rates outside 1 Hz…100 GHz, bits per sample and block aligns that do not
/// describe the samples, data that promises more bytes than the file holds or less than one
/// frame, frame counts beyond the data, and LIST chunks that would make libsndfile loop
/// forever. Reads headers only. `file_size` is unset when the input's size is unknown.
/// Other containers (FLAC, Ogg, CAF, …) pass unchecked, for libsndfile to judge.
inline ContainerFacts check_container(HeaderReader& in, std::optional<std::uint64_t> file_size,
                                      const std::string& shown) {
  detail::Checker check(in, file_size, shown);
  unsigned char h[16];
  if (!in.ok() || !in.read(0, h, 12)) return check.facts;
  const bool wave = tag_is(h + 8, "WAVE");
  if (tag_is(h, "RIFF") && wave) {
    check.walk_riff(false, false);
  } else if (tag_is(h, "RIFX") && wave) {
    check.walk_riff(true, false);
  } else if ((tag_is(h, "RF64") || tag_is(h, "BW64")) && wave) {
    check.walk_riff(false, true);
  } else if (tag_is(h, "FORM") && (tag_is(h + 8, "AIFF") || tag_is(h + 8, "AIFC"))) {
    check.walk_aiff(tag_is(h + 8, "AIFC"));
    return check.facts;  // its truncation check is made in the walk, before the frame count's
  } else if (tag_is(h, "riff")) {
    // W64's riff GUID; libsndfile takes the file for W64 by its first 4 bytes alone.
    check.walk_w64();
  } else {
    return check.facts;
  }
  check.check_truncation();
  check.check_overrun();
  return check.facts;
}

/// True if the file starts like a container libsndfile reads, so that a failed open means a
/// damaged header rather than a file of another kind.
inline bool has_sound_magic(HeaderReader& in) {
  unsigned char h[16];
  if (!in.ok() || !in.read(0, h, 4)) return false;
  // "riff" opens W64's GUID: libsndfile takes a file for W64 by those 4 bytes alone.
  for (const char* tag :
       {"RIFF", "RIFX", "RF64", "BW64", "FORM", "fLaC", "OggS", "caff", ".snd", "riff"}) {
    if (tag_is(h, tag)) return true;
  }
  return false;
}

}  // namespace lopside::sound_checks
