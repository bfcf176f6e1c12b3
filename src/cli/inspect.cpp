#include <array>
#include <cmath>
#include <cstdint>
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
#include "provenance.hpp"
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

/// "1 flat crest", "20 flat crests".
std::string counted(std::uint64_t n, const std::string& noun) {
  return std::to_string(n) + " " + noun + (n == 1 ? "" : "s");
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
  sub->callback([options, sub]() {
    options->given_options = given_options(*sub, {"--json"});
    run_inspect(*options);
  });
}

void run_inspect(const InspectOptions& options) {
  std::vector<std::string> inputs{options.capture_path};
  inputs.insert(inputs.end(), options.reader.with_paths.begin(), options.reader.with_paths.end());
  check_output_paths(inputs, {{"--json", options.json_path, true}});
  // Opened first so an unwritable target fails before a long read, not after it.
  std::optional<AtomicOutput> json_out;
  if (!options.json_path.empty()) json_out.emplace(options.json_path);
  std::vector<NamedInput> named{{"capture", options.capture_path}};
  for (const std::string& w : options.reader.with_paths) named.emplace_back("with", w);
  InputHasher hasher(std::move(named));
  Provenance provenance = begin_provenance("inspect", options.given_options);
  provenance.settings = reader_settings(options.reader);

  const std::unique_ptr<SampleSource> source = open_capture(options.capture_path, options.reader);
  const std::size_t n_channels = source->info().channels.size();
  if (n_channels == 0) throw InputError(options.capture_path, "expected at least one channel");

  ChannelStats stats(n_channels);
  for (std::size_t c = 0; c < n_channels; ++c) {
    const ChannelInfo& ch = source->info().channels[c];
    stats.set_full_scale(c, ch.full_scale_low, ch.full_scale_high);
  }
  SampleBlock block;
  // A float file can hold NaN or infinity (text readers refuse them at their line); inspect
  // summarises finite values, so it refuses such a file with the frame and its time.
  std::uint64_t frame0 = 0;
  while (const std::size_t got = source->read(block, kBlockFrames)) {
    for (std::size_t f = 0; f < got; ++f) {
      for (std::size_t c = 0; c < block.channels; ++c) {
        if (std::isfinite(block.value(f, c))) continue;
        const CaptureInfo& ci = source->info();
        const double t = ci.start_time_s + static_cast<double>(frame0 + f) / ci.sample_rate_hz;
        throw InputError(options.capture_path,
                         "frame " + std::to_string(frame0 + f + 1) + " (t = " + std::to_string(t) +
                             " s), channel " + std::to_string(c + 1) +
                             ": the sample is not finite (NaN or infinite); expected finite "
                             "values (lopside measure leaves such cycles out and says so)");
      }
    }
    frame0 += got;
    stats.add(block);
  }
  if (stats.frames() == 0) {
    throw InputError(options.capture_path, "expected samples, found none");
  }

  InspectResult result{source->info(), stats.frames(), stats.summaries(), source->warnings(), {}};
  if (result.info.frames && *result.info.frames != result.frames) {
    result.warnings.push_back("the file announces " + std::to_string(*result.info.frames) +
                              " frames but " + std::to_string(result.frames) + " were read");
  }
  for (std::size_t c = 0; c < n_channels; ++c) {
    const ChannelSummary& s = result.channels[c];
    if (!s.clipping_suspected()) continue;
    const ChannelInfo& ch = result.info.channels[c];
    // One clipped polarity fakes a DC offset and a charge asymmetry: say where and why, so the
    // later results on this channel are read as suspect.
    std::string where;
    const auto side = [&](const char* name, double value, std::uint64_t crests,
                          std::uint64_t samples, double share, bool full_scale) {
      if (samples == 0) return;
      if (!where.empty()) where += " and ";
      where += std::string("at its ") + name + " (" + extreme_text(value, ch.unit) + "): ";
      if (full_scale) {
        where += counted(samples, "sample") + " (" + percent(share) +
                 ") on the file's integer full scale";
      } else {
        where += counted(crests, "flat crest") + " (" + percent(share) +
                 " of the samples) too long for quantisation, cut off where the flanks' "
                 "curvature says the waveform would have gone further";
      }
    };
    side("maximum", s.max, s.clipped_high_crests, s.clipped_high_samples, s.clipped_high_share,
         s.full_scale_high);
    side("minimum", s.min, s.clipped_low_crests, s.clipped_low_samples, s.clipped_low_share,
         s.full_scale_low);
    result.warnings.push_back("channel " + std::to_string(ch.index) + " '" + ch.name +
                              "' is clipped (the recorder's range was reached) " + where +
                              "; a DC offset or asymmetry measured on it is not trustworthy");
  }

  provenance.inputs = hasher.take();
  result.provenance = std::move(provenance);
  if (json_out) {
    write_inspect_json(json_out->stream(), result);
    json_out->commit();
  }
  if (!json_out || !json_out->is_stdout()) write_inspect_text(std::cout, result);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
