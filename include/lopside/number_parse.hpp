#pragma once
/// \file
/// The number parser of the text readers: exact (correctly rounded, like strtod in the "C"
/// locale) and locale-independent, with the decimal separator given by the caller.

#include <optional>
#include <string_view>

namespace lopside {

/// Parses a whole cell as a decimal or scientific number: optional sign, digits with
/// `decimal_mark` ('.' or ','), optional exponent. Leading/trailing spaces are ignored.
/// Returns nullopt for anything else, "nan" and "inf" included (the caller reports them).
std::optional<double> parse_number(std::string_view cell, char decimal_mark = '.');

/// True if the cell spells NaN or infinity in a way spreadsheets and scopes print them.
bool is_nan_or_inf_text(std::string_view cell);

/// Count of decimal places the printed number resolves, as a power of ten: "10.000001" → 1e-6,
/// "1.25e-3" → 1e-5, "12" → 1. Used to tell printing quantisation from real jitter.
double printed_resolution(std::string_view cell, char decimal_mark = '.');

/// 10^e as printed_resolution() gives it (std::pow(10, e), tabulated for |e| ≤ 64).
double power_of_ten(int e);

}  // namespace lopside
