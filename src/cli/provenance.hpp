#pragma once
// The provenance every JSON carries (lopside/provenance.hpp), gathered where the files are
// opened: the options as given, the settings in effect, and each input's SHA-256.
#include <CLI/CLI.hpp>
#include <atomic>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "commands.hpp"
#include "lopside/provenance.hpp"

namespace lopside::cli {

/// The tool's version as `lopside --version` prints it after the name.
std::string tool_version();

/// Now, as ISO 8601 UTC to the second.
std::string utc_now();

/// The options of `command` given on its command line, except those that only say where an
/// output goes or how it looks (`skip`, by long name with dashes; --help always).
std::vector<GivenOption> given_options(const CLI::App& command,
                                       const std::vector<std::string>& skip);

/// Every setting of the analysis that changes a figure, one "name=value" per line in a fixed
/// order: equal text, equal settings (its SHA-256 identifies them in the lot history).
std::string canonical_settings(const AnalysisOptions& analysis);

/// The same settings as named values for the JSON (defaults included).
std::vector<std::pair<std::string, SettingValue>> analysis_settings(
    const AnalysisOptions& analysis);

/// The reader's settings alone (inspect has no analysis).
std::vector<std::pair<std::string, SettingValue>> reader_settings(const ReaderOptions& reader);

/// Provenance with the tool, the command, the time, the options and the analysis settings.
Provenance begin_provenance(const std::string& command, const std::vector<GivenOption>& given);
void add_analysis_settings(Provenance& provenance, const AnalysisOptions& analysis);

/// One file's size and SHA-256. Standard input and pipes are not hashed (their bytes are read
/// once) and say so; a file that cannot be read says why. `stop` ends the hashing early.
InputIdentity identify_input(const std::string& role, const std::string& path,
                             const std::atomic<bool>* stop = nullptr);

using NamedInput = std::pair<std::string, std::string>;  // role, path

/// Hashes the inputs on a thread of its own while the analysis runs (the page cache serves the
/// second read). Destroyed before take() (the analysis failed), it stops the hashing at the
/// next MiB and joins, so an error is not held up by a long file's hash.
class InputHasher {
 public:
  explicit InputHasher(std::vector<NamedInput> inputs);
  ~InputHasher();
  InputHasher(const InputHasher&) = delete;
  InputHasher& operator=(const InputHasher&) = delete;
  /// Waits for the hashes, in the order given.
  std::vector<InputIdentity> take();

 private:
  std::atomic<bool> stop_{false};
  std::vector<NamedInput> inputs_;
  std::vector<InputIdentity> out_;
  std::thread thread_;
};

}  // namespace lopside::cli
