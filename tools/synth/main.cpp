// lopside-synth: writes synthetic discharge captures (CSV-like text or WAV, RF64, W64, FLAC)
// whose truth is known, for tests and demos. Prints nothing on stdout unless --verbose.

#include <CLI/CLI.hpp>
#include <cctype>
#include <exception>
#include <filesystem>
#include <iostream>
#include <string>
#include <utility>
#include <vector>

#include "lopside/atomic_file.hpp"
#include "lopside/error.hpp"
#include "lopside/units.hpp"
#include "synth.hpp"

namespace {

using namespace lopside;
using namespace lopside::synth;

enum class OutputKind { csv, wav, rf64, w64, flac };

struct SynthOptions {
  std::string output;
  std::string format;  // "" = from the extension
  bool verbose = false;
  CaptureSpec spec;
  double voltage_peak_v = 0.0;
  TextFormat text;
  bool no_header = false;
  bool no_time = false;
  std::vector<std::string> metadata;
  SoundFormat sound;
  double full_scale_current_a = 0.0;
  double full_scale_voltage_v = 0.0;
  double clip_high_a = 0.0;
  double clip_low_a = 0.0;
  double build_up_tau_s = 0.0;
  double flip_at_s = 0.0;
  std::string probe;
  std::string shape;
  std::string delimiter;
  std::string unit_style;
  std::string sample_format;
};

// Choice lists in the order --help shows them.
template <typename T>
using Names = std::vector<std::pair<std::string, T>>;
const Names<Shape> shape_names{{"sine", Shape::sine},
                               {"square", Shape::square},
                               {"triangle", Shape::triangle},
                               {"lobed", Shape::lobed}};
const Names<Probe> probe_names{{"shunt", Probe::shunt},
                               {"ct", Probe::current_transformer},
                               {"ac-coupled", Probe::ac_coupled},
                               {"rogowski", Probe::rogowski}};
const Names<Delimiter> delimiter_names{{"comma", Delimiter::comma},
                                       {"semicolon", Delimiter::semicolon},
                                       {"tab", Delimiter::tab},
                                       {"whitespace", Delimiter::whitespace}};
const Names<UnitStyle> unit_style_names{{"parens", UnitStyle::parentheses},
                                        {"brackets", UnitStyle::brackets},
                                        {"none", UnitStyle::none}};
const Names<SoundSampleFormat> sample_format_names{{"pcm16", SoundSampleFormat::pcm16},
                                                   {"pcm24", SoundSampleFormat::pcm24},
                                                   {"pcm32", SoundSampleFormat::pcm32},
                                                   {"float32", SoundSampleFormat::float32},
                                                   {"float64", SoundSampleFormat::float64}};

template <typename T>
std::vector<std::string> keys(const Names<T>& names) {
  std::vector<std::string> out;
  for (const auto& n : names) out.push_back(n.first);
  return out;
}

// The value of a name IsMember has already checked.
template <typename T>
T lookup(const Names<T>& names, const std::string& name) {
  for (const auto& n : names) {
    if (n.first == name) return n.second;
  }
  return names.front().second;
}

void setup(CLI::App& app, SynthOptions& o) {
  Waveform& i = o.spec.current;
  Timebase& t = o.spec.timebase;
  app.add_option("-o,--output", o.output, "output file (\"-\": text to stdout)")->required();
  app.add_option("--format", o.format, "csv, wav, rf64, w64 or flac [default: from the extension]")
      ->check(CLI::IsMember({"csv", "wav", "rf64", "w64", "flac"}));
  app.add_flag("-v,--verbose", o.verbose, "print what was written");

  auto* wave = "Current waveform";
  app.add_option("--shape", o.shape, "half-cycle shape")
      ->check(CLI::IsMember(keys(shape_names)))
      ->default_val("sine")
      ->group(wave);
  app.add_option("--peak", i.peak, "peak of the positive half-cycle [A]")
      ->default_val(0.02)
      ->group(wave);
  app.add_option("--dc", i.dc, "DC offset added to the current [A]")->default_val(0.0)->group(wave);
  app.add_option("--negative-ratio", i.negative_ratio, "negative peak = RATIO × positive peak")
      ->default_val(1.0)
      ->group(wave);
  app.add_option("--positive-share", i.positive_share,
                 "fraction of each period taken by the positive half (0.53 for 53:47)")
      ->default_val(0.5)
      ->group(wave);
  app.add_option("--breakdown", i.breakdown_share,
                 "lobed: fraction of each half-cycle before the lobe starts")
      ->default_val(0.2)
      ->group(wave);
  app.add_option("--lobe", i.lobe_share, "lobed: fraction of each half-cycle the lobe lasts")
      ->default_val(0.6)
      ->group(wave);
  app.add_option("--noise-rms", o.spec.noise_rms_a,
                 "white Gaussian recorder noise, added to the current channel as recorded (after "
                 "the probe) [A rms; V rms with --probe rogowski]")
      ->default_val(0.0)
      ->group(wave);
  app.add_option("--seed", o.spec.seed, "seed of the noise generator (mt19937_64)")
      ->default_val(1)
      ->group(wave);
  app.add_option("--clip-high", o.clip_high_a,
                 "recorder range: clip the current channel as recorded above this level "
                 "[A; V with --probe rogowski]")
      ->group(wave);
  app.add_option("--clip-low", o.clip_low_a,
                 "recorder range: clip the current channel as recorded below this level "
                 "(negative) [A; V with --probe rogowski]")
      ->group(wave);
  app.add_option("--lead-in", o.spec.lead_in_s,
                 "quiet lead-in: the current is exactly zero for the first S seconds (discharge "
                 "not yet ignited), then starts with the phase --phase gives; the voltage "
                 "channel (the supply) runs throughout, on the same phase [s]")
      ->check(CLI::NonNegativeNumber)
      ->default_val(0.0)
      ->group(wave);
  app.add_option("--build-up-tau", o.build_up_tau_s,
                 "the lobe asymmetry builds up from none with this time constant after "
                 "ignition (t = 0, or the end of --lead-in) [s]")
      ->check(CLI::PositiveNumber)
      ->group(wave);
  app.add_option("--flip-at", o.flip_at_s,
                 "from this time on the lobe asymmetry is mirrored: the DC changes sign [s]")
      ->check(CLI::NonNegativeNumber)
      ->group(wave);

  auto* probe = "Probe (what records the current; the voltage channel is never filtered)";
  app.add_option("--probe", o.probe,
                 "shunt: passes DC, the current as it is; ct or ac-coupled: first-order "
                 "high-pass y' = x' - y/tau (needs --probe-tau), passes no DC; rogowski: "
                 "M di/dt in volts (needs --rogowski-m). The probe starts at rest with zero "
                 "current before the first frame")
      ->check(CLI::IsMember(keys(probe_names)))
      ->default_val("shunt")
      ->group(probe);
  app.add_option("--probe-tau", o.spec.probe.tau_s,
                 "time constant of the ct or ac-coupled high-pass [s]")
      ->check(CLI::PositiveNumber)
      ->group(probe);
  app.add_option("--rogowski-m", o.spec.probe.rogowski_m_vs_per_a,
                 "sensitivity M of the Rogowski coil: output = M di/dt [V s/A]; the current "
                 "channel is then written in volts")
      ->check(CLI::PositiveNumber)
      ->group(probe);

  auto* timing = "Timing";
  app.add_option("--frequency", t.start_frequency_hz, "frequency (at the start) [Hz]")
      ->default_val(50.0)
      ->group(timing);
  app.add_option("--frequency-end", t.end_frequency_hz,
                 "frequency at the end, linear drift [default: --frequency]")
      ->group(timing);
  app.add_option("--phase", t.start_phase_deg,
                 "phase at the first frame [degrees]; 0 = start of a positive half")
      ->default_val(0.0)
      ->group(timing);
  app.add_option("--rate", t.sample_rate_hz, "sample rate [Hz]")->default_val(100e3)->group(timing);
  app.add_option("--duration", t.duration_s, "record length [s]")->default_val(0.1)->group(timing);
  app.add_option("--start-time", t.start_time_s, "time of the first frame in the time column [s]")
      ->default_val(0.0)
      ->group(timing);

  auto* volt = "Voltage channel";
  app.add_option("--voltage-peak", o.voltage_peak_v,
                 "add a voltage channel: sine of this peak, same phase as the current [V]")
      ->group(volt);
  app.add_option("--voltage-dc", o.spec.voltage.emplace().dc, "DC offset of the voltage [V]")
      ->default_val(0.0)
      ->group(volt);
  app.add_option("--voltage-share", o.spec.voltage->positive_share,
                 "fraction of each period taken by the voltage's positive half")
      ->default_val(0.5)
      ->group(volt);

  auto* text = "Text output";
  TextFormat& f = o.text;
  app.add_option("--delimiter", o.delimiter,
                 "value separator; semicolon writes decimal commas [default: tab for .tsv]")
      ->check(CLI::IsMember(keys(delimiter_names)))
      ->default_val("comma")
      ->group(text);
  app.add_flag("--preamble", f.preamble, "bench metadata lines and blank lines before the header")
      ->group(text);
  app.add_option("--meta", o.metadata, "extra preamble line KEY=VALUE (repeatable)")->group(text);
  app.add_flag("--comments", f.comments, "'#' comment lines before the header and at the end")
      ->group(text);
  app.add_flag("--crlf", f.crlf, "CR LF line ends")->group(text);
  app.add_flag("--quote-header", f.quote_header, "header cells in double quotes")->group(text);
  app.add_flag("--no-header", o.no_header, "data rows only")->group(text);
  app.add_option("--unit-style", o.unit_style, "how the header shows units")
      ->check(CLI::IsMember(keys(unit_style_names)))
      ->default_val("parens")
      ->group(text);
  app.add_option("--time-unit", f.time_unit, "unit of the time column")
      ->check(CLI::IsMember({"s", "ms", "us", "\xC2\xB5s", "ns"}))
      ->default_val("s")
      ->group(text);
  app.add_option("--current-unit", f.current_unit,
                 "unit the current channel is written in (V, mV or kV with --probe rogowski; "
                 "A there means V)")
      ->check(CLI::IsMember({"A", "mA", "uA",
                             "\xC2\xB5"
                             "A",
                             "kA", "V", "mV", "kV"}))
      ->default_val("A")
      ->group(text);
  app.add_option("--voltage-unit", f.voltage_unit, "unit the voltage is written in")
      ->check(CLI::IsMember({"V", "mV", "kV"}))
      ->default_val("V")
      ->group(text);
  app.add_flag("--no-time", o.no_time, "no time column")->group(text);
  app.add_option("--time-digits", f.time_digits, "significant digits of the time column")
      ->check(CLI::Range(1, 17))
      ->default_val(10)
      ->group(text);
  app.add_option("--digits", f.value_digits, "significant digits of the values")
      ->check(CLI::Range(1, 17))
      ->default_val(6)
      ->group(text);
  app.add_option("--time-name", f.time_name, "header name of the time column")
      ->default_val("time")
      ->group(text);
  app.add_option("--current-name", f.current_name, "header name of the current")
      ->default_val("current")
      ->group(text);
  app.add_option("--voltage-name", f.voltage_name, "header name of the voltage")
      ->default_val("voltage")
      ->group(text);

  auto* sound = "Sound file output";
  app.add_option("--sample-format", o.sample_format, "sample format (FLAC: pcm16, pcm24)")
      ->check(CLI::IsMember(keys(sample_format_names)))
      ->default_val("pcm24")
      ->group(sound);
  app.add_option("--full-scale-current", o.full_scale_current_a,
                 "current at full scale [A] [default: smallest 1-2-5 value above the peak]")
      ->group(sound);
  app.add_option("--full-scale-voltage", o.full_scale_voltage_v,
                 "voltage at full scale [V] [default: smallest 1-2-5 value above the peak]")
      ->group(sound);
}

OutputKind output_kind(const SynthOptions& o) {
  std::string name = o.format;
  if (name.empty()) {
    std::string ext = std::filesystem::path(o.output).extension().string();
    for (char& c : ext) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    if (o.output == "-" || ext == ".csv" || ext == ".txt" || ext == ".tsv" || ext == ".dat") {
      name = "csv";
    } else if (ext == ".wav" || ext == ".rf64" || ext == ".w64" || ext == ".flac") {
      name = ext.substr(1);
    } else {
      throw std::invalid_argument("cannot tell the format from '" + o.output +
                                  "': give --format csv, wav, rf64, w64 or flac");
    }
  }
  if (name == "wav") return OutputKind::wav;
  if (name == "rf64") return OutputKind::rf64;
  if (name == "w64") return OutputKind::w64;
  if (name == "flac") return OutputKind::flac;
  return OutputKind::csv;
}

int run(const CLI::App& app, SynthOptions& o) {
  CaptureSpec& spec = o.spec;
  if (app.count("--frequency-end") == 0) {
    spec.timebase.end_frequency_hz = spec.timebase.start_frequency_hz;
  }
  if (app.count("--voltage-peak") > 0) {
    spec.voltage->peak = o.voltage_peak_v;
  } else {
    if (app.count("--voltage-dc") + app.count("--voltage-share") > 0) {
      throw std::invalid_argument("--voltage-dc and --voltage-share need --voltage-peak");
    }
    spec.voltage.reset();
  }
  for (const auto& kv : o.metadata) {
    const auto eq = kv.find('=');
    if (eq == std::string::npos || eq == 0) {
      throw std::invalid_argument("--meta " + kv + ": expected KEY=VALUE");
    }
    o.text.metadata.emplace_back(kv.substr(0, eq), kv.substr(eq + 1));
  }
  spec.current.shape = lookup(shape_names, o.shape);
  spec.probe.kind = lookup(probe_names, o.probe);
  const bool high_pass =
      spec.probe.kind == Probe::current_transformer || spec.probe.kind == Probe::ac_coupled;
  if (high_pass != (app.count("--probe-tau") > 0)) {
    throw std::invalid_argument(high_pass ? "--probe " + o.probe + " needs --probe-tau"
                                          : "--probe-tau needs --probe ct or ac-coupled");
  }
  if ((spec.probe.kind == Probe::rogowski) != (app.count("--rogowski-m") > 0)) {
    throw std::invalid_argument(app.count("--rogowski-m") > 0
                                    ? "--rogowski-m needs --probe rogowski"
                                    : "--probe rogowski needs --rogowski-m");
  }
  o.text.delimiter = lookup(delimiter_names, o.delimiter);
  // A .tsv name means tab-separated unless --delimiter says otherwise.
  if (app.count("--delimiter") == 0 && std::filesystem::path(o.output).extension() == ".tsv") {
    o.text.delimiter = Delimiter::tab;
  }
  o.text.unit_style = lookup(unit_style_names, o.unit_style);
  o.sound.sample_format = lookup(sample_format_names, o.sample_format);
  o.text.header = !o.no_header;
  o.text.time_column = !o.no_time;
  if (app.count("--clip-high") > 0) spec.clip_high_a = o.clip_high_a;
  if (app.count("--clip-low") > 0) spec.clip_low_a = o.clip_low_a;
  if (app.count("--build-up-tau") > 0) spec.build_up_tau_s = o.build_up_tau_s;
  if (app.count("--flip-at") > 0) spec.polarity_flip_s = o.flip_at_s;
  if (app.count("--full-scale-current") > 0) o.sound.current_full_scale_a = o.full_scale_current_a;
  if (app.count("--full-scale-voltage") > 0) o.sound.voltage_full_scale_v = o.full_scale_voltage_v;

  Generator generator(spec);
  const OutputKind kind = output_kind(o);
  const bool volts = spec.probe.kind == Probe::rogowski;
  std::string summary;
  if (kind == OutputKind::csv) {
    AtomicOutput out(o.output);
    write_text(generator, o.text, out.stream());
    out.commit();
    summary = "text";
  } else {
    switch (kind) {
      case OutputKind::rf64:
        o.sound.container = SoundContainer::rf64;
        break;
      case OutputKind::w64:
        o.sound.container = SoundContainer::w64;
        break;
      case OutputKind::flac:
        o.sound.container = SoundContainer::flac;
        break;
      default:
        o.sound.container = SoundContainer::wav;
        break;
    }
    write_sound(generator, o.sound, o.output);
    const auto scales = full_scales(spec, o.sound);
    summary = std::string(to_string(o.sound.container)) + " " + to_string(o.sound.sample_format) +
              ", full scale " + format_si(scales[0], volts ? "V" : "A") +
              (scales.size() > 1 ? ", " + format_si(scales[1], "V") : "");
  }
  if (o.verbose && o.output != "-") {
    std::cout << "lopside-synth: wrote " << o.output << " (" << summary
              << "): " << generator.frames() << " frames, " << generator.channels()
              << " channel(s), " << format_si(spec.timebase.sample_rate_hz, "Hz") << "\n"
              << "lopside-synth: noise-free current mean over whole cycles "
              << format_si(cycle_mean(spec.current), "A", 6, true) << "\n";
    // The truth before the probe: what a DC-blocking probe hides and a correction must find.
    std::cout << "lopside-synth: probe " << probe_name(spec.probe.kind);
    if (high_pass) std::cout << ", time constant " << format_si(spec.probe.tau_s, "s");
    if (volts) {
      std::cout << ", M " << format_si(spec.probe.rogowski_m_vs_per_a, "H") << " (V·s/A)"
                << " (the current channel is M·di/dt in V)";
    }
    std::cout << "; true DC of the current before the probe "
              << format_si(cycle_mean(spec.current), "A", 6, true) << "\n";
    if (spec.lead_in_s > 0.0) {
      std::cout << "lopside-synth: current zero for the first " << format_si(spec.lead_in_s, "s")
                << " (lead-in)" << (spec.voltage ? ", voltage on throughout" : "") << "\n";
    }
  }
  return exit_code::ok;
}

}  // namespace

int main(int argc, char** argv) {
  CLI::App app{
      "lopside-synth: writes a synthetic discharge capture with a known truth "
      "(current, optional voltage) as CSV-like text or WAV, RF64, W64, FLAC."};
  SynthOptions options;
  setup(app, options);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    const int status = app.exit(e);
    return status == 0 ? exit_code::ok : exit_code::bad_input;
  }
  try {
    return run(app, options);
  } catch (const lopside::InputError& e) {
    std::cerr << "lopside-synth: " << e.what() << '\n';
  } catch (const std::invalid_argument& e) {
    std::cerr << "lopside-synth: " << e.what() << '\n';
  } catch (const std::exception& e) {
    std::cerr << "lopside-synth: internal error: " << e.what() << '\n';
    return exit_code::failure;
  }
  return exit_code::bad_input;
}
