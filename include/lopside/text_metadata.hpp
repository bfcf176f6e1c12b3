#pragma once
/// \file
/// What the lines around a text capture's samples say: key/value preamble lines, stated time
/// bases and vertical units, in the many wordings scopes and recorders use.

#include <optional>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace lopside {

/// `text` as valid UTF-8: valid sequences are kept, every other byte is read as Windows-1252
/// (Latin-1 with typographic characters at 0x80–0x9F: what older instruments and Windows
/// software write) and re-encoded.
std::string to_utf8(std::string_view text);

/// A preamble line split into key and value: the first of `,` `;` tab `:` `=` separates them;
/// a leading `#`, padding, quotes and trailing delimiters are removed. A line without a
/// separator is a key with an empty value. nullopt for a blank line or bare delimiters.
std::optional<std::pair<std::string, std::string>> split_key_value(std::string_view line);

/// A number and the unit glued to or following it: "CH1:0.000002" → 2e-6 and "";
/// "20.00uS" → 20 and "uS"; "80000000(ps)" → 8e7 and "ps"; "1,25E+06 Hz" with decimal ','.
struct Quantity {
  double value = 0.0;
  std::string unit;  ///< as written, without brackets; empty if none
};
std::optional<Quantity> parse_quantity(std::string_view text, char decimal = '.');

/// The time base a file's key/values state.
struct StatedTimeBase {
  std::optional<double> interval_s;  ///< from an interval or a rate, whichever came first
  std::optional<double> start_s;     ///< time of the first sample, where stated
  std::string interval_key;          ///< the key it came from, for messages
};

/// Reads the time base from key/values (in file order): sample interval, sampling period,
/// time interval, (x-)increment, resolution (horizontal), timebase, sample rate, sampling rate,
/// sampling frequency; a start or x-start key gives the start. `decimal` is the file's mark.
StatedTimeBase stated_time_base(const std::vector<std::pair<std::string, std::string>>& pairs,
                                char decimal = '.');

/// The wordings stated_time_base accepts, for messages.
const char* accepted_time_base_wordings();

/// True if `key` states the vertical unit ("Vertical Units", "VUnit", "Y Unit", "Units").
bool is_vertical_unit_key(std::string_view key);

/// The channel number a per-channel unit key names ("CH2 Units", "Channel 1 Unit",
/// "CH1 vertical unit" → 2, 1, 1), or nullopt.
std::optional<std::size_t> channel_unit_key(std::string_view key);

/// True if `key` states a record's length ("Record Length", "Points", "Samples").
bool is_count_key(std::string_view key);

/// True if `key` states the unit of the time axis ("Horizontal Units", "HUnit", "X Unit").
bool is_horizontal_unit_key(std::string_view key);

/// True if `key` lists the channels' names ("TraceName", "Channel names", "Labels").
bool is_channel_names_key(std::string_view key);

/// True if `key` names the source channel ("Source", "Channel").
bool is_source_key(std::string_view key);

}  // namespace lopside
