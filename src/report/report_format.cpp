#include "lopside/report_format.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>

#include "lopside/units.hpp"

namespace lopside {
namespace {

SiPrefix prefix_for(double magnitude) {
  if (!(magnitude > 0) || !std::isfinite(magnitude)) return {1.0, ""};
  for (const SiPrefix& p : si_prefixes()) {
    if (magnitude >= p.factor * 0.9995) return p;
  }
  return si_prefixes().back();
}

// Decimal places that leave two significant digits in `u` (at least one place is shown for a
// zero or non-finite u, so the value is still readable).
int decimals_for(double u, double value) {
  if (u > 0 && std::isfinite(u)) {
    const int d = 1 - static_cast<int>(std::floor(std::log10(u)));
    return std::clamp(d, 0, 12);
  }
  const double m = std::fabs(value);
  if (m > 0 && std::isfinite(m))
    return std::clamp(3 - static_cast<int>(std::floor(std::log10(m))), 0, 12);
  return 1;
}

std::string printf_string(const char* fmt, int decimals, double v) {
  std::array<char, 64> buf{};
  std::snprintf(buf.data(), buf.size(), fmt, decimals, v);
  return buf.data();
}

// A value is never printed with more than 8 significant digits: beyond that the sample clock,
// not the scatter, limits it, and a long row of digits hides the figure.
int capped_decimals(int decimals, double v) {
  const double m = std::fabs(v);
  if (!(m > 0) || !std::isfinite(m)) return decimals;
  return std::clamp(std::min(decimals, 7 - static_cast<int>(std::floor(std::log10(m)))), 0, 12);
}

// The uncertainty at the value's decimals; one that is smaller than the last printed digit
// (a clean synthetic capture gives 1e-16 of the value: rounding, not measurement) is only
// bounded by that digit, "< 0.0001", rather than printed as "3.9e-16" (issue 12, item 4).
std::string uncertainty_text(double u, int decimals) {
  if (u > 0 && u < 0.5 * std::pow(10.0, -decimals))
    return "< " + printf_string("%.*f", decimals, std::pow(10.0, -decimals));
  return printf_string("%.*f", decimals, u);
}

}  // namespace

std::string format_with_uncertainty(double value, double u95, std::string_view unit,
                                    bool signed_always, double scale) {
  if (!std::isfinite(value)) return "n/a";
  // A figure near zero on a clean record (a symmetric voltage's mean, 1e-15 V) is not worth
  // "fV": below 1e-7 of its scale it is shown in the scale's prefix, to 8 digits of the scale.
  const double floor = std::isfinite(scale) ? 1e-7 * std::fabs(scale) : 0.0;
  const double magnitude = std::max(std::fabs(value), std::isfinite(u95) ? u95 : 0.0);
  const SiPrefix p = prefix_for(magnitude < floor ? std::fabs(scale) : magnitude);
  double v = value / p.factor;
  const double u = u95 / p.factor;
  int d = capped_decimals(decimals_for(u, v), v);
  if (magnitude < floor)
    d = std::clamp(7 - static_cast<int>(std::floor(std::log10(std::fabs(scale) / p.factor))), 0,
                   12);
  if (std::fabs(v) < 0.5 * std::pow(10.0, -d)) v = 0.0;  // a zero is printed "+0.000", not "-0.000"
  std::string out =
      printf_string(signed_always ? "%+.*f" : "%.*f", d, v) + " " + p.symbol + std::string(unit);
  if (std::isfinite(u95))
    out += " \xC2\xB1 " + uncertainty_text(u, d) + " " + p.symbol + std::string(unit);
  return out;
}

std::string format_percent_with_uncertainty(double share, double u95, bool signed_always) {
  if (!std::isfinite(share)) return "n/a";
  const double v = share * 100, u = u95 * 100;
  const int d = capped_decimals(decimals_for(u, v), v);
  std::string out = printf_string(signed_always ? "%+.*f" : "%.*f", d, v) + " %";
  if (std::isfinite(u)) out += " \xC2\xB1 " + uncertainty_text(u, d) + " %";
  return out;
}

std::string format_ratio_with_uncertainty(double value, double u95, bool signed_always) {
  if (!std::isfinite(value)) return "n/a";
  const int d = capped_decimals(decimals_for(u95, value), value);
  std::string out = printf_string(signed_always ? "%+.*f" : "%.*f", d, value);
  if (std::isfinite(u95)) out += " \xC2\xB1 " + uncertainty_text(u95, d);
  return out;
}

std::string format_si(double value, std::string_view unit) {
  if (unit.empty()) return printf_string("%.*g", 4, value);
  const SiPrefix p = prefix_for(std::fabs(value));
  return printf_string("%.*g", 4, value / p.factor) + " " + std::string(p.symbol) +
         std::string(unit);
}

}  // namespace lopside
