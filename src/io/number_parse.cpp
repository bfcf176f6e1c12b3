#include "lopside/number_parse.hpp"

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

// The grammar accepted: [+-] digits [mark digits] [(e|E) [+-] digits], at least one digit in
// the mantissa. Checked here rather than left to from_chars, which would also take "inf",
// "nan" and hexadecimal forms that no scope prints as a sample.
bool well_formed(std::string_view s, char mark) {
  std::size_t i = 0;
  if (i < s.size() && (s[i] == '+' || s[i] == '-')) ++i;
  std::size_t digits = 0;
  while (i < s.size() && s[i] >= '0' && s[i] <= '9') ++i, ++digits;
  if (i < s.size() && s[i] == mark) {
    ++i;
    while (i < s.size() && s[i] >= '0' && s[i] <= '9') ++i, ++digits;
  }
  if (digits == 0) return false;
  if (i < s.size() && (s[i] == 'e' || s[i] == 'E')) {
    ++i;
    if (i < s.size() && (s[i] == '+' || s[i] == '-')) ++i;
    std::size_t exp_digits = 0;
    while (i < s.size() && s[i] >= '0' && s[i] <= '9') ++i, ++exp_digits;
    if (exp_digits == 0) return false;
  }
  return i == s.size();
}

}  // namespace

std::optional<double> parse_number(std::string_view cell, char decimal_mark) {
  cell = trim(cell);
  if (!well_formed(cell, decimal_mark)) return std::nullopt;
  // std::from_chars (C++17, libstdc++ 11+) rounds correctly and ignores the locale; it takes
  // neither a leading '+' nor a decimal comma, so those are normalised in a small buffer.
  if (cell.front() == '+') cell.remove_prefix(1);
  double value = 0.0;
  std::array<char, 128> buf{};
  std::string long_cell;  // only for cells longer than the buffer (%f of a huge value)
  const char* first = cell.data();
  const char* last = cell.data() + cell.size();
  if (decimal_mark != '.') {
    char* out = buf.data();
    if (cell.size() > buf.size()) {
      long_cell.assign(cell);
      out = long_cell.data();
    } else {
      std::memcpy(out, cell.data(), cell.size());
    }
    for (std::size_t i = 0; i < cell.size(); ++i)
      if (out[i] == decimal_mark) out[i] = '.';
    first = out;
    last = out + cell.size();
  }
  const auto [ptr, ec] = std::from_chars(first, last, value);
  if (ptr != last) return std::nullopt;
  if (ec == std::errc::result_out_of_range) {
    // libstdc++ reports gradual underflow as out of range; strtod (ISO C 7.22.1.3) returns the
    // denormal or zero, which is a sample value. Overflow to infinity is not.
    const std::string z(first, last);
    const double v = std::strtod(z.c_str(), nullptr);
    if (std::isinf(v)) return std::nullopt;
    return v;
  }
  if (ec != std::errc()) return std::nullopt;
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
  return std::pow(10.0, exponent - decimals);
}

}  // namespace lopside
