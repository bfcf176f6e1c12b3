// The byte-stream layers under the text reader: a file descriptor read forward, gzip/xz/zstd
// decompression and UTF-16 → UTF-8 transcoding, each a std::streambuf with one fixed buffer.
// zlib, liblzma and libzstd are included here only.
#include "lopside/input_stream.hpp"

#include <lzma.h>
#include <unistd.h>
#include <zlib.h>
#include <zstd.h>

#include <algorithm>
#include <cerrno>
#include <climits>
#include <cstring>
#include <limits>
#include <new>

#include "lopside/error.hpp"

namespace lopside {

// ---------------------------------------------------------------------------------------------
// ChunkedInputBuf

ChunkedInputBuf::ChunkedInputBuf(std::size_t buffer_bytes)
    : buffer_(std::max<std::size_t>(buffer_bytes, 4)) {}

std::string_view ChunkedInputBuf::peek(std::size_t n) {
  n = std::min(n, buffer_.size());
  while (buffered() < n && !ended_) {
    // Move what is left to the front so that the look-ahead fits in the one buffer.
    const std::size_t have = buffered();
    if (have > 0) std::memmove(buffer_.data(), gptr(), have);
    const std::size_t got = fill(buffer_.data() + have, buffer_.size() - have);
    if (got == 0) ended_ = true;
    setg(buffer_.data(), buffer_.data(), buffer_.data() + have + got);
  }
  return {gptr(), std::min(n, buffered())};
}

ChunkedInputBuf::int_type ChunkedInputBuf::underflow() {
  if (gptr() < egptr()) return traits_type::to_int_type(*gptr());
  if (ended_) return traits_type::eof();
  const std::size_t got = fill(buffer_.data(), buffer_.size());
  if (got == 0) {
    ended_ = true;
    return traits_type::eof();
  }
  setg(buffer_.data(), buffer_.data(), buffer_.data() + got);
  return traits_type::to_int_type(*gptr());
}

// ---------------------------------------------------------------------------------------------
// FdInputBuf

FdInputBuf::FdInputBuf(int fd, std::string display_path, std::size_t buffer_bytes)
    : ChunkedInputBuf(buffer_bytes), fd_(fd), path_(std::move(display_path)) {}

std::size_t FdInputBuf::fill(char* out, std::size_t capacity) {
  for (;;) {
    const ssize_t got = ::read(fd_, out, capacity);
    if (got >= 0) {
      bytes_read_ += static_cast<std::uint64_t>(got);
      return static_cast<std::size_t>(got);
    }
    if (errno == EINTR) continue;
    throw InputError(path_, InputLocation::at_byte(bytes_read_),
                     std::string("read error: ") + std::strerror(errno));
  }
}

// ---------------------------------------------------------------------------------------------
// Compression

const char* to_string(Compression c) noexcept {
  switch (c) {
    case Compression::gzip:
      return "gzip";
    case Compression::xz:
      return "xz";
    case Compression::zstd:
      return "zstd";
    case Compression::none:
      break;
  }
  return "none";
}

Compression detect_compression(std::string_view head) noexcept {
  const auto starts = [head](std::string_view magic) {
    return head.size() >= magic.size() && head.substr(0, magic.size()) == magic;
  };
  if (starts(std::string_view("\x1F\x8B", 2))) return Compression::gzip;
  if (starts(std::string_view("\xFD"
                              "7zXZ\x00",
                              6)))
    return Compression::xz;
  // A zstd frame's magic number 0xFD2FB528, little endian (RFC 8878 §3.1.1). Skippable frames
  // (0x184D2A5?) may lead a stream too, but nothing writes them before a capture's text.
  if (starts(std::string_view("\x28\xB5\x2F\xFD", 4))) return Compression::zstd;
  return Compression::none;
}

namespace {

// The shared half of the three decoders: a fixed buffer of compressed bytes pulled from the
// layer below, and the count that turns the decoder's position into a compressed byte offset.
class Decompressor : public ChunkedInputBuf {
 public:
  Decompressor(std::streambuf& in, std::string path, std::size_t buffer_bytes)
      : ChunkedInputBuf(buffer_bytes), in_(in), path_(std::move(path)), raw_(buffer_bytes) {}

