#pragma once
/// \file
/// The one check, before any work, that a command's outputs harm nothing the user owns and do
/// not collide: not the input capture, not the same file twice, not standard output twice.

#include <string>
#include <vector>

namespace lopside::cli {

/// One output a command was asked for.
struct RequestedOutput {
  std::string flag;  ///< the option that named it, for messages, e.g. "--cycles"
  std::string path;  ///< as given; empty when the output was not asked for
  /// On standard output this output takes the text summary's place (`--json -`); any other
  /// output there would be mixed into the summary and is refused.
  bool replaces_summary = false;
};

/// Throws lopside::InputError (exit 2) naming the offending path when an output resolves
/// (symlinks followed, compared by device and inode where the file exists) to one of `inputs`,
/// when two outputs resolve to the same file, when two outputs go to standard output ("-",
/// /dev/stdout, /dev/fd/1), when an output other than a `replaces_summary` one goes to standard
/// output while the text summary is there, or when an output is the regular file standard
/// output is already redirected to. Throws lopside::OutputError (exit 3) for an output path
/// that cannot be written at all (a directory). Creates, opens and changes nothing.
void check_output_paths(const std::vector<std::string>& inputs,
                        const std::vector<RequestedOutput>& outputs);

}  // namespace lopside::cli
