#pragma once
/// \file
/// Options every reader understands, as given on the command line of `inspect`, `measure`, ….

#include <map>
#include <optional>
#include <string>
#include <vector>

namespace lopside {

/// How the user refers to a channel: its 1-based number (time column not counted) or its name.
using ChannelSelector = std::string;

struct ReaderOptions {
  /// `--gain CH=FACTOR`: multiply channel CH by FACTOR (e.g. 10 for a 100 mV/A probe).
  std::map<ChannelSelector, double> gains;
  /// `--unit CH=UNIT`: the unit of channel CH after the gain, when the header gives none or the
  /// gain changes it (volts from a shunt, times a gain in A/V, are amperes).
  std::map<ChannelSelector, std::string> units;
  /// `--scale CH=VALUE`: physical value of full scale for channel CH of a WAV-like container.
  std::map<ChannelSelector, double> scales;
  /// `--rate HZ`: sample rate for text captures without a time column or preamble rate.
  std::optional<double> rate_hz;
  /// `--skip-bad-rows`: skip malformed data rows (counted and reported) instead of failing.
  bool skip_bad_rows = false;
  /// `--current CH` / `--voltage CH`: explicit roles; otherwise guessed from units and names.
  std::optional<ChannelSelector> current;
  std::optional<ChannelSelector> voltage;
  /// `--with FILE`: further files of the same acquisition (a scope that saves each channel to
  /// its own file); their channels follow the main file's, numbered on, and every channel
  /// option above refers to that joined numbering. See lopside/joined_source.hpp.
  std::vector<std::string> with_paths;
};

}  // namespace lopside
