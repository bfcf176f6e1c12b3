#pragma once
// parse_number's body, inline for the text reader's row loop (a call per cell cost as much as
// the checks it makes); number_parse.cpp's parse_number() is the same function.
#include <fast_float/fast_float.h>

#include <cmath>
#include <optional>
#include <string_view>
#include <system_error>

namespace lopside::detail {

// The grammar accepted: [+-] digits [mark digits] [(e|E) [+-] digits], at least one digit in
// the mantissa. fast_float (Lemire, "Number Parsing at a Gigabyte per Second", Software:
// Practice and Experience 51(8), 2021) checks all of it but the sign and rounds correctly, as
// strtod does in the "C" locale; what it takes beyond the grammar ("inf", "nan") starts with
// a letter and is refused here before it is called. It is called directly on the cell, with
// the caller's decimal mark, so no copy is made.
inline std::optional<double> parse_number_inline(std::string_view cell, char decimal_mark) {
  const char* first = cell.data();
  const char* last = first + cell.size();
  while (first < last && (*first == ' ' || *first == '\t')) ++first;
  while (last > first && (last[-1] == ' ' || last[-1] == '\t')) --last;
  if (first == last) return std::nullopt;
  const char* digits = first;
  if (*first == '+') {
    ++first;  // fast_float takes '-' but not '+'
    digits = first;
  } else if (*first == '-') {
    ++digits;
  }
  if (digits == last || !((*digits >= '0' && *digits <= '9') || *digits == decimal_mark))
    return std::nullopt;
  double value = 0.0;
  const auto r = fast_float::from_chars_advanced(
      first, last, value,
      fast_float::parse_options(fast_float::chars_format::general, decimal_mark));
  if (r.ec != std::errc() || r.ptr != last) return std::nullopt;
  // Beyond the double range: fast_float gives ±inf where strtod gives HUGE_VAL with ERANGE; no
  // recorder prints a sample there. Gradual underflow yields the denormal or zero, as strtod.
  if (std::isinf(value)) return std::nullopt;
  return value;
}

// The fixed-point numbers scopes print most ("-0.01234", "19.9999990", "600"), read while the
// cell's end is looked for, in one walk: [+-] digits [mark digits], ended by `delimiter` or
// `end`. For at most 19 digits whose integer m is at most 2^53 and at most 22 decimals d, the
// value m / 10^d is one correctly rounded division of two exact doubles (Clinger, "How to Read
// Floating Point Numbers Accurately", PLDI 1990): the same double fast_float's own fast path
// and strtod give (number_parse_test checks a million cells against strtod). Anything else
// (an exponent, blanks, more digits, a quote) returns false with `value` untouched, and the
// caller takes the general path; on success `p` is left on the delimiter (or at `end`) and
// `decimals` is d.
inline bool parse_fixed_point(const char*& p, const char* end, char delimiter, char decimal_mark,
                              double& value, int& decimals) {
  // Powers of ten up to 10^22, each exactly representable.
  static constexpr double kPow10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                      1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                      1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
  const char* q = p;
  bool negative = false;
  if (q < end && (*q == '-' || *q == '+')) {
    negative = *q == '-';
    ++q;
  }
  std::uint64_t m = 0;
  int digits = 0, significant = 0;
  const char* int_start = q;
  while (q < end && static_cast<unsigned>(*q - '0') < 10) {
    m = m * 10 + static_cast<unsigned>(*q - '0');
    significant += (m != 0) ? 1 : 0;
    ++q;
  }
  digits = static_cast<int>(q - int_start);
  if (digits == 0) return false;
  int d = 0;
  if (q < end && *q == decimal_mark) {
    ++q;
    const char* frac_start = q;
    while (q < end && static_cast<unsigned>(*q - '0') < 10) {
      m = m * 10 + static_cast<unsigned>(*q - '0');
      significant += (m != 0) ? 1 : 0;
      ++q;
    }
    d = static_cast<int>(q - frac_start);
    if (d == 0) return false;
  }
  if (q != end && *q != delimiter) return false;
  // `significant` counts the digits from the first non-zero one on: at most 19 keep m exact
  // in 64 bits.
  if (significant > 19 || d > 22 || m > (std::uint64_t{1} << 53)) return false;
  double v = static_cast<double>(m);
  if (d > 0) v = v / kPow10[d];
  value = negative ? -v : v;
  decimals = d;
  p = q;
  return true;
}

}  // namespace lopside::detail
