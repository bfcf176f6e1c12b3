#pragma once
/// \file
/// Where a result came from, written into every JSON so that it can be traced to the exact
/// capture and reproduced: the tool and its version, the time of the analysis, each input
/// file's size and SHA-256, the command-line options that change a figure as they were given,
/// and the settings in effect (defaults included). Plain data: the CLI fills it in (it opens
/// the files), the report layer formats it.

#include <cstdint>
#include <optional>
#include <string>
#include <variant>
#include <vector>

namespace lopside {

/// One input file of an analysis.
struct InputIdentity {
  std::string role;  ///< "capture", "with" (a joined capture), "limits", "history"
  std::string path;  ///< as the user gave it
  std::optional<std::uint64_t> bytes;  ///< the bytes hashed; none when not hashed
  std::string sha256;                  ///< lower-case hex; empty when not hashed
  std::string not_hashed;              ///< why not (standard input, a pipe, unreadable)
};

/// An option as given on the command line, by its long name ("--probe").
struct GivenOption {
  std::string name;
  std::vector<std::string> values;  ///< every value given, in order ("true" for a flag)
};

/// A setting in effect: a number, a text or a yes/no.
using SettingValue = std::variant<double, std::string, bool>;

struct Provenance {
  std::string tool = "lopside";
  std::string tool_version;
  std::string command;       ///< "measure", "swap", "lot", "trend", "inspect"
  std::string analysed_utc;  ///< ISO 8601, seconds, UTC ("2026-12-02T19:30:00Z")
  std::vector<InputIdentity> inputs;
  std::vector<GivenOption> options;  ///< only those that change a figure (not output paths)
  /// Every analysis setting in effect, defaults included, by name with its unit suffix.
  std::vector<std::pair<std::string, SettingValue>> settings;
  /// SHA-256 of the settings' canonical text (the one the lot history stores), empty if none.
  std::string settings_sha256;
};

}  // namespace lopside
