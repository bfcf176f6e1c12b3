#pragma once
/// \file
/// The exception types for bad input and for failed outputs, and the exit codes of the
/// `lopside` program.

#include <cstdint>
#include <optional>
#include <stdexcept>
#include <string>

namespace lopside {

/// Exit statuses of `lopside`; kept in one place so every command maps errors the same way.
namespace exit_code {
inline constexpr int ok = 0;
inline constexpr int failure = 1;    ///< an internal error: a bug, not the user's input
inline constexpr int bad_input = 2;  ///< unreadable, malformed or unusable input, or bad usage
/// An output could not be written: not creatable, a write, flush, close or rename failed (disk
/// full, /dev/full, a closed standard output, a reader that went away: EPIPE). Kept apart from
/// bad_input because the input was fine and a retry with room to write will succeed.
inline constexpr int output_failed = 3;
/// `lopside lot`: the lot was judged, and at least one unit did not pass (failed, conditional
/// or not measured). Kept apart from bad_input: the command itself was fine.
inline constexpr int lot_not_passed = 4;
}  // namespace exit_code

/// Where in a file an error sits: a line as an editor counts it (first line = 1), or a byte
/// offset from the start of the file. Neither is set when the whole file is at fault.
struct InputLocation {
  std::optional<std::uint64_t> line;         ///< 1-based line number
  std::optional<std::uint64_t> byte_offset;  ///< 0-based byte offset
  static InputLocation at_line(std::uint64_t l) { return {l, std::nullopt}; }
  static InputLocation at_byte(std::uint64_t b) { return {std::nullopt, b}; }
};

/// Bad input: names the file, the place and what was expected. `what()` reads
/// `FILE:LINE: message` (the form editors and compilers use) or `FILE: byte N: message`.
class InputError : public std::runtime_error {
 public:
  InputError(std::string path, InputLocation where, const std::string& message);
  InputError(std::string path, const std::string& message)
      : InputError(std::move(path), InputLocation{}, message) {}

  const std::string& path() const noexcept { return path_; }
  const InputLocation& where() const noexcept { return where_; }
  const std::string& message() const noexcept { return message_; }

 private:
  std::string path_;
  InputLocation where_;
  std::string message_;
};

/// A failed output: it cannot be created or opened, or a write, flush, close or rename failed.
/// Not bad input (InputError): the input was fine. `what()` reads `PATH: message`, where the
/// message carries the system's reason (strerror), e.g. "No space left on device".
class OutputError : public std::runtime_error {
 public:
  OutputError(std::string path, const std::string& message);

  const std::string& path() const noexcept { return path_; }
  const std::string& message() const noexcept { return message_; }

 private:
  std::string path_;
  std::string message_;
};

}  // namespace lopside