 protected:
  /// Refills the compressed buffer once it is used up; false at the end of the input.
  bool pull(std::size_t& avail) {
    if (avail > 0) return true;
    if (in_ended_) return false;
    const std::streamsize got = in_.sgetn(raw_.data(), static_cast<std::streamsize>(raw_.size()));
    avail = got > 0 ? static_cast<std::size_t>(got) : 0;
    pulled_ += avail;
    if (avail == 0) in_ended_ = true;
    return avail > 0;
  }
  /// Byte offset in the compressed input of the next byte the decoder will take.
  std::uint64_t offset(std::size_t avail) const { return pulled_ - avail; }
  [[noreturn]] void fail(std::uint64_t at, const std::string& message) const {
    throw InputError(path_, InputLocation::at_byte(at), message);
  }
  /// For the message on a stream cut short: how many compressed bytes there were.
  std::string ends_at() const {
    return "the " + std::string(name()) + " data end at byte " + std::to_string(pulled_);
  }
  virtual const char* name() const = 0;

  char* raw() { return raw_.data(); }
  bool in_ended() const { return in_ended_; }

 private:
  std::streambuf& in_;
  std::string path_;
  std::vector<char> raw_;
  std::uint64_t pulled_ = 0;
  bool in_ended_ = false;
};

// gzip (RFC 1952) around deflate (RFC 1951), decoded by zlib. windowBits 16 + MAX_WBITS makes
// inflate read and check the gzip header and the CRC-32/ISIZE trailer (zlib manual,
// inflateInit2). A gzip file may hold several members one after another, and then decodes to
// their concatenation (RFC 1952 §2.2), so after each member's end inflate is reset for the next.
class GzipBuf final : public Decompressor {
 public:
  GzipBuf(std::streambuf& in, std::string path, std::size_t buffer_bytes)
      : Decompressor(in, std::move(path), buffer_bytes) {
    if (inflateInit2(&z_, 16 + MAX_WBITS) != Z_OK) throw std::bad_alloc();
  }
  ~GzipBuf() override { inflateEnd(&z_); }
  GzipBuf(const GzipBuf&) = delete;
  GzipBuf& operator=(const GzipBuf&) = delete;

 protected:
  const char* name() const override { return "gzip"; }

  std::size_t fill(char* out, std::size_t capacity) override {
    // zlib counts in uInt; our buffers are far below its range.
    z_.next_out = reinterpret_cast<Bytef*>(out);
    z_.avail_out = static_cast<uInt>(std::min<std::size_t>(capacity, UINT_MAX));
    const uInt room = z_.avail_out;
    while (z_.avail_out == room) {
      std::size_t avail = z_.avail_in;
      if (!pull(avail)) {
        if (between_members_) return 0;
        fail(offset(0), "the gzip stream is cut short: " + ends_at() +
                            ", inside the member that starts at byte " +
                            std::to_string(member_start_) +
                            "; expected the rest of its deflate data and its 8-byte CRC-32 and "
                            "size trailer (RFC 1952 §2.2)");
      }
      if (avail != z_.avail_in) {
        z_.next_in = reinterpret_cast<Bytef*>(raw());
        z_.avail_in = static_cast<uInt>(avail);
      }
      if (between_members_) {
        // More bytes after a complete member: they must be the next member.
        inflateReset(&z_);
        between_members_ = false;
        member_start_ = offset(z_.avail_in);
      }
      const int rc = inflate(&z_, Z_NO_FLUSH);
      if (rc == Z_STREAM_END) {
        between_members_ = true;
      } else if (rc == Z_DATA_ERROR) {
        const std::string why = z_.msg != nullptr ? z_.msg : "invalid data";
        const std::uint64_t at = offset(z_.avail_in);
        if (member_start_ > 0 && why == "incorrect header check") {
          fail(at, "after the gzip member that ends at byte " + std::to_string(member_start_) +
                       ", expected another member (magic 1F 8B, RFC 1952 §2.3.1) or the end of "
                       "the file (zlib: " +
                       why + ")");
        }
        fail(at, "corrupt gzip data near compressed byte " + std::to_string(at) + " (zlib: " + why +
                     "); expected a deflate stream (RFC 1951) in a gzip member (RFC 1952)");
      } else if (rc == Z_MEM_ERROR) {
        throw std::bad_alloc();
      } else if (rc != Z_OK && rc != Z_BUF_ERROR) {
        fail(offset(z_.avail_in), "gzip decoding failed (zlib error " + std::to_string(rc) + ")");
      }
    }
    return room - z_.avail_out;
  }

