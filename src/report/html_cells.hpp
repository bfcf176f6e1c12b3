#pragma once
// Table cells the HTML reports share (private to src/report): a cell is HTML already escaped,
// with attributes for the cell; a figure's cell says which JSON number it shows (data-key, its
// dot path in the command's --json output; data-value, the number with 17 significant digits,
// which round-trip a double) so that the browser test can hold the page against the JSON.
#include <array>
#include <cmath>
#include <cstddef>
#include <cstdio>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "lopside/report_format.hpp"
#include "lopside/svg_plot.hpp"
#include "report_support.hpp"

namespace lopside::html_detail {

using report_detail::fixed;
using svg::escape;

inline std::string num17(double v) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.17g", v);
  return buf.data();
}

inline std::string key_attrs(const std::string& key, const std::string& value) {
  return " data-key=\"" + escape(key) + "\" data-value=\"" + escape(value) + "\"";
}

/// One table cell: `html` is written as given (already escaped); `attrs` go on the cell;
/// `css` holds extra classes.
struct Cell {
  std::string html;
  std::string attrs;
  std::string css;
};

inline Cell text_cell(const std::string& text, const std::string& css = {}) {
  return {escape(text), {}, css};
}

/// A JSON key is addressed by a dot path; a figure named with a dot ("voltage.rms_v") cannot be
/// told from a nested key that way, so its cells carry no data-key.
inline bool addressable(const std::string& name) {
  return name.find('.') == std::string::npos;
}

/// A number that is in the JSON at `key` (only finite numbers are: JSON has no NaN).
inline Cell keyed_cell(const std::string& text, const std::string& key, double value,
                       bool keyed = true) {
  if (!keyed || !std::isfinite(value)) return text_cell(text);
  return {escape(text), key_attrs(key, num17(value)), {}};
}

inline Cell count_cell(std::size_t n, const std::string& key, bool keyed = true) {
  if (!keyed) return text_cell(std::to_string(n));
  return {std::to_string(n), key_attrs(key, std::to_string(n)), {}};
}

inline Cell string_cell(const std::string& text, const std::string& key, bool keyed = true) {
  if (!keyed) return text_cell(text);
  return {escape(text), key_attrs(key, text), {}};
}

/// A table whose columns [numeric_from, numeric_to) are figures (right-aligned, never wrapped);
/// with `row_headers` the first cell of each row is its header (<th scope="row">).
inline void write_table(std::ostream& out, const std::vector<std::string>& header,
                        const std::vector<std::vector<Cell>>& rows, std::size_t numeric_from,
                        const std::string& css_class, std::size_t numeric_to = std::size_t(-1),
                        const std::string& caption = {}, bool row_headers = false) {
  const auto numeric = [&](std::size_t c) { return c >= numeric_from && c < numeric_to; };
  out << "<div class=\"table-wrap\"><table class=\"" << escape(css_class) << "\">";
  if (!caption.empty()) out << "<caption>" << escape(caption) << "</caption>";
  out << "\n<thead><tr>";
  for (std::size_t c = 0; c < header.size(); ++c)
    out << "<th scope=\"col\"" << (numeric(c) ? " class=\"num\"" : "") << ">" << escape(header[c])
        << "</th>";
  out << "</tr></thead>\n<tbody>\n";
  for (const auto& row : rows) {
    out << "<tr>";
    for (std::size_t c = 0; c < row.size(); ++c) {
      const bool head = row_headers && c == 0;
      std::string cls = numeric(c) ? "num" : "";
      if (!row[c].css.empty()) cls += (cls.empty() ? "" : " ") + row[c].css;
      out << (head ? "<th scope=\"row\"" : "<td");
      if (!cls.empty()) out << " class=\"" << cls << "\"";
      out << row[c].attrs << ">" << row[c].html << (head ? "</th>" : "</td>");
    }
    out << "</tr>\n";
  }
  out << "</tbody></table></div>\n";
}

inline std::string unit_suffix(const std::string& unit) {
  return unit.empty() ? std::string() : " [" + unit + "]";
}

/// A figure in SI, or "n/a" when it is not finite.
inline std::string si(double v, const std::string& unit) {
  return std::isfinite(v) ? format_si(v, unit) : std::string("n/a");
}

/// A capability index (Cp, Cpk, …) to two decimals, or "n/a".
inline std::string index_text(const std::optional<double>& v) {
  return v && std::isfinite(*v) ? fixed(*v, 2) : std::string("n/a");
}

}  // namespace lopside::html_detail
