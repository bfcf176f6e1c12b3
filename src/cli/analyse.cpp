// The CLI side of the measuring pipeline: flags to MeasureSettings, files to sources.
#include <cstdint>
#include <string>
#include <utility>

#include "commands.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/number_parse.hpp"
#include "lopside/pipeline.hpp"
#include "progress.hpp"
#include "reader_flags.hpp"

namespace lopside::cli {
namespace {

std::pair<double, double> parse_zero(const std::string& text) {
  const auto colon = text.find(':');
  if (colon != std::string::npos) {
    const auto a = parse_number(text.substr(0, colon));
    const auto b = parse_number(text.substr(colon + 1));
    if (a && b && *b > *a) return {*a, *b};
  }
  throw CLI::ValidationError(
      "--zero", "expected FROM:TO in seconds with FROM < TO, e.g. 0:0.05; got '" + text + "'");
}

}  // namespace

void add_analysis_flags(CLI::App& app, AnalysisOptions& options) {
  app.add_option("--probe-offset", options.probe_offset_a,
                 "The current probe's stated offset tolerance, ± AMPS (taken as rectangular)")
      ->type_name("AMPS")
      ->check(CLI::NonNegativeNumber);
  app.add_option("--probe-gain-pct", options.probe_gain_pct,
                 "The current probe's stated gain tolerance, ± PCT percent (rectangular)")
      ->type_name("PCT")
      ->check(CLI::NonNegativeNumber);
  app.add_option("--zero", options.zero,
                 "Measure the probe's offset on a stretch with no discharge, FROM:TO seconds, "
                 "and subtract it")
      ->type_name("FROM:TO")
      ->check([](const std::string& text) {
        parse_zero(text);
        return std::string();
      });
  app.add_option("--reference", options.reference,
                 "The channel whose rising crossings set the cycles: auto (the voltage when it is "
                 "present and periodic, else the current), current or voltage")
      ->check(CLI::IsMember({"auto", "current", "voltage"}))
      ->capture_default_str();
  app.add_option("--block-cycles", options.block_cycles,
                 "Cycles per harmonic block (50/60 Hz captures use IEC 61000-4-7's 10/12)")
      ->check(CLI::Range(1, 1000));
  app.add_option("--max-order", options.max_order,
                 "Highest harmonic order to report; 0 skips the harmonic analysis")
      ->check(CLI::Range(0, 1000));
  app.add_option("--probe", options.probe,
                 "The current probe: shunt or hall (pass DC, the default), ct (current "
                 "transformer), rogowski (coil, di/dt), ac-coupled (an AC-coupled input); the "
                 "last three block DC (README: Probes that block DC)")
      ->check(CLI::IsMember({"shunt", "hall", "ct", "rogowski", "ac-coupled"}))
      ->capture_default_str();
  app.add_option("--probe-tau", options.probe_tau_s,
                 "The CT's or the AC coupling's time constant [s]: corrects the droop, "
                 "x = y + (1/tau)*integral(y dt); needs a record that starts at zero current")
      ->type_name("SECONDS")
      ->check(CLI::PositiveNumber);
  app.add_option("--probe-tau-pct", options.probe_tau_pct,
                 "The time constant's stated tolerance, ± PCT percent (rectangular)")
      ->type_name("PCT")
      ->check(CLI::NonNegativeNumber);
  app.add_option("--rogowski-m", options.rogowski_v_s_per_a,
                 "A Rogowski coil's sensitivity M, volts per (ampere per second) [V*s/A]: the "
                 "coil's output is integrated, i = (1/M)*integral(v dt)")
      ->type_name("V_S_PER_A")
      ->check(CLI::PositiveNumber);
  add_reader_flags(app, options.reader);
}

MeasureSettings measure_settings(const AnalysisOptions& o) {
  MeasureSettings settings;
  settings.capture_name = o.capture_path;
  settings.probe_offset_a = o.probe_offset_a;
  settings.probe.kind = probe_kind_from(o.probe).value_or(ProbeKind::shunt);
  const bool high_pass =
      settings.probe.kind == ProbeKind::ct || settings.probe.kind == ProbeKind::ac_coupled;
  if (o.probe_tau_s && !high_pass) {
    throw CLI::ValidationError("--probe-tau " + std::to_string(*o.probe_tau_s) +
                               " is for --probe ct or "
                               "--probe ac-coupled, not --probe " +
                               o.probe);
  }
  if (o.rogowski_v_s_per_a && settings.probe.kind != ProbeKind::rogowski)
    throw CLI::ValidationError("--rogowski-m is for --probe rogowski, not --probe " + o.probe);
  if (settings.probe.kind == ProbeKind::rogowski && !o.rogowski_v_s_per_a) {
    throw CLI::ValidationError(
        "--probe rogowski needs the coil's sensitivity: expected --rogowski-m "
        "V_S_PER_A (volts per ampere per second, e.g. 1e-7)");
  }
  settings.probe.tau_s = o.probe_tau_s;
  settings.probe.tau_tolerance_pct = o.probe_tau_pct;
  settings.probe.rogowski_v_s_per_a = o.rogowski_v_s_per_a;
  settings.probe_gain_pct = o.probe_gain_pct;
  if (!o.zero.empty()) {
    settings.zero_stretch_s = parse_zero(o.zero);
    settings.zero_text = o.zero;
    // The library reads the capture twice for the zero stretch. Standard input or a pipe can
    // be read only once, so it is copied to a temporary file first (bounded memory; the disk
    // holds the copy).
    keep_for_rereading(o.capture_path);
    for (const std::string& with : o.reader.with_paths) keep_for_rereading(with);
  }
  settings.block_cycles = o.block_cycles;
  settings.max_order = o.max_order;
  if (o.reference == "voltage") settings.reference = CycleReference::voltage;
  if (o.reference == "current") settings.reference = CycleReference::current;
  settings.picture = o.picture;
  return settings;
}

MeasureResult analyse_capture(const AnalysisOptions& o,
                              const std::function<void(const CycleRecord&)>& per_cycle) {
  const MeasureSettings settings = measure_settings(o);
  ProgressBar progress;
  MeasureCallbacks callbacks;
  callbacks.per_cycle = per_cycle;
  callbacks.progress = [&progress](double share, std::uint64_t frames) {
    progress.update(share, frames);
  };
  MeasureResult result =
      measure_capture([&o] { return open_capture(o.capture_path, o.reader); }, settings, callbacks);
  progress.done();
  return result;
}

}  // namespace lopside::cli
