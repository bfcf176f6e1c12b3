// The measuring pipeline (pipeline.hpp): one capture in, one MeasureResult out, shared by
// `measure`, `swap` and every later command.
#include "lopside/pipeline.hpp"

#include <cmath>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "lopside/dead_interval.hpp"
#include "lopside/error.hpp"
#include "lopside/read_ahead.hpp"
#include "lopside/uncertainty.hpp"
#include "lopside/units.hpp"

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

namespace {

// One measuring pass. `zero_override`: the current's zero taken from elsewhere (the dead
// intervals' rest level) instead of the --zero stretch.
MeasureResult measure_pass(const SourceOpener& open, const MeasureSettings& o,
                           const MeasureCallbacks& callbacks, std::optional<Zero> zero_override) {
  const auto& per_cycle = callbacks.per_cycle;
  const std::optional<std::pair<double, double>>& zero_stretch = o.zero_stretch_s;
  Zero zero;
  // The stretch may lie anywhere in the record, so the capture is read twice: once for the
  // offset, once to measure.
  if (zero_override)
    zero = *zero_override;
  else if (zero_stretch)
    zero = measure_zero(open, o, zero_stretch->first, zero_stretch->second);

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
  // Through a probe that passes DC the rest level only feeds a warning: a sample of the cycles.
  DeadIntervalFinder dead(info.sample_rate_hz, info.start_time_s, *current, zero.value_a,
                          passes_dc(o.probe.kind) ? 8 : 1);
  CycleEngine engine(config, [&per_cycle, &course, &picture, &dead](const CycleRecord& r) {
    course.add(r);
    if (picture) picture->on_cycle(r);
    dead.on_cycle(r);
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
      dead.add_block(*block);
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
  result.probe = o.probe;
  result.probe_findings.kind = to_string(o.probe.kind);
  result.probe_findings.passes_dc = passes_dc(o.probe.kind);
  result.probe_findings.dead = dead.finish();
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

}  // namespace

namespace {

// A figure proportional to the DC gets the relative standard uncertainty `rel` more (in
// quadrature, k = 2): the droop correction's DC scales with 1/τ (GUM 5.1.2).
void widen(Estimate& e, double rel) {
  const double extra = 2 * std::fabs(e.value) * rel;
  e.u95 = std::sqrt(e.u95 * e.u95 + extra * extra);
}

}  // namespace

MeasureResult measure_capture(const SourceOpener& open, const MeasureSettings& o,
                              const MeasureCallbacks& callbacks) {
  const ProbeSettings& probe = o.probe;
  if (ProbeCorrectedSource::corrects(probe)) {
    // A first read finds the quiet lead-in (the correction integrates from the record's start,
    // which must be at zero current, and takes a Rogowski integrator's offset there).
    std::optional<std::size_t> current;
    LeadIn lead;
    {
      const auto first = open();
      current = channel_with_role(first->info(), ChannelRole::current);
      if (!current) return measure_pass(open, o, callbacks, std::nullopt);  // says what is missing
      lead = find_lead_in(*first, *current);
    }
    const SourceOpener corrected = [&open, &probe, current,
                                    lead]() -> std::unique_ptr<SampleSource> {
      return std::make_unique<ProbeCorrectedSource>(open(), *current, probe, lead);
    };
    MeasureResult r = measure_pass(corrected, o, callbacks, std::nullopt);
    const double rate = r.info.sample_rate_hz;
    const double lead_s = static_cast<double>(lead.frames) / rate;
    const double period_s = 1.0 / r.summary.fundamental_hz.value;
    r.lead_in_s = lead_s;
    if (!(lead_s >= period_s)) {
      throw InputError(
          o.capture_name,
          std::string("--probe ") + to_string(probe.kind) +
              (probe.kind == ProbeKind::rogowski ? " integration" : " droop correction") +
              " needs a record that starts at zero current: the " +
              (probe.kind == ProbeKind::rogowski ? "coil's output" : "current") +
              " rises above 2 % of its peak after " + format_si(lead_s, "s", 3) +
              ", less than one period (" + format_si(period_s, "s", 3) +
              "); expected a quiet lead-in of at least one period (start the recording before the "
              "discharge), or a probe that passes DC");
    }
    r.probe_findings.method = probe.kind == ProbeKind::rogowski ? "rogowski" : "droop";
    // The integral carries the recorder's noise as a random walk, σ·√(Δt·t) after t, whose
    // mean over a record of length T has the standard deviation σ·√(Δt·T/3); a Rogowski
    // integrator's offset, estimated from the lead-in's mean, is off by σ/√n and ramps up to
    // T times that, T/2 on average. Both scale by 1/M (Rogowski) or 1/τ (droop); σ is the
    // lead-in's scatter, where the current is zero (GUM 5.1.2: added in quadrature).
    {
      const double dt = 1.0 / rate;
      const double span = static_cast<double>(lead.total_frames) * dt;
      const double scale =
          probe.kind == ProbeKind::rogowski ? 1.0 / *probe.rogowski_v_s_per_a : 1.0 / *probe.tau_s;
      double u = lead.sd * std::sqrt(dt * span / 3) * scale;
      if (probe.kind == ProbeKind::rogowski && lead.frames > 1)
        u = std::hypot(u, lead.sd / std::sqrt(static_cast<double>(lead.frames)) * span / 2 * scale);
      CycleSummary& s = r.summary;
      const double extra = 2 * u;
      s.dc_offset_a.u95 = std::hypot(s.dc_offset_a.u95, extra);
      if (s.rms_a.value > 0) s.dc_to_rms.u95 = std::hypot(s.dc_to_rms.u95, extra / s.rms_a.value);
      if (s.ac_rms_a.value > 0)
        s.dc_to_ac_rms.u95 = std::hypot(s.dc_to_ac_rms.u95, extra / s.ac_rms_a.value);
      s.dc_significant = std::fabs(s.dc_offset_a.value) > s.dc_offset_a.u95;
    }
    if (probe.kind != ProbeKind::rogowski && probe.tau_tolerance_pct > 0) {
      const double rel = rectangular(probe.tau_tolerance_pct / 100);
      CycleSummary& s = r.summary;
      for (Estimate* e : {&s.dc_offset_a, &s.dc_to_rms, &s.dc_to_ac_rms, &s.charge_asymmetry})
        widen(*e, rel);
      s.dc_significant = std::fabs(s.dc_offset_a.value) > s.dc_offset_a.u95;
    }
    r.diagnosis = diagnose(r.summary, r.time_course);
    apply_probe_findings(r.diagnosis, r.summary, r.probe_findings);
    return r;
  }
  if (passes_dc(probe.kind) || o.zero_stretch_s) {
    MeasureResult r = measure_pass(open, o, callbacks, std::nullopt);
    if (!passes_dc(probe.kind)) r.probe_findings.method = "not_recovered";
    apply_probe_findings(r.diagnosis, r.summary, r.probe_findings);
    return r;
  }
  // A probe that blocks DC, no τ: the first pass finds the rest level; where the discharge goes
  // out in each cycle it is −DC, and the second pass takes it as the zero (its standard
  // uncertainty u95/k carried like a --zero stretch's). The per-cycle table is written by the
  // pass whose figures are reported.
  MeasureCallbacks quiet = callbacks;
  quiet.per_cycle = nullptr;
  MeasureResult first = measure_pass(open, o, quiet, std::nullopt);
  const DeadLevel dead = first.probe_findings.dead;
  if (!dead.found && !callbacks.per_cycle) {
    first.probe_findings.method = "not_recovered";
    apply_probe_findings(first.diagnosis, first.summary, first.probe_findings);
    return first;
  }
  Zero zero;
  if (dead.found) zero = Zero{dead.level_a.value, dead.level_a.u95 / dead.level_a.coverage_k};
  MeasureResult r =
      measure_pass(open, o, callbacks, dead.found ? std::optional<Zero>(zero) : std::nullopt);
  r.probe_findings.dead = dead;  // as read, before the shift
  r.probe_findings.method = dead.found ? "dead_intervals" : "not_recovered";
  if (dead.found) r.dc_from_dead_intervals_a = r.summary.dc_offset_a;
  apply_probe_findings(r.diagnosis, r.summary, r.probe_findings);
  return r;
}

}  // namespace lopside
