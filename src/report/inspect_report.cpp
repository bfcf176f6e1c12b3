#include "lopside/inspect_report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <ostream>
#include <string>
#include <string_view>

#include "lopside/units.hpp"
#include "provenance_json.hpp"
#include "report_support.hpp"

namespace lopside {
namespace {

/// Columns are padded by what the eye sees, not by bytes: "µ" is two bytes of UTF-8.
std::size_t display_width(std::string_view s) {
  std::size_t n = 0;
  for (const char ch : s) {
    if ((static_cast<unsigned char>(ch) & 0xC0u) != 0x80u) ++n;  // skip continuation bytes
  }
  return n;
}

std::string pad_right(const std::string& s, std::size_t width) {
  const std::size_t w = display_width(s);
  return w >= width ? s : s + std::string(width - w, ' ');
}

std::string pad_left(const std::string& s, std::size_t width) {
  const std::size_t w = display_width(s);
  return w >= width ? s : std::string(width - w, ' ') + s;
}

/// Value with SI prefix and unit; a channel of unknown unit gets a plain number, since a
/// prefix without a unit ("4.98 m") reads as metres.
std::string value_text(double v, const std::string& unit, bool signed_always = false) {
  if (!unit.empty()) return format_si(v, unit, 4, signed_always);
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), signed_always ? "%+#.4g" : "%#.4g", v);
  return buf.data();
}

std::string percent_text(double share) {
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), "%.2f %%", share * 100.0);
  return buf.data();
}

/// 1234567 → "1 234 567": digits grouped by three with a space (SI Brochure, 9th ed., 5.4.4).
std::string grouped(std::uint64_t n) {
  const std::string digits = std::to_string(n);
  std::string out;
  for (std::size_t i = 0; i < digits.size(); ++i) {
    if (i != 0 && (digits.size() - i) % 3 == 0) out += ' ';
    out += digits[i];
  }
  return out;
}

std::string quoted(const std::string& s) {
  return "'" + s + "'";
}

}  // namespace

std::optional<double> InspectResult::duration_s() const {
  if (!(info.sample_rate_hz > 0.0)) return std::nullopt;
  return static_cast<double>(frames) / info.sample_rate_hz;
}

void write_inspect_text(std::ostream& out, const InspectResult& result) {
  const CaptureInfo& info = result.info;
  out << info.path << '\n';
  const auto field = [&out](const char* label, const std::string& text) {
    out << "  " << pad_right(label, 13) << text << '\n';
  };
  field("format", info.detail.empty() ? info.format : info.format + " (" + info.detail + ")");
  field("sample rate",
        info.sample_rate_hz > 0.0 ? format_si(info.sample_rate_hz, "Hz", 4) : "unknown");
  field("samples", grouped(result.frames) + (result.frames == 1 ? " frame" : " frames"));
  const auto duration = result.duration_s();
  std::string duration_text = duration ? format_si(*duration, "s", 4) : std::string("unknown");
  // A start below a thousandth of a sampling interval is the rounding of a fitted time axis,
  // not a trigger offset worth a line.
  const double start_in_intervals = info.sample_rate_hz > 0.0
                                        ? std::fabs(info.start_time_s) * info.sample_rate_hz
                                        : std::fabs(info.start_time_s);
  if (info.start_time_s != 0.0 && start_in_intervals >= 1e-3) {
    duration_text += ", starting at t = " + format_si(info.start_time_s, "s", 6);
  }
  field("duration", duration_text);
  out << '\n';

  // The channel table: header row, then one row per channel; widths fit the longest cell.
  const std::array<std::string, 8> header{"#",   "name", "unit", "role",
                                          "min", "max",  "mean", "clipped"};
  std::vector<std::array<std::string, 8>> rows;
  rows.push_back(header);
  for (std::size_t i = 0; i < info.channels.size(); ++i) {
    const ChannelInfo& ch = info.channels[i];
    std::array<std::string, 8> row;
    row.fill("-");  // a channel without samples shows dashes, never a made-up zero
    row[0] = std::to_string(ch.index);
    row[1] = ch.name;
    row[2] = !ch.unit.empty() ? ch.unit : !ch.unit_text.empty() ? ch.unit_text : std::string("?");
    row[3] = to_string(ch.role);
    if (i < result.channels.size() && result.channels[i].count > 0) {
      const ChannelSummary& s = result.channels[i];
      row[4] = value_text(s.min, ch.unit);
      row[5] = value_text(s.max, ch.unit);
      // A mean below 1e-12 of the swing is the rounding of a sum of doubles (about 16
      // significant digits each), not a DC level: "-8.572 fV" beside ±1.5 kV would mislead.
      const double swing = std::max(std::fabs(s.min), std::fabs(s.max));
      const double shown_mean = std::fabs(s.mean) <= 1e-12 * swing ? 0.0 : s.mean;
      row[6] = value_text(shown_mean, ch.unit, shown_mean != 0.0);
      row[7] = percent_text(s.clipped_share);
    }
    rows.push_back(row);
  }
  std::array<std::size_t, 8> width{};
  for (const auto& row : rows) {
    for (std::size_t c = 0; c < row.size(); ++c)
      width[c] = std::max(width[c], display_width(row[c]));
  }
  // Numbers right-aligned so their digits line up; words left-aligned.
  constexpr std::array<bool, 8> right_aligned{true, false, false, false, true, true, true, true};
  for (const auto& row : rows) {
    std::string line = " ";
    for (std::size_t c = 0; c < row.size(); ++c) {
      line += ' ';
      line += right_aligned[c] ? pad_left(row[c], width[c]) : pad_right(row[c], width[c]);
      line += ' ';
    }
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out << line << '\n';
  }

  if (!result.warnings.empty()) {
    out << "\nwarnings:\n";
    for (const std::string& w : result.warnings) out << "  - " << w << '\n';
  }

  // Which channel the later commands will analyse, as the reader decided or guessed it.
  std::string current, voltage;
  for (const ChannelInfo& ch : info.channels) {
    const std::string label = "channel " + std::to_string(ch.index) + " " + quoted(ch.name);
    if (ch.role == ChannelRole::current && current.empty()) current = label;
    if (ch.role == ChannelRole::voltage && voltage.empty()) voltage = label;
  }
  out << "\nroles: current = " << (current.empty() ? "none (name it with --current CH)" : current)
      << ", voltage = " << (voltage.empty() ? "none" : voltage) << '\n';
}

