#include "lopside/units.hpp"

#include <array>
#include <cmath>
#include <cstdio>
#include <string>

namespace lopside {
namespace {

std::string_view trim(std::string_view s) {
  return trim_blanks(s);
}

struct Prefix {
  std::string_view text;
  double factor;
};

// SI prefixes that occur on scope and recorder exports (BIPM SI Brochure, 9th ed., table 7).
// "u" stands in for micro where the sign is not available; both Unicode micro code points
// (U+00B5 MICRO SIGN, U+03BC GREEK SMALL LETTER MU) are accepted.
constexpr std::array<Prefix, 8> kPrefixes{{{"", 1.0},
                                           {"k", 1e3},
                                           {"M", 1e6},
                                           {"m", 1e-3},
                                           {"u", 1e-6},
                                           {"\xC2\xB5", 1e-6},
                                           {"\xCE\xBC", 1e-6},
                                           {"n", 1e-9}}};

}  // namespace

namespace {

std::string lower_ascii(std::string_view s) {
  std::string out(s);
  for (char& c : out) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return out;
}

// Spelled-out units as headers and units rows write them ("second", "Volt", "Ampere",
// "amps", "millivolts"), in any case and singular or plural. The prefix words are the SI
// prefix names (BIPM SI Brochure, 9th ed., table 7).
std::optional<UnitScale> parse_unit_word(std::string_view text) {
  std::string w = lower_ascii(text);
  struct Word {
    std::string_view text;
    const char* si;
  };
  static constexpr std::array<Word, 8> kWords{{{"seconds", "s"},
                                               {"second", "s"},
                                               {"secs", "s"},
                                               {"sec", "s"},
                                               {"volts", "V"},
                                               {"volt", "V"},
                                               {"amperes", "A"},
                                               {"ampere", "A"}}};
  static constexpr std::array<Word, 2> kShort{{{"amps", "A"}, {"amp", "A"}}};
  static constexpr std::array<Prefix, 6> kPrefixWords{
      {{"", 1.0}, {"kilo", 1e3}, {"mega", 1e6}, {"milli", 1e-3}, {"micro", 1e-6}, {"nano", 1e-9}}};
  for (const Prefix& p : kPrefixWords) {
    if (w.rfind(p.text, 0) != 0) continue;
    const std::string_view rest = std::string_view(w).substr(p.text.size());
    for (const Word& word : kWords) {
      if (rest == word.text) return UnitScale{word.si, p.factor};
    }
    for (const Word& word : kShort) {
      if (rest == word.text) return UnitScale{word.si, p.factor};
    }
  }
  return std::nullopt;
}

}  // namespace

std::optional<UnitScale> parse_unit(std::string_view text) {
  text = trim(text);
  // A units row may put each unit in parentheses or brackets: "(ms)", "[V]".
  if (text.size() >= 2 && ((text.front() == '(' && text.back() == ')') ||
                           (text.front() == '[' && text.back() == ']'))) {
    text = trim(text.substr(1, text.size() - 2));
  }
  if (text.empty()) return std::nullopt;
  for (std::string_view base : {"A", "V", "s"}) {
    if (text.size() < base.size() || text.substr(text.size() - base.size()) != base) continue;
    const std::string_view prefix = text.substr(0, text.size() - base.size());
    for (const Prefix& p : kPrefixes) {
      if (p.text == prefix) return UnitScale{std::string(base), p.factor};
    }
  }
  // Abbreviated time words of older exports: "msec", "usec", "nsec".
  for (const auto& [word, factor] :
       std::array<std::pair<std::string_view, double>, 5>{{{"msec", 1e-3},
                                                           {"usec", 1e-6},
                                                           {"\xC2\xB5sec", 1e-6},
                                                           {"nsec", 1e-9},
                                                           {"psec", 1e-12}}}) {
    if (lower_ascii(text) == word) return UnitScale{"s", factor};
  }
  return parse_unit_word(text);
}

std::optional<UnitScale> parse_time_unit(std::string_view text) {
  text = trim(text);
  if (text.size() >= 2 && ((text.front() == '(' && text.back() == ')') ||
                           (text.front() == '[' && text.back() == ']'))) {
    text = trim(text.substr(1, text.size() - 2));
  }
  if (auto u = parse_unit(text); u && u->si_unit == "s") return u;
  // Preambles print time units in capitals ("20.00uS", "MS" for milliseconds): where the
  // quantity is known to be a time, case carries no meaning (nobody states megaseconds).
  const std::string l = lower_ascii(text);
  static constexpr std::array<Prefix, 9> kTime{{{"s", 1.0},
                                                {"ms", 1e-3},
                                                {"us", 1e-6},
                                                {"\xC2\xB5s", 1e-6},
                                                {"\xCE\xBCs", 1e-6},
                                                {"ns", 1e-9},
                                                {"ps", 1e-12},
                                                {"fs", 1e-15},
                                                {"ks", 1e3}}};
  for (const Prefix& p : kTime) {
    if (l == p.text) return UnitScale{"s", p.factor};
  }
  return std::nullopt;
}

NameAndUnit split_name_unit(std::string_view cell) {
  cell = trim(cell);
  if (cell.size() >= 2 && (cell.back() == ')' || cell.back() == ']')) {
    const char open = cell.back() == ')' ? '(' : '[';
    const auto pos = cell.rfind(open);
    if (pos != std::string_view::npos && pos > 0) {
      return NameAndUnit{std::string(trim(cell.substr(0, pos))),
                         std::string(trim(cell.substr(pos + 1, cell.size() - pos - 2)))};
    }
  }
  // "quantity / unit" (ISO 80000-1, 7.1: the quotient of a quantity and its unit is a
  // number) and "name_unit" (time_s, current_A, I_mA, CH1_V): split only where the part after
  // the separator is a unit lopside knows, so "U_rms" or "a/b" stay whole names.
  for (const char sep : {'/', '_'}) {
    const auto pos = cell.rfind(sep);
    if (pos == std::string_view::npos || pos == 0 || pos + 1 >= cell.size()) continue;
    const std::string_view unit = trim(cell.substr(pos + 1));
    const std::string_view name = trim(cell.substr(0, pos));
    if (name.empty()) continue;
    // After '/', any unit (ISO 80000-1 writes "P / W", "T / °C"); after '_', only those
    // lopside converts, since "U_rms" or "T_C" are names more often than units.
    if (parse_unit(unit) || (sep == '/' && looks_like_unit(unit)))
      return NameAndUnit{std::string(name), std::string(unit)};
  }
  return NameAndUnit{std::string(cell), ""};
}

bool looks_like_unit(std::string_view text) {
  text = trim(text);
  if (text.size() >= 2 && ((text.front() == '(' && text.back() == ')') ||
                           (text.front() == '[' && text.back() == ']'))) {
    text = trim(text.substr(1, text.size() - 2));
  }
  if (text.empty() || text.size() > 12) return false;
  if (parse_unit(text) || parse_time_unit(text)) return true;
  // Symbols of other SI and accepted units (BIPM SI Brochure, 9th ed., tables 4 and 8), with
  // an optional prefix, and what scopes print for the rest (common practice).
  static constexpr std::array<std::string_view, 24> kSymbols{"W",
                                                             "VA",
                                                             "var",
                                                             "Hz",
                                                             "\xCE\xA9",
                                                             "Ohm",
                                                             "ohm",
                                                             "J",
                                                             "C",
                                                             "F",
                                                             "H",
                                                             "S",
                                                             "Wb",
                                                             "T",
                                                             "Pa",
                                                             "K",
                                                             "%",
                                                             "dB",
                                                             "dBm",
                                                             "a.u.",
                                                             "counts",
                                                             "div",
                                                             "\xC2\xB0"
                                                             "C",
                                                             "rpm"};
  for (const std::string_view sym : kSymbols) {
    if (text == sym) return true;
    if (text.size() > sym.size() && text.substr(text.size() - sym.size()) == sym) {
      const std::string_view prefix = text.substr(0, text.size() - sym.size());
      for (const Prefix& p : kPrefixes) {
        if (!p.text.empty() && p.text == prefix) return true;
      }
    }
  }
  const std::string w = lower_ascii(text);
  static constexpr std::array<std::string_view, 16> kWords{
      "watt",   "watts",   "ohm",   "ohms",   "hertz",   "percent", "degc",  "celsius",
      "kelvin", "decibel", "joule", "joules", "coulomb", "farad",   "henry", "count"};
  for (const std::string_view word : kWords) {
    if (w == word) return true;
  }
  return false;
}

const std::array<SiPrefix, 9>& si_prefixes() {
  static constexpr std::array<SiPrefix, 9> kPrefixes{{{1e9, "G"},
                                                      {1e6, "M"},
                                                      {1e3, "k"},
                                                      {1.0, ""},
                                                      {1e-3, "m"},
                                                      {1e-6, "\xC2\xB5"},
                                                      {1e-9, "n"},
                                                      {1e-12, "p"},
                                                      {1e-15, "f"}}};
  return kPrefixes;
}

std::string format_si(double value, std::string_view unit, int significant, bool signed_always) {
  if (!std::isfinite(value))
    return std::string(std::isnan(value) ? "nan " : "inf ") + std::string(unit);
  using Step = SiPrefix;
  const auto& kSteps = si_prefixes();
  const double magnitude = std::fabs(value);
  Step chosen{1.0, ""};
  if (magnitude != 0.0) {
    chosen = kSteps.back();
    for (const Step& s : kSteps) {
      // Round first so 999.96 mA prints as 1.000 A, not 1000 mA.
      const double scaled = magnitude / s.factor;
      const double digits_left = std::floor(std::log10(scaled)) + 1;
      const double rounded = std::round(scaled * std::pow(10.0, significant - digits_left)) /
                             std::pow(10.0, significant - digits_left);
      if (rounded >= 1.0) {
        chosen = s;
        break;
      }
    }
  }
  const double scaled = value / chosen.factor;
  const double abs_scaled = std::fabs(scaled);
  int decimals = 0;
  if (abs_scaled > 0) {
    decimals = significant - 1 - static_cast<int>(std::floor(std::log10(abs_scaled)));
    double check = std::round(abs_scaled * std::pow(10.0, decimals));
    if (check >= std::pow(10.0, significant)) --decimals;  // rounding carried into a new digit
  } else {
    decimals = significant - 1;
  }
  if (decimals < 0) decimals = 0;
  char buf[64];
  std::snprintf(buf, sizeof buf, signed_always ? "%+.*f" : "%.*f", decimals, scaled);
  std::string out(buf);
  out += ' ';
  out += chosen.symbol;
  out += unit;
  return out;
}

}  // namespace lopside