 private:
  z_stream z_{};
  bool between_members_ = false;
  std::uint64_t member_start_ = 0;
};

// xz (The .xz File Format 1.1.0), decoded by liblzma. LZMA_CONCATENATED decodes streams written
// one after another, as `xz -d` does (§2.2 of the format allows stream padding between them).
// The memory limit bounds what a hostile header can make the decoder allocate: 256 MiB is four
// times what the largest preset, `xz -9` with its 64 MiB dictionary, needs (xz(1), "Memory
// usage" table: 65 MiB to decompress).
class XzBuf final : public Decompressor {
 public:
  static constexpr std::uint64_t kMemoryLimit = 256u << 20;

  XzBuf(std::streambuf& in, std::string path, std::size_t buffer_bytes)
      : Decompressor(in, std::move(path), buffer_bytes) {
    if (lzma_stream_decoder(&x_, kMemoryLimit, LZMA_CONCATENATED) != LZMA_OK) {
      throw std::bad_alloc();
    }
  }
  ~XzBuf() override { lzma_end(&x_); }
  XzBuf(const XzBuf&) = delete;
  XzBuf& operator=(const XzBuf&) = delete;

 protected:
  const char* name() const override { return "xz"; }

  std::size_t fill(char* out, std::size_t capacity) override {
    if (finished_) return 0;
    x_.next_out = reinterpret_cast<std::uint8_t*>(out);
    x_.avail_out = capacity;
    while (x_.avail_out == capacity) {
      std::size_t avail = x_.avail_in;
      const bool more = pull(avail);
      if (more && avail != x_.avail_in) {
        x_.next_in = reinterpret_cast<const std::uint8_t*>(raw());
        x_.avail_in = avail;
      }
      // LZMA_FINISH once the input has ended, so that a stream cut short is reported rather
      // than waited for (liblzma base.h, lzma_code with LZMA_CONCATENATED).
      const lzma_ret rc = lzma_code(&x_, more ? LZMA_RUN : LZMA_FINISH);
      const std::uint64_t at = offset(x_.avail_in);
      switch (rc) {
        case LZMA_OK:
          break;
        case LZMA_STREAM_END:
          finished_ = true;
          return capacity - x_.avail_out;
        case LZMA_BUF_ERROR:
          fail(at, "the xz stream is cut short: " + ends_at() +
                       "; expected the rest of the block, its index and the 12-byte stream "
                       "footer (The .xz File Format 1.1.0 §2.1.2)");
        case LZMA_DATA_ERROR:
          fail(at, "corrupt xz data near compressed byte " + std::to_string(at) +
                       " (liblzma: data error or check mismatch); expected an intact xz stream "
                       "(The .xz File Format 1.1.0)");
        case LZMA_FORMAT_ERROR:
          fail(at, "not an xz stream at compressed byte " + std::to_string(at) +
                       "; expected the xz magic FD 37 7A 58 5A 00 or stream padding (The .xz File "
                       "Format 1.1.0 §2.1.1.1, §2.2)");
        case LZMA_OPTIONS_ERROR:
          fail(at, "unsupported xz options or filter at compressed byte " + std::to_string(at) +
                       "; expected a stream xz 5.4 can decode");
        case LZMA_MEMLIMIT_ERROR:
          fail(at, "the xz stream needs more than " + std::to_string(kMemoryLimit >> 20) +
                       " MiB of memory to decode (dictionary too large); expected one written "
                       "with a preset up to -9");
        case LZMA_MEM_ERROR:
          throw std::bad_alloc();
        default:
          fail(at,
               "xz decoding failed (liblzma error " + std::to_string(static_cast<int>(rc)) + ")");
      }
    }
    return capacity - x_.avail_out;
  }

