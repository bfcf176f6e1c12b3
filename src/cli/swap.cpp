// `lopside swap`: the lead-swap test. Two captures of one unit, the supply's output leads
// exchanged between them, split into the DC that follows the supply and the DC that stays with
// the electrodes.
#include <iostream>
#include <memory>
#include <optional>
#include <stdexcept>
#include <string>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/lead_swap.hpp"
#include "lopside/swap_report.hpp"
#include "output_paths.hpp"

namespace lopside::cli {
namespace {

// Measures one capture with the probe's tolerances set to 0: what remains in the u95 is the
// capture's own scatter (and its --zero stretch's), independent of the other capture. The
// probe's tolerances are added once, by analyse_lead_swap, because the same probe took both.
SwapCapture measure_one(const AnalysisOptions& shared, const std::string& path,
                        SwapCaptureReport& report) {
  AnalysisOptions o = shared;
  o.capture_path = path;
  o.probe_offset_a = 0;
  o.probe_gain_pct = 0;
  o.max_order = 0;  // the test needs no harmonics
  const MeasureResult m = analyse_capture(o);
  report.path = path;
  report.summary = m.summary;
  report.warnings = m.warnings;
  report.metadata = m.info.metadata;
  SwapCapture c;
  c.summary = m.summary;
  c.dc_type_a = statistical_part(m.summary.dc_offset_a);
  c.asymmetry_type_a = statistical_part(m.summary.charge_asymmetry);
  return c;
}

}  // namespace

void setup_swap(CLI::App& app) {
  auto options = std::make_shared<SwapOptions>();
  CLI::App* sub = app.add_subcommand(
      "swap",
      "Lead-swap test: split the DC into the supply's part (reverses with the leads) and the "
      "electrodes' part (stays), from a capture with the leads normal and one with them exchanged");
  sub->add_option("NORMAL", options->normal_path, "The capture with the leads as normal")
      ->required();
  sub->add_option("SWAPPED", options->swapped_path,
                  "The capture with the supply's two output leads exchanged")
      ->required();
  sub->add_option("--probe-on", options->probe_on,
                  "Where the current probe stayed: on the same electrode's lead (electrode) or on "
                  "the same supply terminal (supply)")
      ->check(CLI::IsMember({"electrode", "supply"}))
      ->capture_default_str();
  sub->add_option(
         "--json", options->json_path,
         "Also write the results as JSON to FILE; '-' writes them alone to standard output")
      ->type_name("FILE|-");
  add_analysis_flags(*sub, options->analysis);
  // The harmonic settings do nothing here: no flag that is silently ignored.
  sub->remove_option(sub->get_option("--block-cycles"));
  sub->remove_option(sub->get_option("--max-order"));
  // One --with would be joined to both captures, which are two acquisitions: refused with a
  // word on what to do instead, rather than left unknown or applied wrongly.
  sub->remove_option(sub->get_option("--with"));
  sub->add_option_function<std::string>(
         "--with",
         [](const std::string&) {
           throw CLI::ValidationError(
               "--with",
               "swap reads two acquisitions, and one --with FILE cannot belong to both; "
               "expected NORMAL and SWAPPED each holding current and voltage in one "
               "file, or measure each with `lopside measure CAPTURE --with FILE`");
         },
         "Not available here: see `lopside measure --with`")
      ->type_name("FILE")
      ->group("Reading the capture");
  sub->callback([options]() { run_swap(*options); });
}

void run_swap(const SwapOptions& o) {
  check_output_paths({o.normal_path, o.swapped_path}, {{"--json", o.json_path, true}});
  // The output is opened first so that an unwritable target fails before two long reads.
  std::optional<AtomicOutput> json_out;
  if (!o.json_path.empty()) json_out.emplace(o.json_path);

  SwapReport report;
  const SwapCapture normal = measure_one(o.analysis, o.normal_path, report.normal);
  const SwapCapture swapped = measure_one(o.analysis, o.swapped_path, report.swapped);
  SwapProbe probe;
  probe.offset_a = o.analysis.probe_offset_a;
  probe.gain_pct = o.analysis.probe_gain_pct;
  probe.on = o.probe_on == "supply" ? ProbeOn::supply : ProbeOn::electrode;
  report.probe_offset_a = probe.offset_a;
  report.probe_gain_pct = probe.gain_pct;
  report.result = analyse_lead_swap(normal, swapped, probe);

  if (json_out) {
    write_swap_json(json_out->stream(), report);
    json_out->commit();
  }
  if (!json_out || !json_out->is_stdout()) write_swap_text(std::cout, report);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
