#pragma once
/// \file
/// Units as printed in capture headers, mapped to SI.

#include <array>
#include <optional>
#include <string>
#include <string_view>

namespace lopside {

/// A unit: SI base symbol ("A", "V", "s") and the factor that turns a value in it into SI.
struct UnitScale {
  std::string si_unit;
  double factor = 1.0;
};

/// `s` without leading and trailing blanks (spaces and tabs): how cells and header names are
/// compared everywhere.
inline std::string_view trim_blanks(std::string_view s) {
  while (!s.empty() && (s.front() == ' ' || s.front() == '\t')) s.remove_prefix(1);
  while (!s.empty() && (s.back() == ' ' || s.back() == '\t')) s.remove_suffix(1);
  return s;
}

/// Parses "mA", "kV", "us", "µs" (micro sign U+00B5 or Greek mu U+03BC), "A", "V", "s", "ns",
/// "uA", "kA", "mV", "ms", also in parentheses or brackets ("(ms)"), and unit words in any case,
/// singular or plural, with SI prefix words ("second", "Volt", "Ampere", "amps", "millivolts").
/// Case matters for symbol prefixes (m is milli, M mega). Returns nullopt otherwise.
std::optional<UnitScale> parse_unit(std::string_view text);

/// A unit known to be a time ("uS", "MS", "ps", "sec"): as parse_unit, but case-insensitive,
/// since preambles print time units in capitals. Only units of time are returned.
std::optional<UnitScale> parse_time_unit(std::string_view text);

/// True if `text` reads as a unit, converted by lopside or not ("A", "ms", "W", "Ω", "%",
/// "°C", "a.u.", "counts", "watts", "(mV)"): how a units row is told from a names row.
bool looks_like_unit(std::string_view text);

/// A header cell split into name and unit text: "current (mA)" → {"current", "mA"},
/// "U [kV]" → {"U", "kV"}, "t / us" → {"t", "us"}, "current_A" → {"current", "A"}; a slash or
/// underscore splits only where what follows is a known unit ("U_rms" stays whole).
struct NameAndUnit {
  std::string name;
  std::string unit_text;  ///< empty when the cell carries no bracketed unit
};
NameAndUnit split_name_unit(std::string_view cell);

/// An SI prefix for printing (BIPM SI Brochure, 9th ed., table 7): giga down to femto.
struct SiPrefix {
  double factor;
  const char* symbol;  ///< "µ" as U+00B5 MICRO SIGN
};
/// The prefixes, largest first.
const std::array<SiPrefix, 9>& si_prefixes();

/// Value printed with an SI prefix and unit: format_si(0.00498, "A", 3) → "4.98 mA".
/// `signed_always` puts a '+' before positive values.
std::string format_si(double value, std::string_view unit, int significant = 4,
                      bool signed_always = false);

}  // namespace lopside
