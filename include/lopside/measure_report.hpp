#pragma once
/// \file
/// What `lopside measure` found, and its renderings: a text summary for the bench, a versioned
/// JSON document, and the streamed per-cycle CSV table.

#include <cstddef>
#include <iosfwd>
#include <optional>
#include <string>
#include <vector>

#include "lopside/pipeline.hpp"

namespace lopside {

/// Bump when a key changes meaning or goes away; adding keys keeps the number.
inline constexpr const char* kMeasureSchema = "lopside.measure/1";

/// The caution every output that advises an action carries.
inline constexpr const char* kHighVoltageCaution =
    "High voltage can kill. lopside only analyses recordings: make any change or inspection "
    "with the supply isolated and discharged, use probes and leads rated for the voltage, and "
    "follow local electrical codes and licensed practice, which prevail over this advice.";

/// The current probe and how the DC was obtained through it, in one line ("shunt (passes DC)",
/// "ct, droop-corrected with tau 10.00 ms ± 1.0 %, …", "ac-coupled (blocks DC): …").
std::string probe_text(const MeasureResult& result);

/// Aligned lines with SI prefixes, signs shown, each figure with its u95; ends with warnings
/// and the sign convention.
void write_measure_text(std::ostream& out, const MeasureResult& result);

/// The default terminal summary, made to fit one screen: the verdict first, then the figures
/// that matter with their u95, the caution; warnings go to `warn` (standard error) after it.
/// Together at most `max_lines` lines of at most `width` columns: warnings beyond the room left
/// are counted, each cut to one line (the full listing and the JSON have them whole).
void write_measure_summary(std::ostream& out, std::ostream& warn, const MeasureResult& result,
                           std::size_t max_lines = 25, std::size_t width = 100);

/// The whole result as one self-contained HTML page (inline SVG and CSS, no request): verdict,
/// evidence, next steps and the caution first; the average cycle with its mirrored negative
/// half and a strip of real cycles (when result.picture is set); the DC and the charge
/// asymmetry over the record; the spectrum; the electrode heating; every figure with its u95;
/// the capture's metadata and warnings. Figures carry data-key (their JSON path) and data-value.
void write_measure_html(std::ostream& out, const MeasureResult& result);

/// One JSON object, schema kMeasureSchema, SI units with unit suffixes in the keys; a figure
/// with an uncertainty is {value, u95, k}.
void write_measure_json(std::ostream& out, const MeasureResult& result);

/// The per-order harmonic table as CSV: order, frequency_hz, amplitude_a, rms_a, phase_deg,
/// spreads, and the IEC 61000-4-7 group and subgroup where they apply.
void write_spectrum_csv(std::ostream& out, const MeasureResult& result);

/// The per-cycle table as CSV, one row per whole cycle, written as the cycles are found.
class CycleCsvWriter {
 public:
  CycleCsvWriter(std::ostream& out, bool with_voltage);
  void write(const CycleRecord& record);

 private:
  std::ostream& out_;
  bool with_voltage_;
};

}  // namespace lopside
