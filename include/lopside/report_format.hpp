#pragma once
/// \file
/// How figures are printed for people: SI prefixes, the sign always shown where a sign means
/// something, and an uncertainty rounded to two significant digits with the value rounded to
/// the same place (GUM 7.2.6).

#include <string>
#include <string_view>

namespace lopside {

/// "+4.98 mA ± 0.21 mA": value and expanded uncertainty in one SI prefix chosen by the larger
/// of |value| and u95; `signed_always` prints '+' before positive values. `scale` (the size of
/// the quantity the figure belongs to, e.g. the RMS for a DC; 0 for none): a figure and u95
/// both below 1e-7 of it are printed in the scale's prefix, so a zero does not come out in fV.
std::string format_with_uncertainty(double value, double u95, std::string_view unit,
                                    bool signed_always, double scale = 0);

/// A dimensionless ratio as a percentage with its uncertainty: "50.17 % ± 0.05 %".
std::string format_percent_with_uncertainty(double share, double u95, bool signed_always);

/// A value without an uncertainty, with the SI prefix its size calls for and four significant
/// digits: "495.1 µA", "1.021 kV"; a plain number ("0.00761") when `unit` is empty.
std::string format_si(double value, std::string_view unit);

/// A dimensionless figure with its uncertainty: "+0.0078 ± 0.0002".
std::string format_ratio_with_uncertainty(double value, double u95, bool signed_always);

}  // namespace lopside
