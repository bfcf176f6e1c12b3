#pragma once
/// \file
/// The flags every command that reads a capture understands, bound to lopside::ReaderOptions.

#include <CLI/CLI.hpp>
#include <cstddef>

#include "lopside/pipeline.hpp"
#include "lopside/reader_options.hpp"

namespace lopside::cli {

/// Adds --current, --voltage, --scale, --gain, --unit (the last three repeatable, as CH=VALUE),
/// --rate, --with (repeatable) and --skip-bad-rows to `app`, filling `options` as they are parsed.
/// `options` must outlive the parse. A malformed value is a CLI::ValidationError (a usage error,
/// exit 2).
void add_reader_flags(CLI::App& app, ReaderOptions& options);

}  // namespace lopside::cli
