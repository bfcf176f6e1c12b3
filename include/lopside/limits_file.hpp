#pragma once
/// \file
/// The limits file of the `lot` command: which measured figures a unit must keep within which
/// bounds, and how the lot is judged. Written by hand (by a QA engineer, not by a program), so
/// it is TOML 1.0 (https://toml.io/en/v1.0.0) and every slip in it is an error with its line:
/// a misspelt key is never ignored.
///
/// Example:
///
///     [lot]
///     product = "CCFL inverter 32 kHz"   # optional, recorded with the lot
///     decision = "guarded"               # "simple" (default) or "guarded"
///     unit_id = "pattern"                # "stem" (default), "pattern" or "key"
///     unit_id_pattern = "unit(\\d+)"     # with unit_id = "pattern"
///     # unit_id_key = "Serial"           # with unit_id = "key"
///
///     [limits.dc_to_rms]                 # one table per figure, named as in measure's JSON
///     min = -0.01
///     max = 0.01
///
///     [limits.thd]
///     max = 0.05                         # one bound is enough; integers (0, 1) are numbers
///
/// `[lot]` may be left out (all defaults). At least one `[limits.NAME]` table is required; each
/// holds `min`, `max` or both, finite, `min <= max`, in the unit of the figure (the suffix of
/// its name: `_a` amperes, `_v` volts, `_c` coulombs; none for ratios such as `thd`). A figure
/// inside a JSON object is named with a dot, as `[limits.voltage.rms_v]` or
/// `[limits."voltage.rms_v"]`, when the caller lists it as "voltage.rms_v".

#include <filesystem>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "lopside/lot.hpp"

namespace lopside {

/// Where the id of a unit comes from.
enum class UnitIdSource {
  file_stem,          ///< the capture's file name without its extension (`unit_id = "stem"`)
  file_name_pattern,  ///< a regular expression on the file name (`unit_id = "pattern"`)
  capture_key,        ///< a key of the capture's preamble (`unit_id = "key"`)
};

/// The `[lot]` table.
struct LotSettings {
  DecisionRule decision = DecisionRule::simple;
  UnitIdSource unit_id = UnitIdSource::file_stem;
  /// ECMAScript regex on the file name (with UnitIdSource::file_name_pattern); the first
  /// capture group, or the whole match if it has none, is the id. Checked to compile.
  std::string unit_id_pattern;
  /// A key of the capture's preamble, e.g. "Serial" (with UnitIdSource::capture_key); the
  /// caller matches it case-insensitively. Not empty when set.
  std::string unit_id_key;
  /// The product name, recorded with the lot; empty if not given.
  std::string product;
};

/// A parsed limits file.
struct LimitsFile {
  /// One entry per `[limits.NAME]` table, in file order; names are unique and known.
  std::vector<std::pair<std::string, Limit>> limits;
  LotSettings lot;
};

/// Parses a limits file's text. `display_name` names it in messages. `known_figures` are the
/// names a limit may give (keys of measure's JSON such as "dc_offset_a", "thd"; a nested one
/// as "voltage.rms_v"). Throws InputError(display_name, line, what was expected) on any fault:
/// TOML syntax, an unknown table, key, figure or value, a limit without bounds or with
/// min > max, a bound that is not a finite number, an unusable unit id setting.
LimitsFile parse_limits(std::string_view text, const std::string& display_name,
                        const std::vector<std::string>& known_figures);

/// Reads the file at `path` and parses it as parse_limits does. Throws InputError if it cannot
/// be opened or read, is a directory, or is far larger than any limits file (over 1 MiB).
LimitsFile read_limits_file(const std::filesystem::path& path,
                            const std::vector<std::string>& known_figures);

}  // namespace lopside