 private:
  lzma_stream x_ = LZMA_STREAM_INIT;
  bool finished_ = false;
};

// zstd (RFC 8878), decoded by libzstd's streaming API. ZSTD_decompressStream runs from one
// frame into the next, so concatenated frames decode to their concatenation (§3.1), skippable
// frames are passed over; it returns 0 exactly when a frame is complete and flushed (zstd.h).
// Its default window limit (2^27 bytes, ZSTD_WINDOWLOG_LIMIT_DEFAULT) bounds memory; frames that
// need more are refused with libzstd's message.
class ZstdBuf final : public Decompressor {
 public:
  ZstdBuf(std::streambuf& in, std::string path, std::size_t buffer_bytes)
      : Decompressor(in, std::move(path), buffer_bytes), d_(ZSTD_createDStream()) {
    if (d_ == nullptr) throw std::bad_alloc();
  }
  ~ZstdBuf() override { ZSTD_freeDStream(d_); }
  ZstdBuf(const ZstdBuf&) = delete;
  ZstdBuf& operator=(const ZstdBuf&) = delete;

 protected:
  const char* name() const override { return "zstd"; }

  std::size_t fill(char* out, std::size_t capacity) override {
    ZSTD_outBuffer o{out, capacity, 0};
    while (o.pos == 0) {
      std::size_t avail = in_.size - in_.pos;
      const bool more = pull(avail);
      if (!more && last_ == 0) return 0;
      if (more && avail != in_.size - in_.pos) in_ = ZSTD_inBuffer{raw(), avail, 0};
      // Without input the call only flushes what the decoder still holds (zstd.h).
      last_ = ZSTD_decompressStream(d_, &o, &in_);
      if (ZSTD_isError(last_)) {
        // On an error libzstd leaves the input position where the call began (1.5.4), so the
        // place is given as the frame that failed and how far the decoder had been fed.
        fail(frame_start_, "corrupt zstd data in the frame that starts at compressed byte " +
                               std::to_string(frame_start_) + ", found within the first " +
                               std::to_string(offset(0)) +
                               " bytes (libzstd: " + ZSTD_getErrorName(last_) +
                               "); expected zstd frames (RFC 8878 §3.1)");
      }
      if (last_ == 0) frame_start_ = offset(in_.size - in_.pos);
      if (!more && o.pos == 0) {
        fail(offset(0), "the zstd stream is cut short: " + ends_at() +
                            ", inside a frame; expected the rest of its blocks and, if the "
                            "frame header announces one, its checksum (RFC 8878 §3.1.1)");
      }
    }
    return o.pos;
  }

