#pragma once
// Compressed test data (gzip, xz, zstd) made with the same libraries the reader decodes with,
// for the tests of compressed captures (stream_input_test, hostile_text_test).
#include <gtest/gtest.h>
#include <lzma.h>
#include <zlib.h>
#include <zstd.h>

#include <cstdint>
#include <string>

namespace lopside::test {

inline std::string gzip_bytes(const std::string& in) {
  z_stream z{};
  // windowBits 16 + 15: a gzip wrapper (zlib manual, deflateInit2).
  EXPECT_EQ(deflateInit2(&z, 6, Z_DEFLATED, 16 + MAX_WBITS, 8, Z_DEFAULT_STRATEGY), Z_OK);
  std::string out(deflateBound(&z, static_cast<uLong>(in.size())) + 64, '\0');
  z.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(in.data()));
  z.avail_in = static_cast<uInt>(in.size());
  z.next_out = reinterpret_cast<Bytef*>(out.data());
  z.avail_out = static_cast<uInt>(out.size());
  EXPECT_EQ(deflate(&z, Z_FINISH), Z_STREAM_END);
  out.resize(z.total_out);
  deflateEnd(&z);
  return out;
}

inline std::string xz_bytes(const std::string& in) {
  std::string out(lzma_stream_buffer_bound(in.size()), '\0');
  std::size_t pos = 0;
  EXPECT_EQ(lzma_easy_buffer_encode(6, LZMA_CHECK_CRC64, nullptr,
                                    reinterpret_cast<const std::uint8_t*>(in.data()), in.size(),
                                    reinterpret_cast<std::uint8_t*>(out.data()), &pos, out.size()),
            LZMA_OK);
  out.resize(pos);
  return out;
}

inline std::string zstd_bytes(const std::string& in) {
  std::string out(ZSTD_compressBound(in.size()), '\0');
  const std::size_t n = ZSTD_compress(out.data(), out.size(), in.data(), in.size(), 3);
  EXPECT_FALSE(ZSTD_isError(n));
  out.resize(n);
  return out;
}

}  // namespace lopside::test
