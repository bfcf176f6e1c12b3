// lopside::parse_number checked from outside against the C library's strtod, the reference for
// decimal-to-binary conversion (ISO C 7.22.1.3; glibc's strtod rounds correctly to nearest in
// the "C" locale, which is the locale of a program that never calls setlocale, ISO C 7.11.1.1).
// Agreement must be bit-exact: the header promises correct rounding, not "close".

#include "lopside/number_parse.hpp"

#include <gtest/gtest.h>

#include <bit>
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <optional>
#include <random>
#include <string>
#include <vector>

#include "../src/io/number_parse_inline.hpp"

namespace {

using lopside::is_nan_or_inf_text;
using lopside::parse_number;

/// A value spread over nearly the whole binary64 range: random significand in [1, 10),
/// random decimal exponent in [−320, 307] (denormals below 2.2e−308 included, never overflow:
/// 9.99…e307 < DBL_MAX ≈ 1.797e308), random sign. Every 16th value is instead a random bit
/// pattern, so significands that decimal draws rarely hit (all 53 bits busy) occur too.
double random_value(std::mt19937_64& rng) {
  if (rng() % 16 == 0) {
    for (;;) {
      const double d = std::bit_cast<double>(rng());
      if (std::isfinite(d)) return d;
    }
  }
  std::uniform_real_distribution<double> significand(1.0, 10.0);
  std::uniform_int_distribution<int> exponent(-320, 307);
  const double v = significand(rng) * std::pow(10.0, exponent(rng));
  return (rng() & 1u) != 0 ? -v : v;
}

/// The value printed as a scope, a spreadsheet or a script might print it.
std::string random_text(std::mt19937_64& rng, double v) {
  char buf[512];
  const int precision = static_cast<int>(rng() % 21);  // 0 … 20 digits
  const bool plus = rng() % 8 == 0;                    // an explicit '+' now and then
  switch (rng() % 8) {
    case 0:
      std::snprintf(buf, sizeof buf, plus ? "%+.17g" : "%.17g", v);
      break;
    case 1:
      std::snprintf(buf, sizeof buf, plus ? "%+.6e" : "%.6e", v);
      break;
    case 2:
      // %f of 1e300 is a 301-digit integer part: long, and a good test of long inputs.
      std::snprintf(buf, sizeof buf, plus ? "%+f" : "%f", v);
      break;
    case 3:
      std::snprintf(buf, sizeof buf, plus ? "%+.*g" : "%.*g", precision, v);
      break;
    case 4:
      std::snprintf(buf, sizeof buf, plus ? "%+.*e" : "%.*e", precision, v);
      break;
    case 5:  // Excel writes 1.5E-05
      std::snprintf(buf, sizeof buf, "%.*E", precision, v);
      break;
    case 6:
      // Fixed notation only where it stays short, else the same digits in %e.
      if (std::fabs(v) < 1e15 && std::fabs(v) > 1e-15) {
        std::snprintf(buf, sizeof buf, plus ? "%+.*f" : "%.*f", precision, v);
      } else {
        std::snprintf(buf, sizeof buf, "%.*e", precision, v);
      }
      break;
    default:
      std::snprintf(buf, sizeof buf, "%.*G", precision, v);
      break;
  }
  return buf;
}

/// The reference: strtod on the '.'-decimal text, required to consume all of it.
double reference(const std::string& text) {
  char* end = nullptr;
  errno = 0;
  const double d = std::strtod(text.c_str(), &end);
  EXPECT_EQ(*end, '\0') << "strtod did not take all of '" << text << "'";
  return d;
}

std::uint64_t bits(double d) {
  return std::bit_cast<std::uint64_t>(d);
}

TEST(NumberParse, MatchesStrtodBitForBitOnAMillionRandomNumbers) {
  std::mt19937_64 rng(20240611);  // fixed seed: a failure can be replayed
  constexpr int kCount = 1'000'000;
  int mismatches = 0;
  int rejected = 0;
  for (int i = 0; i < kCount; ++i) {
    const double v = random_value(rng);
    std::string text = random_text(rng, v);
    const double want = reference(text);
    ASSERT_TRUE(std::isfinite(want)) << text;

    const std::optional<double> got = parse_number(text, '.');
    if (!got) {
      if (++rejected <= 10) ADD_FAILURE() << "rejected '" << text << "'";
    } else if (bits(*got) != bits(want)) {
      if (++mismatches <= 10) {
        ADD_FAILURE() << "'" << text << "': parse_number " << std::hexfloat << *got << ", strtod "
                      << want;
      }
    }

    // The same text with a decimal comma must give the same bits.
    if (i % 4 == 0) {
      std::string comma = text;
      for (char& ch : comma) {
        if (ch == '.') ch = ',';
      }
      const std::optional<double> got_comma = parse_number(comma, ',');
      if (!got_comma) {
        if (++rejected <= 10) ADD_FAILURE() << "rejected '" << comma << "' with ',' decimal";
      } else if (bits(*got_comma) != bits(want)) {
        if (++mismatches <= 10) {
          ADD_FAILURE() << "'" << comma << "' (',' decimal): parse_number " << std::hexfloat
                        << *got_comma << ", strtod " << want;
        }
      }
    }
  }
  EXPECT_EQ(mismatches, 0);
  EXPECT_EQ(rejected, 0);
}

// The text reader's fixed-point path (src/io/number_parse_inline.hpp), which reads the commonest
// cells while finding their end: every cell it takes must give strtod's bits, and it must take
// the plain cells a scope prints ("%.Nf" up to 15 digits) and leave all others alone.
TEST(NumberParse, FixedPointPathMatchesStrtodBitForBitOnAMillionCells) {
  std::mt19937_64 rng(20261203);
  std::uniform_int_distribution<int> decimals(0, 12), magnitude(-6, 6), sign(0, 3);
  std::uniform_real_distribution<double> unit(1.0, 10.0);
  constexpr int kCount = 1'000'000;
  int mismatches = 0, taken = 0, short_cells = 0;
  for (int i = 0; i < kCount; ++i) {
    const double v = unit(rng) * std::pow(10.0, magnitude(rng)) * (sign(rng) == 0 ? -1 : 1);
    const int d = decimals(rng);
    char buf[96];
    std::snprintf(buf, sizeof buf, sign(rng) == 1 ? "%+.*f" : "%.*f", d, v);
    std::string cell = buf;
    const double want = reference(cell);
    const std::string row = cell + ",7";  // the cell ends at a delimiter
    const char* p = row.data();
    double got = 12345;
    int got_decimals = -1;
    int digits = 0;
    for (char c : cell) digits += (c >= '0' && c <= '9') ? 1 : 0;
    if (digits <= 15) ++short_cells;
    if (lopside::detail::parse_fixed_point(p, row.data() + row.size(), ',', '.', got,
                                           got_decimals)) {
      ++taken;
      EXPECT_EQ(p, row.data() + cell.size()) << cell;
      EXPECT_EQ(got_decimals, d) << cell;
      if (bits(got) != bits(want) && ++mismatches <= 10)
        ADD_FAILURE() << "'" << cell << "': fixed-point path " << std::hexfloat << got
                      << ", strtod " << want;
    } else {
      EXPECT_EQ(got, 12345) << "a refused cell leaves the value alone: " << cell;
      EXPECT_EQ(p, row.data()) << cell;
    }
  }
  EXPECT_EQ(mismatches, 0);
  // Every cell of at most 15 digits is a plain fixed-point cell the path must take.
  EXPECT_GE(taken, short_cells);
}

TEST(NumberParse, FixedPointPathLeavesEveryOtherFormToTheGeneralParser) {
  for (const char* cell : {"1e-3", "1.5E+02", " 1.5", "1.5 ", "\"1.5\"", "1.", ".5", "-", "", "+-1",
                           "12345678901234567890", "0.00000000000000000000001", "1,5",
                           "9007199254740993", "inf", "0x10"}) {
    const std::string row = std::string(cell) + ";";
    const char* p = row.data();
    double v = 0;
    int d = 0;
    EXPECT_FALSE(lopside::detail::parse_fixed_point(p, row.data() + row.size(), ';', '.', v, d))
        << "'" << cell << "'";
  }
  // At the end of the line (no delimiter), with a decimal comma, signed zero.
  const std::string row = "-0,000";
  const char* p = row.data();
  double v = 1;
  int d = 0;
  ASSERT_TRUE(lopside::detail::parse_fixed_point(p, row.data() + row.size(), ';', ',', v, d));
  EXPECT_EQ(bits(v), bits(-0.0));
  EXPECT_EQ(d, 3);
}

TEST(NumberParse, ExactCornerCases) {
  // Round-half-to-even at the binary64 midpoint 2^53 + 1 = 9007199254740993 (IEEE 754-2008
  // 4.3.1): the nearest doubles are 2^53 and 2^53 + 2, a tie that goes to the even 2^53.
  EXPECT_EQ(bits(*parse_number("9007199254740993")), bits(9007199254740992.0));
  // The smallest denormal 2^−1074 ≈ 4.9406564584124654e−324 (IEEE 754 binary64).
  EXPECT_EQ(bits(*parse_number("4.9406564584124654e-324")), bits(std::ldexp(1.0, -1074)));
  // DBL_MAX printed with 17 digits reads back to DBL_MAX (ISO C 5.2.4.2.2).
  EXPECT_EQ(bits(*parse_number("1.7976931348623157e308")), bits(1.7976931348623157e308));
  // Signed zero keeps its sign, as strtod's does.
  EXPECT_EQ(bits(*parse_number("-0.000")), bits(-0.0));
  EXPECT_EQ(bits(*parse_number("-0,5", ',')), bits(-0.5));
  // Spaces around the cell are ignored (number_parse.hpp).
  EXPECT_EQ(bits(*parse_number("  12.5\t")), bits(12.5));
  EXPECT_EQ(bits(*parse_number("+3")), bits(3.0));
  EXPECT_EQ(bits(*parse_number("5.")), bits(5.0));
  EXPECT_EQ(bits(*parse_number(".5")), bits(0.5));
  EXPECT_EQ(bits(*parse_number("1E3")), bits(1000.0));
}

TEST(NumberParse, RejectsMalformedCells) {
  for (const char* cell :
       {"1.2.3", "",         "   ", "abc", "1e", "1e+", "--1",  "+-1",  "nan", "NaN", "inf",
        "-inf",  "Infinity", ".",   "e5",  "+",  "1 2", "0x10", "1e5x", "12V", "1,5"}) {
    EXPECT_EQ(parse_number(cell, '.'), std::nullopt) << "'" << cell << "'";
  }
  // With ',' as the decimal mark a '.' is not one.
  EXPECT_EQ(parse_number("1.5", ','), std::nullopt);
  EXPECT_EQ(parse_number("1,2,3", ','), std::nullopt);
  // Beyond DBL_MAX strtod gives HUGE_VAL (infinity, ISO C 7.22.1.3p10): not a sample value.
  EXPECT_EQ(parse_number("1e309"), std::nullopt);
}

TEST(NumberParse, RecognisesNanAndInfinityText) {
  for (const char* cell : {"nan", "NaN", "NAN", "inf", "-inf", "+inf", "Infinity", "-Infinity"}) {
    EXPECT_TRUE(is_nan_or_inf_text(cell)) << "'" << cell << "'";
  }
  for (const char* cell : {"1.0", "abc", "", "in", "nano", "0"}) {
    EXPECT_FALSE(is_nan_or_inf_text(cell)) << "'" << cell << "'";
  }
}

TEST(NumberParse, PrintedResolution) {
  // The examples of number_parse.hpp: the last printed digit's place value.
  EXPECT_DOUBLE_EQ(lopside::printed_resolution("10.000001"), 1e-6);
  EXPECT_DOUBLE_EQ(lopside::printed_resolution("1.25e-3"), 1e-5);
  EXPECT_DOUBLE_EQ(lopside::printed_resolution("12"), 1.0);
  EXPECT_DOUBLE_EQ(lopside::printed_resolution("0,125", ','), 1e-3);
}

}  // namespace
