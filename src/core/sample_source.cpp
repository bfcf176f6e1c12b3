#include "lopside/sample_source.hpp"

namespace lopside {

const char* to_string(ChannelRole role) noexcept {
  switch (role) {
    case ChannelRole::current:
      return "current";
    case ChannelRole::voltage:
      return "voltage";
    case ChannelRole::other:
      break;
  }
  return "other";
}

std::string describe_channels(const std::vector<ChannelInfo>& channels) {
  std::string out;
  for (const auto& c : channels) {
    if (!out.empty()) out += ", ";
    out +=
        std::to_string(c.index) + " '" + c.name + "'" + (c.unit.empty() ? "" : " [" + c.unit + "]");
  }
  return out.empty() ? std::string("none") : out;
}

}  // namespace lopside
