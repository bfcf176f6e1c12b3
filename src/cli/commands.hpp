#pragma once
/// \file
/// The subcommands of `lopside`, in the style of CLI11's subcom_in_files example: each command
/// has a plain options struct, a setup function that binds its flags, and a run function that
/// does the work. One command, one source file.

#include <string>

#include <CLI/CLI.hpp>

#include "lopside/reader_options.hpp"

namespace lopside::cli {

/// `lopside inspect CAPTURE [--json FILE|-] [reader flags]`
struct InspectOptions {
  std::string capture_path;  ///< the capture to read
  std::string json_path;     ///< where to write JSON: empty for none, "-" for standard output
  ReaderOptions reader;      ///< channel, gain, unit and rate options shared with other commands
};

/// Adds the `inspect` subcommand to `app`; its callback runs run_inspect.
void setup_inspect(CLI::App& app);

/// Reads the whole capture block by block and prints its summary: text on standard output,
/// and JSON where `--json` says (with `--json -` the JSON alone goes to standard output).
/// Throws lopside::InputError on bad input.
void run_inspect(const InspectOptions& options);

/// `lopside measure CAPTURE [--json FILE|-] [--cycles FILE.csv] [--probe-offset A]
/// [--probe-gain-pct PCT] [--zero FROM:TO] [reader flags]`
struct MeasureOptions {
  std::string capture_path;
  std::string json_path;    ///< empty for none, "-" for standard output
  std::string cycles_path;  ///< per-cycle CSV; empty for none
  double probe_offset_a = 0;
  double probe_gain_pct = 0;
  std::string zero;  ///< "FROM:TO" in seconds, empty for none
  std::string spectrum_path;     ///< per-order harmonic table as CSV; empty for none
  std::size_t block_cycles = 10;  ///< harmonic block length for non-mains captures
  std::size_t max_order = 40;     ///< highest harmonic order asked for
  ReaderOptions reader;
};

void setup_measure(CLI::App& app);

/// Streams the capture through the cycle engine and prints the summary (text, and JSON where
/// `--json` says). Throws lopside::InputError on bad input or fewer than two whole cycles.
void run_measure(const MeasureOptions& options);

}  // namespace lopside::cli
