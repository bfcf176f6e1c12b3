#pragma once
/// \file
/// Channel options shared by every reader: finding a channel by number or name, applying
/// `--gain`/`--unit`, and guessing roles from units and names.

#include <string>
#include <vector>

#include "lopside/reader_options.hpp"
#include "lopside/sample_source.hpp"

namespace lopside {

/// Index (0-based) of the channel `selector` names: a 1-based number or an exact name
/// (case-insensitive). Throws InputError naming `path` when there is no such channel.
std::size_t find_channel(const std::vector<ChannelInfo>& channels, const ChannelSelector& selector,
                         const std::string& path);

/// Per-channel multipliers: `--gain` times the prefix factor of `--unit` (1 where neither is
/// given), to apply to values already in the header's SI unit. Checks every selector.
std::vector<double> channel_gains(const std::vector<ChannelInfo>& channels,
                                  const ReaderOptions& options, const std::string& path);

/// Applies `--unit` overrides, then roles: `--current`/`--voltage` where given, else a guess
/// (unit A → current, V → voltage; names such as "current", "I", "voltage", "U" when the unit
/// is unknown). Appends to `notes` a line for each guess made.
void assign_roles(std::vector<ChannelInfo>& channels, const ReaderOptions& options,
                  const std::string& path, std::vector<std::string>& notes);

}  // namespace lopside
