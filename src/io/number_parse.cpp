#include "lopside/number_parse.hpp"

#include <array>
#include <charconv>
#include <cmath>

#include "lopside/units.hpp"
#include "number_parse_inline.hpp"

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

std::optional<double> parse_number(std::string_view cell, char decimal_mark) {
  return detail::parse_number_inline(cell, decimal_mark);
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
  // The first decimal mark and the first exponent letter, in one pass (called once per row).
  std::size_t mark = std::string_view::npos, epos = std::string_view::npos;
  for (std::size_t i = 0; i < cell.size(); ++i) {
    const char c = cell[i];
    if (c == decimal_mark && mark == std::string_view::npos) mark = i;
    if ((c == 'e' || c == 'E') && epos == std::string_view::npos) epos = i;
  }
  const std::size_t mantissa = std::min(epos, cell.size());
  if (mark != std::string_view::npos && mark < mantissa) {
    decimals = static_cast<int>(mantissa - mark - 1);
  }
  if (epos != std::string_view::npos) {
    std::string_view e = cell.substr(epos + 1);
    if (!e.empty() && e.front() == '+') e.remove_prefix(1);
    std::from_chars(e.data(), e.data() + e.size(), exponent);
  }
  return power_of_ten(exponent - decimals);
}

double power_of_ten(int e) {
  // Called once per row of a text capture: the powers a scope prints come from a table built
  // with the same std::pow, so the values are those of the call they replace.
  static const std::array<double, 129> powers = [] {
    std::array<double, 129> p{};
    for (int k = -64; k <= 64; ++k) p[static_cast<std::size_t>(k + 64)] = std::pow(10.0, k);
    return p;
  }();
  if (e >= -64 && e <= 64) return powers[static_cast<std::size_t>(e + 64)];
  return std::pow(10.0, e);
}

}  // namespace lopside
