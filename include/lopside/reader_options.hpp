#pragma once
/// \file
/// Options every reader understands, as given on the command line of `inspect`, `measure`, ….

#include <cstddef>
#include <map>
#include <optional>
#include <string>
#include <vector>

namespace lopside {

/// The sample rates lopside accepts, from any source (a header, a time column, --rate): the
/// README's stated range. 1 Hz is below any discharge recording worth a cycle engine; 100 GHz
/// is above the fastest real-time scopes' sampling (tens of GS/s, common practice). A rate
/// outside it is a damaged header or a wrong time unit, refused with exit 2.
inline constexpr double kMinSampleRateHz = 1.0;
inline constexpr double kMaxSampleRateHz = 100e9;
/// The most channels (or text columns) a capture may have; a header claiming more is refused
/// before anything is allocated for them.
inline constexpr std::size_t kMaxChannels = 1024;
/// The most values (all channels together) one read block holds, whatever the channel count:
/// 8 MiB of doubles. A file of many channels gets blocks of fewer frames.
inline constexpr std::size_t kMaxBlockValues = std::size_t{1} << 20;

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
