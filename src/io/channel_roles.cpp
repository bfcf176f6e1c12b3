#include "lopside/channel_roles.hpp"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <vector>

#include "lopside/error.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

std::string lower(std::string_view s) {
  std::string out(s);
  std::transform(out.begin(), out.end(), out.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return out;
}

// Name fragments that mean current or voltage in the headers technicians write. Whole-word
// single letters (I, U, V) are the symbols of IEC 60027-1; the rest are common practice.
bool name_means_current(const std::string& n) {
  return n == "i" || n.rfind("i(", 0) == 0 || n.rfind("i_", 0) == 0 ||
         n.find("current") != std::string::npos || n.find("strom") != std::string::npos ||
         n == "amps";
}
bool name_means_voltage(const std::string& n) {
  return n == "u" || n == "v" || n.rfind("u(", 0) == 0 || n.rfind("v(", 0) == 0 ||
         n.rfind("u_", 0) == 0 || n.rfind("v_", 0) == 0 || n.find("voltage") != std::string::npos ||
         n.find("spannung") != std::string::npos || n == "volts";
}

}  // namespace

std::size_t find_channel(const std::vector<ChannelInfo>& channels, const ChannelSelector& selector,
                         const std::string& path) {
  std::size_t number = 0;
  const auto* end = selector.data() + selector.size();
  const auto [ptr, ec] = std::from_chars(selector.data(), end, number);
  if (ec == std::errc() && ptr == end) {
    if (number >= 1 && number <= channels.size()) return number - 1;
    throw InputError(path, "there is no channel " + selector + "; channels are numbered 1 to " +
                               std::to_string(channels.size()) + " (" +
                               describe_channels(channels) + "), the time column not counted");
  }
  const std::string wanted = lower(selector);
  std::vector<std::size_t> matches;
  for (std::size_t i = 0; i < channels.size(); ++i) {
    if (lower(channels[i].name) == wanted) matches.push_back(i);
  }
  if (matches.size() == 1) return matches.front();
  if (matches.size() > 1) {
    std::string numbers;
    for (const std::size_t m : matches)
      numbers += (numbers.empty() ? "" : ", ") + std::to_string(m + 1);
    throw InputError(path, "channel name '" + selector + "' is ambiguous: channels " + numbers +
                               " all have it; expected a channel number (" +
                               describe_channels(channels) + ")");
  }
  throw InputError(path, "there is no channel named '" + selector +
                             "'; expected a number or one of: " + describe_channels(channels));
}

std::vector<double> channel_gains(const std::vector<ChannelInfo>& channels,
                                  const ReaderOptions& options, const std::string& path) {
  std::vector<double> gains(channels.size(), 1.0);
  for (const auto& [selector, gain] : options.gains) {
    if (!(gain != 0.0) || !std::isfinite(gain)) {
      throw InputError(path, "--gain " + selector + "=" + std::to_string(gain) +
                                 ": expected a finite, non-zero factor");
    }
    gains[find_channel(channels, selector, path)] *= gain;
  }
  // `--unit CH=mA` says the value after the gain is in mA: its prefix scales too.
  for (const auto& [selector, unit] : options.units) {
    const auto parsed = parse_unit(unit);
    if (!parsed) {
      throw InputError(path, "--unit " + selector + "=" + unit +
                                 ": expected A, V or s with an optional prefix (k, m, u, n)");
    }
    gains[find_channel(channels, selector, path)] *= parsed->factor;
  }
  return gains;
}

void assign_roles(std::vector<ChannelInfo>& channels, const ReaderOptions& options,
                  const std::string& path, std::vector<std::string>& notes) {
  for (const auto& [selector, unit] : options.units) {
    const auto parsed = parse_unit(unit);
    if (parsed) {
      ChannelInfo& c = channels[find_channel(channels, selector, path)];
      c.unit = parsed->si_unit;
      c.unit_text.clear();
    }
  }
  for (auto& c : channels) c.role = ChannelRole::other;
  std::optional<std::size_t> current, voltage;
  if (options.current) current = find_channel(channels, *options.current, path);
  if (options.voltage) voltage = find_channel(channels, *options.voltage, path);
  if (current && voltage && *current == *voltage) {
    throw InputError(
        path, "--current and --voltage name the same channel " + std::to_string(*current + 1));
  }
  auto guess = [&](ChannelRole role, const char* unit,
                   bool (*by_name)(const std::string&)) -> std::optional<std::size_t> {
    const auto taken = [&](std::size_t i) {
      return (current && *current == i) || (voltage && *voltage == i);
    };
    for (std::size_t i = 0; i < channels.size(); ++i) {
      if (!taken(i) && channels[i].unit == unit) {
        notes.push_back(std::string("channel ") + std::to_string(i + 1) + " '" + channels[i].name +
                        "' taken as the " + to_string(role) + " (unit " + unit + ")");
        return i;
      }
    }
    for (std::size_t i = 0; i < channels.size(); ++i) {
      if (!taken(i) && channels[i].unit.empty() && by_name(lower(channels[i].name))) {
        notes.push_back(std::string("channel ") + std::to_string(i + 1) + " '" + channels[i].name +
                        "' taken as the " + to_string(role) + " (by its name; it has no unit)");
        return i;
      }
    }
    return std::nullopt;
  };
  // A capture of one channel records the current: that is what lopside measures. Whether its
  // unit allows that is the measuring command's question, not the reader's.
  if (!current && !voltage && channels.size() == 1) {
    current = 0;
    notes.push_back("channel 1 '" + channels[0].name + "' taken as the current (the only channel)");
  }
  if (!current) current = guess(ChannelRole::current, "A", name_means_current);
  if (!voltage) voltage = guess(ChannelRole::voltage, "V", name_means_voltage);
  // A gain on a channel in volts (or in codes) that carries the current is the probe's
  // transfer ratio in amperes per volt (or per code): the result is in amperes.
  if (current && channels[*current].unit != "A") {
    bool gain_given = false;
    bool unit_given = false;
    for (const auto& [selector, gain] : options.gains)
      gain_given = gain_given || find_channel(channels, selector, path) == *current;
    for (const auto& [selector, unit] : options.units)
      unit_given = unit_given || find_channel(channels, selector, path) == *current;
    if (gain_given && !unit_given) {
      const std::string was =
          channels[*current].unit.empty() ? channels[*current].unit_text : channels[*current].unit;
      notes.push_back("channel " + std::to_string(*current + 1) + " '" + channels[*current].name +
                      "': --gain taken as amperes per " + (was.empty() ? "unit" : was) +
                      ", so the current is in A");
      channels[*current].unit = "A";
      channels[*current].unit_text.clear();
    }
  }
  if (current) channels[*current].role = ChannelRole::current;
  if (voltage) channels[*voltage].role = ChannelRole::voltage;
}

}  // namespace lopside
