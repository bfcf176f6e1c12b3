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

}  // namespace lopside
