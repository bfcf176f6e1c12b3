#pragma once
/// \file
/// Byte streams under the text reader: a file descriptor read strictly forward (pipes, FIFOs,
/// standard input, `/dev/fd/N`), on-the-fly decompression (gzip, xz, zstd) and UTF-16 → UTF-8
/// transcoding. Each layer is a std::streambuf with a fixed buffer that pulls from the layer
/// below, so memory does not grow with the input and nothing ever seeks. The first bytes of any
/// layer can be looked at with `peek()` without consuming them: that is how `open_capture()`
/// sniffs magic numbers on a pipe and still hands every byte to the reader.

#include <array>
#include <cstddef>
#include <cstdint>
#include <memory>
#include <streambuf>
#include <string>
#include <string_view>
#include <vector>

namespace lopside {

/// A forward-only input streambuf over one fixed buffer that `fill()` refills.
class ChunkedInputBuf : public std::streambuf {
 public:
  /// `buffer_bytes`: size of the fixed buffer [bytes], at least 4 (a UTF-8 sequence).
  explicit ChunkedInputBuf(std::size_t buffer_bytes);

  /// The next `n` bytes without consuming them (n is capped at the buffer size); shorter only
  /// at the end of the input. The view is valid until the next read from this buffer.
  std::string_view peek(std::size_t n);

 protected:
  /// Writes between 1 and `capacity` bytes to `out` and returns their count; 0 only at the end
  /// of the input. Throws InputError on bad input.
  virtual std::size_t fill(char* out, std::size_t capacity) = 0;
  /// Bytes produced by fill() and not yet consumed by the reader.
  std::size_t buffered() const { return static_cast<std::size_t>(egptr() - gptr()); }

  int_type underflow() override;

 private:
  std::vector<char> buffer_;
  bool ended_ = false;
};

/// Reads a file descriptor forward in fixed chunks; it never seeks, so pipes and FIFOs work.
/// Does not close the descriptor.
class FdInputBuf final : public ChunkedInputBuf {
 public:
  /// `display_path` names the input in messages.
  FdInputBuf(int fd, std::string display_path, std::size_t buffer_bytes = 1 << 16);
  /// Bytes the reader above has taken from the descriptor (read minus still buffered).
  std::uint64_t bytes_consumed() const { return bytes_read_ - buffered(); }

 protected:
  std::size_t fill(char* out, std::size_t capacity) override;

 private:
  int fd_;
  std::string path_;
  std::uint64_t bytes_read_ = 0;
};

/// Compression formats recognised by their magic numbers.
enum class Compression { none, gzip, xz, zstd };

/// "gzip", "xz", "zstd" or "none".
const char* to_string(Compression c) noexcept;

/// The compression format whose magic number `head` starts with: 1F 8B (gzip, RFC 1952 §2.3.1),
/// FD 37 7A 58 5A 00 (xz, The .xz File Format 1.1.0 §2.1.1.1), 28 B5 2F FD (zstd frame,
/// RFC 8878 §3.1.1). Needs the first 6 bytes for xz.
Compression detect_compression(std::string_view head) noexcept;

/// A decompressing layer over `compressed` (which must outlive it). Concatenated gzip members,
/// xz streams and zstd frames are decoded one after the other, as the command-line tools do. A
/// corrupt or truncated stream throws InputError naming `display_path`, the compressed byte
/// offset and what was expected.
std::unique_ptr<ChunkedInputBuf> make_decompressor(Compression format, std::streambuf& compressed,
                                                   std::string display_path,
                                                   std::size_t buffer_bytes = 1 << 16);

/// Byte order of UTF-16 text, from its byte order mark U+FEFF: FF FE little endian, FE FF big
/// endian (Unicode 15.0 §3.10, D98: the UTF-16 encoding scheme).
enum class Utf16Order { little, big };

/// Transcodes UTF-16 (its byte order mark already consumed) to UTF-8 (Unicode 15.0 §3.9: D91
/// the UTF-16 encoding form, D92 and Table 3-6 the UTF-8 bit distribution). A surrogate pair
/// becomes one 4-byte sequence; an unpaired surrogate or a lone trailing byte is ill-formed and
/// becomes U+FFFD, the replacement §3.9 recommends for ill-formed code unit sequences.
class Utf16ToUtf8Buf final : public ChunkedInputBuf {
 public:
  Utf16ToUtf8Buf(std::streambuf& utf16, Utf16Order order, std::size_t buffer_bytes = 1 << 16);

 protected:
  std::size_t fill(char* out, std::size_t capacity) override;

 private:
  /// Next code unit, or -1 at the end; sets `odd_tail_` when one byte is left over.
  long next_unit();
  /// Converts one code unit to `out` (room for 6 bytes: a replaced surrogate and a code point,
  /// or two replacements at the end); returns the bytes written, possibly 0.
  std::size_t step(char* out);

  std::streambuf& in_;
  Utf16Order order_;
  std::vector<char> raw_;
  std::size_t raw_pos_ = 0;
  std::size_t raw_len_ = 0;
  bool in_ended_ = false;
  bool odd_tail_ = false;
  long pending_high_ = -1;  ///< a high surrogate waiting for its low half, or -1
  bool done_ = false;
  std::array<char, 6> spill_{};  ///< a step's output that did not fit the caller's room
  std::size_t spill_pos_ = 0;
  std::size_t spill_len_ = 0;
};

}  // namespace lopside
