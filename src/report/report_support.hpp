#pragma once
// Helpers the report writers share (private to src/report): JSON for an estimate, and the
// column layout of the text summaries.
#include <array>
#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <optional>
#include <ostream>
#include <string>
#include <utility>
#include <vector>

#include "lopside/cycle_engine.hpp"

namespace lopside::report_detail {

using json = nlohmann::ordered_json;

/// {value, u95, k}; non-finite numbers become null (JSON has no NaN).
inline json estimate_json(const Estimate& e) {
  json j;
  j["value"] = std::isfinite(e.value) ? json(e.value) : json(nullptr);
  j["u95"] = std::isfinite(e.u95) ? json(e.u95) : json(nullptr);
  j["k"] = e.coverage_k;
  return j;
}

/// Pads to `width` characters as a terminal shows them: UTF-8 continuation bytes (µ, −, ±)
/// take no column of their own.
inline std::string pad(const std::string& text, std::size_t width) {
  std::size_t shown = 0;
  for (char c : text) shown += (static_cast<unsigned char>(c) & 0xC0) != 0x80 ? 1 : 0;
  return shown < width ? text + std::string(width - shown, ' ') : text;
}

/// One aligned "  label               text" line of a summary.
inline void line(std::ostream& out, const std::string& label, const std::string& text) {
  out << "  " << pad(label, 20) << text << '\n';
}

/// The capture's key/values as one object in file order; a key stated again gets " #2", " #3".
inline json metadata_json(const std::vector<std::pair<std::string, std::string>>& pairs) {
  json j = json::object();
  for (const auto& [key, value] : pairs) {
    std::string k = key.empty() ? std::string("(untitled)") : key;
    for (int n = 2; j.contains(k); ++n)
      k = (key.empty() ? "(untitled)" : key) + " #" + std::to_string(n);
    j[k] = value;
  }
  return j;
}

/// A number that may be missing or not finite: null in JSON.
inline json optional_number(const std::optional<double>& v) {
  return v && std::isfinite(*v) ? json(*v) : json(nullptr);
}

/// A CSV field (RFC 4180): quoted when it holds a comma, quote or line end, quotes doubled.
inline std::string csv_field(const std::string& s) {
  if (s.find_first_of(",\"\r\n") == std::string::npos) return s;
  std::string q = "\"";
  for (const char c : s) q += c == '"' ? std::string("\"\"") : std::string(1, c);
  return q + "\"";
}

/// Columns a terminal gives the text (UTF-8 continuation bytes take none).
inline std::size_t columns(const std::string& text) {
  std::size_t shown = 0;
  for (char c : text) shown += (static_cast<unsigned char>(c) & 0xC0) != 0x80 ? 1 : 0;
  return shown;
}

/// The text cut to `width` columns, with "…" when cut (never inside a UTF-8 sequence).
inline std::string cut(const std::string& text, std::size_t width) {
  if (columns(text) <= width) return text;
  std::string out;
  std::size_t shown = 0;
  for (std::size_t k = 0; k < text.size(); ++k) {
    const bool starts = (static_cast<unsigned char>(text[k]) & 0xC0) != 0x80;
    if (starts && ++shown > width - 1) break;
    out += text[k];
  }
  return out + "\xE2\x80\xA6";
}

/// Words filled into lines of at most `width` columns: the first starts with `first`, the
/// others with `rest` (indents); a word longer than a line is cut.
inline std::vector<std::string> wrap(const std::string& text, std::size_t width,
                                     const std::string& first, const std::string& rest) {
  std::vector<std::string> lines;
  std::string current = first;
  bool empty = true;
  std::size_t at = 0;
  while (at < text.size()) {
    const std::size_t space = text.find(' ', at);
    const std::string word =
        text.substr(at, space == std::string::npos ? std::string::npos : space - at);
    at = space == std::string::npos ? text.size() : space + 1;
    if (word.empty()) continue;
    if (!empty && columns(current) + 1 + columns(word) > width) {
      lines.push_back(current);
      current = rest;
      empty = true;
    }
    current += (empty ? "" : " ") + word;
    empty = false;
  }
  if (!empty) lines.push_back(current);
  for (auto& l : lines) l = cut(l, width);
  return lines;
}

inline std::string fixed(double v, int decimals) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.*f", decimals, v);
  return buf.data();
}

}  // namespace lopside::report_detail
