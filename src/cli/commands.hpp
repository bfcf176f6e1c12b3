#pragma once
/// \file
/// The subcommands of `lopside`, in the style of CLI11's subcom_in_files example: each command
/// has a plain options struct, a setup function that binds its flags, and a run function that
/// does the work. One command, one source file.

#include <CLI/CLI.hpp>
#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "lopside/measure_report.hpp"
#include "lopside/provenance.hpp"
#include "lopside/reader_options.hpp"

namespace lopside::cli {

/// `lopside inspect CAPTURE [--json FILE|-] [reader flags]`
struct InspectOptions {
  std::string capture_path;  ///< the capture to read
  std::string json_path;     ///< where to write JSON: empty for none, "-" for standard output
  ReaderOptions reader;      ///< channel, gain, unit and rate options shared with other commands
  std::vector<GivenOption> given_options;  ///< for the JSON's provenance
};

/// Adds the `inspect` subcommand to `app`; its callback runs run_inspect.
void setup_inspect(CLI::App& app);

/// Reads the whole capture block by block and prints its summary: text on standard output,
/// and JSON where `--json` says (with `--json -` the JSON alone goes to standard output).
/// Throws lopside::InputError on bad input.
void run_inspect(const InspectOptions& options);

/// What every command that measures a capture needs: the capture, the reader flags, the
/// probe's tolerances and zero, and the harmonic settings.
struct AnalysisOptions {
  std::string capture_path;
  double probe_offset_a = 0;
  double probe_gain_pct = 0;
  std::string zero;                ///< "FROM:TO" in seconds, empty for none
  std::size_t block_cycles = 10;   ///< harmonic block length for non-mains captures
  std::size_t max_order = 40;      ///< highest harmonic order asked for; 0: no harmonics
  std::string reference = "auto";  ///< "auto", "current" or "voltage": what sets the cycles
  ReaderOptions reader;
  bool picture = false;         ///< keep the average cycle and a strip of cycles (an HTML report)
  std::string probe = "shunt";  ///< probe kind (probe.hpp's names)
  std::optional<double> probe_tau_s;         ///< CT / AC-coupling time constant [s]
  double probe_tau_pct = 0;                  ///< its tolerance, ± percent
  std::optional<double> rogowski_v_s_per_a;  ///< a Rogowski coil's M [V·s/A]
  /// The command's options as given that change a figure, for the JSON's provenance.
  std::vector<GivenOption> given_options;
};

/// Binds --probe-offset, --probe-gain-pct, --zero, --block-cycles, --max-order and the reader
/// flags (not the capture path) to `options`.
void add_analysis_flags(CLI::App& app, AnalysisOptions& options);

/// The flags as the library's MeasureSettings (the capture's name included).
MeasureSettings measure_settings(const AnalysisOptions& options);

/// Measures one capture by the library's measure_capture() (pipeline.hpp): the flags become
/// MeasureSettings, the reader flags open the capture, a progress bar shows on a terminal;
/// `per_cycle` sees each whole cycle as it is found. Throws lopside::InputError on bad input.
MeasureResult analyse_capture(const AnalysisOptions& options,
                              const std::function<void(const CycleRecord&)>& per_cycle = {});

/// `lopside measure CAPTURE [--json FILE|-] [--cycles FILE.csv] [--spectrum FILE.csv]
/// [analysis flags]`
struct MeasureOptions {
  AnalysisOptions analysis;
  std::string json_path;                   ///< empty for none, "-" for standard output
  std::string cycles_path;                 ///< per-cycle CSV; empty for none
  std::string spectrum_path;               ///< per-order harmonic table as CSV; empty for none
  std::string regime = "glow";             ///< electrode heating split: glow (70:30) or arc (30:70)
  std::optional<double> cathode_share;     ///< overrides the regime's cathode share, 0…1
  std::optional<double> erosion_ug_per_c;  ///< cathode erosion rate for the erosion estimate
  bool full = false;                       ///< the full listing instead of the summary
  std::string html_path;                   ///< the HTML report; empty for none
};

void setup_measure(CLI::App& app);

/// Measures the capture and prints the summary (text, and JSON where `--json` says).
void run_measure(const MeasureOptions& options);

/// `lopside swap NORMAL SWAPPED [NORMAL_AGAIN] [--probe-on electrode|supply] [--json FILE|-]
/// [analysis flags]`
struct SwapOptions {
  std::string normal_path;   ///< capture with the leads as normal
  std::string swapped_path;  ///< capture with the supply's output leads exchanged
  /// repeat of the normal capture, recorded after the swapped one with the leads back as
  /// normal; empty for none
  std::string again_path;
  std::string probe_on = "electrode";  ///< where the probe stayed: "electrode" or "supply"
  std::string json_path;               ///< empty for none, "-" for standard output
  AnalysisOptions analysis;            ///< shared by all captures; capture_path is set per capture
  std::string html_path;               ///< the HTML report; empty for none, "-" for standard output
};

void setup_swap(CLI::App& app);

/// Measures the two captures (three with NORMAL_AGAIN), splits their DC offset and charge asymmetry
/// into the supply's and the electrodes' parts and prints the verdict (text, and JSON where
/// `--json` says).
void run_swap(const SwapOptions& options);

/// `lopside lot CAPTURE... --limits FILE [--jobs N] [--lot NAME] [--json FILE|-] [--csv FILE|-]
/// [analysis flags]`
struct LotOptions {
  std::vector<std::string> captures;  ///< paths, glob patterns, directories, or @LIST files
  std::string limits_path;            ///< the TOML limits file
  unsigned jobs = 0;                  ///< captures measured at once; 0: one per core
  std::string lot;                    ///< the lot's name, for the report
  std::string json_path;              ///< empty for none, "-" for standard output
  std::string csv_path;               ///< empty for none, "-" for standard output
  std::string history;                ///< the history store (an SQLite file); empty for none
  std::string station;                ///< the test station recorded with each unit
  AnalysisOptions analysis;           ///< the same flags for every capture
  std::string html_path;              ///< the HTML report; empty for none, "-" for standard output
};

void setup_lot(CLI::App& app);

/// Measures every capture (in parallel), judges each unit against the limits and prints the
/// lot report; returns the exit status: ok when every unit passed, lot_not_passed otherwise.
int run_lot(const LotOptions& options);

/// `lopside trend --history FILE [--product NAME] [--json FILE|-] [--csv FILE|-]`
struct TrendOptions {
  std::string history;  ///< the store written by `lot --history`
  std::string product;  ///< only this product's lots; empty for all
  std::string json_path, csv_path;
  std::string html_path;  ///< the HTML report; empty for none, "-" for standard output
  std::vector<GivenOption> given_options;  ///< for the JSON's provenance
};

void setup_trend(CLI::App& app);
void run_trend(const TrendOptions& options);

/// The exit status a command asks main() to return after a normal end (ok unless set).
extern int command_status;

}  // namespace lopside::cli
