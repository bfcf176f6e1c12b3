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

}  // namespace lopside::detail
