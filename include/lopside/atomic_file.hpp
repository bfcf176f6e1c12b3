#pragma once
/// \file
/// Outputs that never clobber what the user owns: written to a temporary file beside the
/// target, renamed over it only once complete. "-" means standard output.

#include <filesystem>
#include <fstream>
#include <iosfwd>
#include <memory>

namespace lopside {

class AtomicOutput {
 public:
  /// Creates `target`.tmp-XXXXXX in the target's directory (or binds stdout for "-").
  /// Throws InputError naming `target` if the directory cannot be written.
  explicit AtomicOutput(const std::filesystem::path& target);
  AtomicOutput(const AtomicOutput&) = delete;
  AtomicOutput& operator=(const AtomicOutput&) = delete;
  /// Removes the temporary file unless commit() succeeded.
  ~AtomicOutput();

  /// The stream to write text output to.
  std::ostream& stream();
  /// The temporary file's path, for writers that open files themselves (libsndfile).
  const std::filesystem::path& temp_path() const { return temp_; }
  /// Flushes, checks for write errors and renames the temporary file over the target.
  void commit();
  bool is_stdout() const { return to_stdout_; }

 private:
  std::filesystem::path target_;
  std::filesystem::path temp_;
  std::unique_ptr<std::ofstream> file_;
  bool to_stdout_ = false;
  bool committed_ = false;
};

}  // namespace lopside
