#include "lopside/error.hpp"

#include <utility>

namespace lopside {
namespace {
std::string format_error(const std::string& path, const InputLocation& where,
                         const std::string& message) {
  std::string out = path.empty() ? std::string("<input>") : path;
  if (where.line) {
    out += ":" + std::to_string(*where.line);
  } else if (where.byte_offset) {
    out += ": byte " + std::to_string(*where.byte_offset);
  }
  out += ": " + message;
  return out;
}
}  // namespace

InputError::InputError(std::string path, InputLocation where, const std::string& message)
    : std::runtime_error(format_error(path, where, message)),
      path_(std::move(path)),
      where_(where),
      message_(message) {}

OutputError::OutputError(std::string path, const std::string& message)
    : std::runtime_error(format_error(path, InputLocation{}, message)),
      path_(std::move(path)),
      message_(message) {}

}  // namespace lopside
