// The measuring pipeline (pipeline.hpp): one capture in, one MeasureResult out, shared by
// `measure`, `swap` and every later command.
#include "lopside/pipeline.hpp"

#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "lopside/error.hpp"
#include "lopside/read_ahead.hpp"
#include "lopside/uncertainty.hpp"

namespace lopside {
namespace {

std::optional<std::size_t> channel_with_role(const CaptureInfo& info, ChannelRole role) {
  for (std::size_t c = 0; c < info.channels.size(); ++c) {
    if (info.channels[c].role == role) return c;
  }
  return std::nullopt;
}

struct Zero {
  double value_a = 0;
  double u_a = 0;
};

// The probe's offset: the mean current over a stretch with no discharge. Its standard error
// comes from batch means over the samples, which allows for correlated noise.
Zero measure_zero(const SourceOpener& open, const MeasureSettings& o, double from_s, double to_s) {
  const auto source = open();
  const CaptureInfo& info = source->info();
  const auto current = channel_with_role(info, ChannelRole::current);
  if (!current) return {};
  BatchMeans mean;
  SampleBlock block;
  std::uint64_t frame = 0;
  const double dt = 1.0 / info.sample_rate_hz;
  bool past = false;
  while (!past && source->read(block, kBlockFrames) > 0) {
    for (std::size_t f = 0; f < block.frames; ++f, ++frame) {
      const double t = info.start_time_s + static_cast<double>(frame) * dt;
      if (t > to_s) {
        past = true;
        break;
      }
      if (t >= from_s) mean.add(block.value(f, *current));
    }
  }
  if (mean.count() < 2) {
    throw InputError(o.capture_name, "--zero " + o.zero_text + ": the stretch holds " +
                                         std::to_string(mean.count()) +
                                         " sample(s); expected a stretch inside the capture");
  }
  const double se = mean.standard_error();
  return {mean.mean(), std::isfinite(se) ? se : 0.0};
}

// The current must be in amperes: a channel in volts (or codes, or a.u.) read as amperes gives
// figures off by the probe's transfer ratio, silently. No stated unit is taken as amperes, and
// said.
void check_current_unit(const MeasureSettings& o, const ChannelInfo& c,
                        std::vector<std::string>& warnings) {
  if (c.unit == "A") return;
  const std::string n = std::to_string(c.index);
  if (c.unit.empty() && c.unit_text.empty()) {
    warnings.push_back("channel " + n + " '" + c.name +
                       "' states no unit: taken as amperes (give --unit " + n +
                       "=A, or --gain and --unit for a probe in volts, to say so)");
    return;
  }
  const std::string unit = c.unit.empty() ? c.unit_text : c.unit;
  throw InputError(o.capture_name,
                   "channel " + n + " '" + c.name + "', taken as the current, is in " + unit +
                       ", not amperes; expected --gain " + n + "=A_PER_" +
                       (c.unit == "V" ? "V" : "UNIT") + " (the probe's transfer ratio, e.g. " +
                       "--gain " + n + "=10 for a 100 mV/A probe) or --unit " + n +
                       "=A if the values are amperes already" +
                       (c.unit == "V" ? "; or name the current channel with --current CH" : ""));
}

}  // namespace

MeasureResult measure_capture(const SourceOpener& open, const MeasureSettings& o,
                              const MeasureCallbacks& callbacks) {
  const auto& per_cycle = callbacks.per_cycle;
  const std::optional<std::pair<double, double>>& zero_stretch = o.zero_stretch_s;
  Zero zero;
  // The stretch may lie anywhere in the record, so the capture is read twice: once for the
  // offset, once to measure.
  if (zero_stretch) zero = measure_zero(open, o, zero_stretch->first, zero_stretch->second);

  const std::unique_ptr<SampleSource> source = open();
  const CaptureInfo& info = source->info();
  const auto current = channel_with_role(info, ChannelRole::current);
  if (!current) {
    throw InputError(o.capture_name,
                     "no channel is known to carry the current; expected "
                     "--current CH (channels: " +
                         describe_channels(info.channels) + ")");
  }
  const auto voltage = channel_with_role(info, ChannelRole::voltage);
  std::vector<std::string> unit_warnings;
  check_current_unit(o, info.channels[*current], unit_warnings);

  CycleConfig config;
  config.sample_rate_hz = info.sample_rate_hz;
  config.start_time_s = info.start_time_s;
  config.current_channel = *current;
  config.voltage_channel = voltage;
  config.current_zero_a = zero.value_a;
  config.current_zero_u_a = zero.u_a;
  config.probe_offset_a = o.probe_offset_a;
  config.probe_gain_pct = o.probe_gain_pct;
  config.exclude_s = zero_stretch;
  config.reference = o.reference;
  if (o.reference == CycleReference::voltage) {
    if (!voltage) {
      throw InputError(o.capture_name,
                       "--reference voltage: no channel is known to carry the "
                       "voltage; expected --voltage CH (channels: " +
                           describe_channels(info.channels) + ")");
    }
  }
  config.current_full_scale_low_a = info.channels[*current].full_scale_low;
  config.current_full_scale_high_a = info.channels[*current].full_scale_high;
  if (o.max_order > 0) {
    HarmonicConfig harmonics;
    harmonics.block_cycles = o.block_cycles;
    harmonics.max_order = o.max_order;
    config.harmonics = harmonics;
  }

  TimeCourse course;
  std::optional<CyclePictureBuilder> picture;
  if (o.picture)
    picture.emplace(info.sample_rate_hz, info.start_time_s, *current, voltage, zero.value_a);
  CycleEngine engine(config, [&per_cycle, &course, &picture](const CycleRecord& r) {
    course.add(r);
    if (picture) picture->on_cycle(r);
    if (per_cycle) per_cycle(r);
  });

  std::uint64_t frames = 0;
  {
    // Reading (parsing text, converting samples) runs on a second thread, one block ahead of
    // the measurement: the two stages share two cores instead of taking turns on one.
    // The source's info is read here before the thread starts and again after it has ended.
    const std::optional<std::uint64_t> stated_frames = info.frames;
    // Blocks of a quarter of the usual size: eight of them in flight keep the reader well ahead
    // of the engine for 6 MiB less than full blocks (with full ones a 5 GB CSV peaked at
    // 65 MiB resident, of which 12 MiB are the program and its libraries).
    ReadAhead reader(*source, kBlockFrames / 4);
    const SampleBlock* block = nullptr;
    while (reader.next(block)) {
      // The picture's ring first: the engine reports a cycle only once its frames are in.
      if (picture) picture->add_block(*block);
      engine.consume(*block);
      frames += block->frames;
      const double share = stated_frames
                               ? static_cast<double>(frames) / static_cast<double>(*stated_frames)
                               : reader.progress();
      if (callbacks.progress) callbacks.progress(share, frames);
    }
  }
  const CycleSummary& summary = engine.finish();

  const ChannelInfo& ref_channel =
      info.channels[summary.reference == "voltage" ? *voltage : *current];
  // Issue 9, item 6: a record without a periodic fundamental is refused, never given one.
  if (!summary.periodic) {
    throw InputError(
        o.capture_name,
        "the " + summary.reference + " channel '" + ref_channel.name +
            "' has no periodic fundamental: " + summary.not_periodic_reason +
            "; expected a periodic current or voltage (--reference chooses the channel)");
  }
  if (summary.cycles < 2) {
    const ChannelInfo& ref = ref_channel;
    throw InputError(o.capture_name,
                     "found " + std::to_string(summary.cycles) + " whole cycle(s) from " +
                         std::to_string(summary.crossings) + " rising crossing(s) of the " +
                         summary.reference + " channel '" + ref.name + "' in " +
                         std::to_string(frames) + " samples; expected at least two whole cycles");
  }

  MeasureResult result;
  result.info = source->info();  // text readers refine the rate once the read has ended
  result.current_name = info.channels[*current].name;
  if (voltage) result.voltage_name = info.channels[*voltage].name;
  result.probe_offset_a = o.probe_offset_a;
  result.probe_gain_pct = o.probe_gain_pct;
  result.zero_stretch_s = zero_stretch;
  result.zero_u_a = zero.u_a;
  result.summary = summary;
  result.time_course = course.finish();
  result.diagnosis = diagnose(summary, result.time_course);
  if (picture) result.picture = picture->finish();
  result.warnings = source->warnings();
  for (const auto& w : unit_warnings) result.warnings.push_back(w);
  for (const auto& w : summary.warnings) result.warnings.push_back(w);
  if (summary.harmonics) {
    for (const auto& w : summary.harmonics->warnings) result.warnings.push_back(w);
  }
  if (std::fabs(result.info.sample_rate_hz / config.sample_rate_hz - 1.0) > 1e-6) {
    result.warnings.push_back(
        "the time column's final fit moved the sample rate by more than "
        "1e-6 after the first rows; times may be off by that share");
  }
  return result;
}

}  // namespace lopside
