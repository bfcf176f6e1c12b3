#include <array>
#include <cstdio>
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/channel_stats.hpp"
#include "lopside/error.hpp"
#include "lopside/inspect_report.hpp"
#include "lopside/units.hpp"
#include "output_paths.hpp"
#include "reader_flags.hpp"

namespace lopside::cli {
namespace {

std::string percent(double share) {
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), "%.2f %%", share * 100.0);
  return buf.data();
}

std::string extreme_text(double v, const std::string& unit) {
  if (!unit.empty()) return format_si(v, unit, 4);
  std::array<char, 32> buf{};
  std::snprintf(buf.data(), buf.size(), "%.6g", v);
  return buf.data();
}

}  // namespace

void setup_inspect(CLI::App& app) {
  auto options = std::make_shared<InspectOptions>();
  CLI::App* sub = app.add_subcommand(
      "inspect", "Read a capture and summarise it: format, rate, length, channels, clipping");
  sub->add_option("CAPTURE", options->capture_path, "The capture file (CSV/TSV text, WAV, …)")
      ->required();
  sub->add_option("--json", options->json_path,
                  "Also write the summary as JSON to FILE; '-' writes it alone to standard output")
      ->type_name("FILE|-");
  add_reader_flags(*sub, options->reader);
  sub->callback([options]() { run_inspect(*options); });
}

void run_inspect(const InspectOptions& options) {
  std::vector<std::string> inputs{options.capture_path};
  inputs.insert(inputs.end(), options.reader.with_paths.begin(), options.reader.with_paths.end());
  check_output_paths(inputs, {{"--json", options.json_path, true}});
  // Opened first so an unwritable target fails before a long read, not after it.
  std::optional<AtomicOutput> json_out;
  if (!options.json_path.empty()) json_out.emplace(options.json_path);

  const std::unique_ptr<SampleSource> source = open_capture(options.capture_path, options.reader);
  const std::size_t n_channels = source->info().channels.size();
  if (n_channels == 0) throw InputError(options.capture_path, "expected at least one channel");

  ChannelStats stats(n_channels);
  SampleBlock block;
  while (source->read(block, kBlockFrames) > 0) stats.add(block);
  if (stats.frames() == 0) {
    throw InputError(options.capture_path, "expected samples, found none");
  }

  InspectResult result{source->info(), stats.frames(), stats.summaries(), source->warnings()};
  if (result.info.frames && *result.info.frames != result.frames) {
    result.warnings.push_back("the file announces " + std::to_string(*result.info.frames) +
                              " frames but " + std::to_string(result.frames) + " were read");
  }
  for (std::size_t c = 0; c < n_channels; ++c) {
    const ChannelSummary& s = result.channels[c];
    if (!s.clipping_suspected()) continue;
    const ChannelInfo& ch = result.info.channels[c];
    // A recorder at the end of its range holds the same code for many samples; on one
    // polarity only, that fakes a DC offset, so later results on this channel are suspect.
    result.warnings.push_back(
        "channel " + std::to_string(ch.index) + " '" + ch.name +
        "' may be clipped: " + percent(s.clipped_high_share) +
        " of its samples sit on its maximum (" + extreme_text(s.max, ch.unit) + ") and " +
        percent(s.clipped_low_share) + " on its minimum (" + extreme_text(s.min, ch.unit) +
        ") in runs of " + std::to_string(kClipRunMin) +
        " or more; check the recorder's range (coarse quantisation of a slow signal looks the "
        "same)");
  }

  if (json_out) {
    write_inspect_json(json_out->stream(), result);
    json_out->commit();
  }
  if (!json_out || !json_out->is_stdout()) write_inspect_text(std::cout, result);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