 private:
  ZSTD_DStream* d_;
  ZSTD_inBuffer in_{nullptr, 0, 0};
  std::size_t last_ = 0;           // the last return of ZSTD_decompressStream: 0 = frame complete
  std::uint64_t frame_start_ = 0;  // compressed offset of the frame being decoded
};

}  // namespace

std::unique_ptr<ChunkedInputBuf> make_decompressor(Compression format, std::streambuf& compressed,
                                                   std::string display_path,
                                                   std::size_t buffer_bytes) {
  switch (format) {
    case Compression::gzip:
      return std::make_unique<GzipBuf>(compressed, std::move(display_path), buffer_bytes);
    case Compression::xz:
      return std::make_unique<XzBuf>(compressed, std::move(display_path), buffer_bytes);
    case Compression::zstd:
      return std::make_unique<ZstdBuf>(compressed, std::move(display_path), buffer_bytes);
    case Compression::none:
      break;
  }
  return nullptr;
}

// ---------------------------------------------------------------------------------------------
// UTF-16 → UTF-8

Utf16ToUtf8Buf::Utf16ToUtf8Buf(std::streambuf& utf16, Utf16Order order, std::size_t buffer_bytes)
    : ChunkedInputBuf(buffer_bytes),
      in_(utf16),
      order_(order),
      raw_(std::max<std::size_t>(buffer_bytes, 2)) {}

long Utf16ToUtf8Buf::next_unit() {
  if (raw_len_ - raw_pos_ < 2 && !in_ended_) {
    // Keep a lone byte from the previous chunk: a code unit may straddle two reads.
    const std::size_t keep = raw_len_ - raw_pos_;
    if (keep > 0) raw_[0] = raw_[raw_pos_];
    raw_pos_ = 0;
    raw_len_ = keep;
    while (raw_len_ < 2 && !in_ended_) {
      const std::streamsize got =
          in_.sgetn(raw_.data() + raw_len_, static_cast<std::streamsize>(raw_.size() - raw_len_));
      if (got <= 0) {
        in_ended_ = true;
      } else {
        raw_len_ += static_cast<std::size_t>(got);
      }
    }
  }
  if (raw_len_ - raw_pos_ < 2) {
    odd_tail_ = raw_len_ - raw_pos_ == 1;
    raw_pos_ = raw_len_;
    return -1;
  }
  const auto b0 = static_cast<unsigned char>(raw_[raw_pos_]);
  const auto b1 = static_cast<unsigned char>(raw_[raw_pos_ + 1]);
  raw_pos_ += 2;
  return order_ == Utf16Order::little ? (b1 << 8 | b0) : (b0 << 8 | b1);
}

namespace {

// UTF-8 bit distribution (Unicode 15.0 §3.9, Table 3-6).
std::size_t put_utf8(char* out, unsigned long cp) {
  const auto byte = [](unsigned long v) {
    return static_cast<char>(static_cast<unsigned char>(v));
  };
  if (cp < 0x80) {
    out[0] = byte(cp);
    return 1;
  }
  if (cp < 0x800) {
    out[0] = byte(0xC0 | (cp >> 6));
    out[1] = byte(0x80 | (cp & 0x3F));
    return 2;
  }
  if (cp < 0x10000) {
    out[0] = byte(0xE0 | (cp >> 12));
    out[1] = byte(0x80 | ((cp >> 6) & 0x3F));
    out[2] = byte(0x80 | (cp & 0x3F));
    return 3;
  }
  out[0] = byte(0xF0 | (cp >> 18));
  out[1] = byte(0x80 | ((cp >> 12) & 0x3F));
  out[2] = byte(0x80 | ((cp >> 6) & 0x3F));
  out[3] = byte(0x80 | (cp & 0x3F));
  return 4;
}

constexpr unsigned long kReplacement = 0xFFFD;

bool is_high_surrogate(long u) {
  return u >= 0xD800 && u <= 0xDBFF;
}
bool is_low_surrogate(long u) {
  return u >= 0xDC00 && u <= 0xDFFF;
}

}  // namespace

std::size_t Utf16ToUtf8Buf::step(char* out) {
  const long unit = next_unit();
  std::size_t n = 0;
  if (unit < 0) {
    if (pending_high_ >= 0) n += put_utf8(out + n, kReplacement);
    if (odd_tail_) n += put_utf8(out + n, kReplacement);
    pending_high_ = -1;
    done_ = true;
    return n;
  }
  if (pending_high_ >= 0) {
    if (is_low_surrogate(unit)) {
      // D91: a surrogate pair codes 0x10000 + (high − 0xD800)·0x400 + (low − 0xDC00).
      const auto cp = 0x10000ul + (static_cast<unsigned long>(pending_high_ - 0xD800) << 10) +
                      static_cast<unsigned long>(unit - 0xDC00);
      pending_high_ = -1;
      return put_utf8(out, cp);
    }
    n += put_utf8(out + n, kReplacement);
    pending_high_ = -1;
  }
  if (is_high_surrogate(unit)) {
    pending_high_ = unit;
  } else if (is_low_surrogate(unit)) {
    n += put_utf8(out + n, kReplacement);
  } else {
    n += put_utf8(out + n, static_cast<unsigned long>(unit));
  }
  return n;
}

std::size_t Utf16ToUtf8Buf::fill(char* out, std::size_t capacity) {
  std::size_t n = 0;
  while (n < capacity) {
    if (spill_pos_ < spill_len_) {
      const std::size_t k = std::min(capacity - n, spill_len_ - spill_pos_);
      std::memcpy(out + n, spill_.data() + spill_pos_, k);
      spill_pos_ += k;
      n += k;
    } else if (done_) {
      break;
    } else if (capacity - n >= spill_.size()) {
      n += step(out + n);  // room for the longest step: write in place
    } else {
      spill_len_ = step(spill_.data());
      spill_pos_ = 0;
    }
  }
  return n;
}

}  // namespace lopside