void write_inspect_json(std::ostream& out, const InspectResult& result) {
  // ordered_json keeps the keys in the order written: schema first, as a reader expects.
  using json = nlohmann::ordered_json;
  const CaptureInfo& info = result.info;
  json doc;
  doc["schema"] = kInspectSchema;
  doc["provenance"] = report_detail::provenance_json(result.provenance);
  doc["path"] = info.path;
  doc["format"] = info.format;
  doc["detail"] = info.detail;
  doc["sample_rate_hz"] = info.sample_rate_hz > 0.0 ? json(info.sample_rate_hz) : json(nullptr);
  doc["samples"] = result.frames;
  const auto duration = result.duration_s();
  doc["duration_s"] = duration ? json(*duration) : json(nullptr);
  doc["start_time_s"] = info.start_time_s;
  json channels = json::array();
  for (std::size_t i = 0; i < info.channels.size(); ++i) {
    const ChannelInfo& ch = info.channels[i];
    json c;
    c["index"] = ch.index;
    c["name"] = ch.name;
    // The SI unit the values are in, else the unit as the file states it ("a.u.", "counts").
    c["unit"] = !ch.unit.empty()        ? json(ch.unit)
                : !ch.unit_text.empty() ? json(ch.unit_text)
                                        : json(nullptr);
    c["unit_is_si"] = !ch.unit.empty();
    c["role"] = to_string(ch.role);
    const bool have = i < result.channels.size() && result.channels[i].count > 0;
    const ChannelSummary s = have ? result.channels[i] : ChannelSummary{};
    c["min"] = have ? json(s.min) : json(nullptr);
    c["max"] = have ? json(s.max) : json(nullptr);
    c["mean"] = have ? json(s.mean) : json(nullptr);
    c["clipped_share"] = s.clipped_share;
    c["clipped_max_share"] = s.clipped_high_share;
    c["clipped_min_share"] = s.clipped_low_share;
    c["clipped_max_crests"] = s.clipped_high_crests;
    c["clipped_min_crests"] = s.clipped_low_crests;
    // The integer full scale, in the channel's unit like min and max; null for float and text.
    c["full_scale_min"] = ch.full_scale_low ? json(*ch.full_scale_low) : json(nullptr);
    c["full_scale_max"] = ch.full_scale_high ? json(*ch.full_scale_high) : json(nullptr);
    channels.push_back(std::move(c));
  }
  doc["channels"] = std::move(channels);
  doc["metadata"] = report_detail::metadata_json(info.metadata);
  doc["warnings"] = result.warnings;
  // Header names come from the file: replace invalid UTF-8 rather than throw halfway through.
  out << doc.dump(2, ' ', false, json::error_handler_t::replace) << '\n';
}

}  // namespace lopside
