#pragma once
/// \file
/// One acquisition saved as several files (a scope that writes each channel to its own file,
/// on one time base): the files read side by side as one capture.

#include <memory>
#include <string>
#include <vector>

#include "lopside/reader_options.hpp"
#include "lopside/sample_source.hpp"

namespace lopside {

/// The options to open one file of a joined capture with: the channel options (`--gain`,
/// `--unit`, `--scale`, `--current`, `--voltage`) refer to the joined numbering, so they are
/// cleared here and applied once by join_captures(); `--rate` is kept (it describes the time
/// base every file shares) and `with_paths` is cleared.
ReaderOptions part_reader_options(const ReaderOptions& options);

/// Throws InputError naming `path` when `options` cannot be used with `--with`: so far
/// `--skip-bad-rows`, since a row skipped in one file would shift every later sample against
/// the other file's. Called before any file is opened; join_captures() checks it again.
void check_joinable(const ReaderOptions& options, const std::string& path);

/// Joins `companions` (opened with part_reader_options()) onto `main`: the main file's channels
/// 1..n, then each companion's, numbered on. Applies `options`' gains, scales, units and roles
/// once over the joined list. The time bases must agree: start and sample interval at open and
/// again at the end (text readers refine them), and the frame counts. Throws InputError naming
/// the companion and what differs.
std::unique_ptr<SampleSource> join_captures(std::unique_ptr<SampleSource> main,
                                            std::vector<std::unique_ptr<SampleSource>> companions,
                                            const ReaderOptions& options);

}  // namespace lopside
