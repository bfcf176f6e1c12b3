#pragma once
/// \file
/// Outputs that never harm what the user owns. A regular file (or a new path) is written to a
/// temporary file beside it and renamed over it only once complete, keeping the old file's
/// mode and owner; a device, FIFO or socket is written in place, never replaced; a symlink is
/// followed and the rule applied to its final target, so the link stays a link. "-",
/// /dev/stdout and /dev/fd/1 are standard output.

#include <filesystem>
#include <iosfwd>
#include <memory>
#include <string>

namespace lopside {

namespace detail {
class FdBuffer;
}

/// What an output path names once its symlinks are followed (resolve_output).
struct OutputTarget {
  enum class Kind {
    standard_output,  ///< "-", /dev/stdout, /dev/fd/1, /proc/self/fd/1 (or a link to one)
    descriptor,       ///< /dev/fd/N or /proc/self/fd/N, N ≠ 1: the already open descriptor N
    replace,          ///< a regular file, or a path that does not exist yet: temp file + rename
    direct,           ///< a character or block device, FIFO or socket: written in place
  };
  Kind kind = Kind::replace;
  /// The final path, no symlink left in its last component: the file to replace or create,
  /// or the node to open. For standard_output and descriptor, the path as given.
  std::filesystem::path path;
  int fd = -1;          ///< descriptor: the descriptor number N
  bool exists = false;  ///< replace or direct: the final path names an existing file
};

/// Follows `path`'s symlinks one by one (at most 40, Linux's MAXSYMLINKS, path_resolution(7))
/// and tells what it finally names. Throws OutputError naming `path` for a directory or a
/// symlink loop. Does not open or create anything.
OutputTarget resolve_output(const std::filesystem::path& path);

class AtomicOutput {
 public:
  /// Opens the output `target` names (see resolve_output): creates `final`.tmp-XXXXXX beside
  /// a regular or new final target, opens a device or FIFO for writing (no O_TRUNC; a FIFO
  /// waits here for its reader), duplicates descriptor N, or binds std::cout. Throws
  /// OutputError naming `target` if the output cannot be created or opened.
  explicit AtomicOutput(const std::filesystem::path& target);
  AtomicOutput(const AtomicOutput&) = delete;
  AtomicOutput& operator=(const AtomicOutput&) = delete;
  /// Removes the temporary file unless commit() succeeded; the target is left as it was.
  ~AtomicOutput();

  /// The stream to write text output to.
  std::ostream& stream();
  /// The path to write to for writers that open files themselves (libsndfile): the temporary
  /// file, or the final target itself when it is written in place.
  const std::filesystem::path& temp_path() const { return temp_; }
  /// Flushes and checks every write; for a replaced file also fsync(2) and close(2), and only
  /// then renames the temporary file over the target. Throws OutputError (with the system's
  /// reason) on any failure, leaving an existing target untouched.
  void commit();
  bool is_stdout() const { return target_kind_ == OutputTarget::Kind::standard_output; }

 private:
  std::filesystem::path target_;  // as the user gave it, for messages
  std::filesystem::path final_;   // resolved: what is replaced or opened
  std::filesystem::path temp_;
  OutputTarget::Kind target_kind_ = OutputTarget::Kind::replace;
  int fd_ = -1;
  int registry_slot_ = -1;  // the temp file's place in the signal handler's list, or -1
  std::unique_ptr<detail::FdBuffer> buffer_;
  std::unique_ptr<std::ostream> file_stream_;
  bool committed_ = false;
};

/// Routes std::cout through a buffer over descriptor 1 that keeps the errno of a failed write,
/// so that a failing standard output (a closed pipe, a full disk) is reported with its cause.
/// main() holds one for the program's life; the destructor flushes and gives std::cout its own
/// buffer back.
class StandardOutput {
 public:
  StandardOutput();
  StandardOutput(const StandardOutput&) = delete;
  StandardOutput& operator=(const StandardOutput&) = delete;
  ~StandardOutput();

  /// Throws OutputError if descriptor 1 is closed (`lopside … >&-`): every command writes
  /// there, and a file opened later would otherwise take descriptor 1 and receive the text.
  static void check_open();
  /// true once a write to standard output has failed.
  bool failed() const;
  /// The system's reason for the failure (strerror), or a general one.
  std::string failure_text() const;
};

/// Flushes std::cout; throws OutputError naming "standard output" with the system's reason if a
/// write to it failed.
void flush_standard_output();

}  // namespace lopside
