// `lopside measure`: cycle-by-cycle DC offset, RMS and charge asymmetry with uncertainty,
// harmonics, and the diagnosis of where a DC comes from.
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>
#include <vector>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/diagnosis.hpp"
#include "lopside/measure_report.hpp"
#include "output_paths.hpp"
#include "provenance.hpp"

namespace lopside::cli {

void setup_measure(CLI::App& app) {
  auto options = std::make_shared<MeasureOptions>();
  CLI::App* sub = app.add_subcommand(
      "measure",
      "Measure cycle by cycle: DC offset, RMS, charge asymmetry, harmonics, with uncertainty");
  sub->add_option("CAPTURE", options->analysis.capture_path,
                  "The capture file (CSV/TSV text, WAV, …)")
      ->required();
  sub->add_option(
         "--json", options->json_path,
         "Also write the results as JSON to FILE; '-' writes them alone to standard output")
      ->type_name("FILE|-");
  sub->add_option("--html", options->html_path,
                  "Also write a self-contained HTML report with plots to FILE (printable on A4)")
      ->type_name("FILE.html");
  sub->add_option("--cycles", options->cycles_path, "Write the per-cycle table as CSV to FILE")
      ->type_name("FILE.csv");
  sub->add_option("--spectrum", options->spectrum_path,
                  "Write the per-order harmonic table as CSV to FILE")
      ->type_name("FILE.csv");
  sub->add_option("--regime", options->regime,
                  "Electrode heating split: glow (cathode 70 %, common practice for cold-cathode "
                  "discharges) or arc (anode 70 %, the usual statement for thermionic arcs)")
      ->check(CLI::IsMember({"glow", "arc"}));
  sub->add_option("--cathode-share", options->cathode_share,
                  "The cathode's share of the electrode heat per coulomb, 0…1 (overrides --regime)")
      ->check(CLI::Range(0.0, 1.0));
  sub->add_option("--erosion-ug-per-c", options->erosion_ug_per_c,
                  "Cathode erosion per coulomb [µg/C], for an erosion estimate per hour")
      ->check(CLI::NonNegativeNumber);
  sub->add_flag("--full", options->full,
                "Print every figure, the harmonic table and the evidence (the default is a "
                "summary that fits one screen)");
  add_analysis_flags(*sub, options->analysis);
  sub->callback([options, sub]() {
    options->analysis.given_options =
        given_options(*sub, {"--json", "--html", "--cycles", "--spectrum", "--full"});
    run_measure(*options);
  });
}

void run_measure(const MeasureOptions& o) {
  std::vector<std::string> inputs{o.analysis.capture_path};
  inputs.insert(inputs.end(), o.analysis.reader.with_paths.begin(),
                o.analysis.reader.with_paths.end());
  check_output_paths(inputs, {{"--json", o.json_path, true},
                              {"--cycles", o.cycles_path},
                              {"--spectrum", o.spectrum_path},
                              {"--html", o.html_path}});
  // Outputs are opened first so that an unwritable target fails before a long read.
  std::optional<AtomicOutput> json_out, cycles_out, spectrum_out, html_out;
  if (!o.html_path.empty()) html_out.emplace(o.html_path);
  if (!o.json_path.empty()) json_out.emplace(o.json_path);
  if (!o.cycles_path.empty()) cycles_out.emplace(o.cycles_path);
  if (!o.spectrum_path.empty()) spectrum_out.emplace(o.spectrum_path);

  // The per-cycle table is written as cycles are found; its header needs to know whether a
  // voltage channel exists, which the first cycle tells.
  std::optional<CycleCsvWriter> cycles;
  const auto per_cycle = [&](const CycleRecord& r) {
    if (!cycles_out) return;
    if (!cycles) cycles.emplace(cycles_out->stream(), r.has_voltage);
    cycles->write(r);
  };
  std::vector<NamedInput> inputs_named{{"capture", o.analysis.capture_path}};
  for (const std::string& w : o.analysis.reader.with_paths) inputs_named.emplace_back("with", w);
  InputHasher hasher(std::move(inputs_named));
  Provenance provenance = begin_provenance("measure", o.analysis.given_options);
  add_analysis_settings(provenance, o.analysis);

  AnalysisOptions analysis = o.analysis;
  analysis.picture = html_out.has_value();
  MeasureResult result = analyse_capture(analysis, per_cycle);
  // Cathode-dominant 70:30 for glows, anode-dominant 30:70 for arcs (DOMAIN.md: common
  // practice; a parameter with a default per regime, never a constant).
  const double regime_share = o.regime == "arc" ? 0.3 : 0.7;
  result.heating = heating_share(result.summary, o.cathode_share.value_or(regime_share),
                                 o.cathode_share ? "custom" : o.regime, o.erosion_ug_per_c,
                                 &result.diagnosis, &result.time_course);
  provenance.settings.emplace_back("heating_regime", o.cathode_share ? "custom" : o.regime);
  provenance.settings.emplace_back("cathode_heat_share", o.cathode_share.value_or(regime_share));
  if (o.erosion_ug_per_c) provenance.settings.emplace_back("erosion_ug_per_c", *o.erosion_ug_per_c);
  provenance.inputs = hasher.take();
  result.provenance = std::move(provenance);

  if (cycles_out) cycles_out->commit();
  if (spectrum_out) {
    write_spectrum_csv(spectrum_out->stream(), result);
    spectrum_out->commit();
  }
  if (json_out) {
    write_measure_json(json_out->stream(), result);
    json_out->commit();
  }
  if (html_out) {
    write_measure_html(html_out->stream(), result);
    html_out->commit();
  }
  if (!json_out || !json_out->is_stdout()) {
    if (o.full)
      write_measure_text(std::cout, result);
    else
      write_measure_summary(std::cout, std::cerr, result);
  }
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
