#include "lopside/number_parse.hpp"

#include <fast_float/fast_float.h>

#include <array>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <cstring>
#include <string>

#include "lopside/units.hpp"

namespace lopside {
namespace {

std::string_view trim(std::string_view s) {
  return trim_blanks(s);
}

bool iequals(std::string_view a, std::string_view b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    char x = a[i], y = b[i];
    if (x >= 'A' && x <= 'Z') x = static_cast<char>(x - 'A' + 'a');
    if (y >= 'A' && y <= 'Z') y = static_cast<char>(y - 'A' + 'a');
    if (x != y) return false;
  }
  return true;
}

}  // namespace

// The grammar accepted: [+-] digits [mark digits] [(e|E) [+-] digits], at least one digit in
// the mantissa. fast_float (Lemire, "Number Parsing at a Gigabyte per Second", Software:
// Practice and Experience 51(8), 2021) checks all of it but the sign and rounds correctly, as
// strtod does in the "C" locale; what it takes beyond the grammar ("inf", "nan") starts with
// a letter and is refused here before it is called. It is called directly on the cell, with
// the caller's decimal mark, so no copy is made: the wrapper used to cost as much as the
// conversion.
std::optional<double> parse_number(std::string_view cell, char decimal_mark) {
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

bool is_nan_or_inf_text(std::string_view cell) {
  cell = trim(cell);
  if (!cell.empty() && (cell.front() == '+' || cell.front() == '-')) cell.remove_prefix(1);
  // "∞" (U+221E) is how some scope software marks a sample beyond its range.
  return cell == "\xE2\x88\x9E" || iequals(cell, "nan") || iequals(cell, "inf") ||
         iequals(cell, "infinity") || iequals(cell, "1.#INF") || iequals(cell, "1.#QNAN") ||
         iequals(cell, "-1.#IND");
}

double printed_resolution(std::string_view cell, char decimal_mark) {
  cell = trim(cell);
  int decimals = 0;
  int exponent = 0;
  const auto mark = cell.find(decimal_mark);
  auto epos = cell.find_first_of("eE");
  const std::string_view mantissa = cell.substr(0, epos);
  if (mark != std::string_view::npos && mark < mantissa.size()) {
    decimals = static_cast<int>(mantissa.size() - mark - 1);
  }
  if (epos != std::string_view::npos) {
    std::string_view e = cell.substr(epos + 1);
    if (!e.empty() && e.front() == '+') e.remove_prefix(1);
    std::from_chars(e.data(), e.data() + e.size(), exponent);
  }
  // Called once per row of a text capture: the powers a scope prints come from a table built
  // with the same std::pow, so the values are those of the call they replace.
  static const std::array<double, 129> powers = [] {
    std::array<double, 129> p{};
    for (int e = -64; e <= 64; ++e) p[static_cast<std::size_t>(e + 64)] = std::pow(10.0, e);
    return p;
  }();
  const int e = exponent - decimals;
  if (e >= -64 && e <= 64) return powers[static_cast<std::size_t>(e + 64)];
  return std::pow(10.0, e);
}

}  // namespace lopside
