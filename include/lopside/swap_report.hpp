#pragma once
/// \file
/// What `lopside swap` found, and its renderings: a text summary for the bench and a versioned
/// JSON document.

#include <iosfwd>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "lopside/cycle_engine.hpp"
#include "lopside/lead_swap.hpp"
#include "lopside/provenance.hpp"

namespace lopside {

/// Bump when a key changes meaning or goes away; adding keys keeps the number.
inline constexpr const char* kSwapSchema = "lopside.swap/1";

/// One capture of the pair as the report shows it.
struct SwapCaptureReport {
  std::string path;
  CycleSummary summary;               ///< measured with the probe tolerances set to 0
  std::vector<std::string> warnings;  ///< the reader's and the cycle engine's
  /// The capture's key/values (preamble, comments), so a serial number travels with the result.
  std::vector<std::pair<std::string, std::string>> metadata;
};

struct SwapReport {
  SwapCaptureReport normal, swapped;
  /// The repeat of the normal capture (N, S, N'), when one was given; result.repeat then holds
  /// its comparison with the first normal capture.
  std::optional<SwapCaptureReport> normal_again;
  double probe_offset_a = 0;         ///< stated ±offset tolerance used [A]
  double probe_gain_pct = 0;         ///< stated ±gain tolerance used [%]
  std::string probe_kind = "shunt";  ///< the current probe as stated (--probe)
  LeadSwapResult result;
  Provenance provenance;  ///< where the result came from
};

/// Aligned lines with SI prefixes, signs shown, each figure with its u95; then the verdict,
/// its evidence and next steps, the formulas and sign convention, the high-voltage caution,
/// and the warnings (the pair's, then each capture's). With a repeat of the normal capture:
/// its figures, N' − N with its u95 and the outcome, and the normal the split used.
void write_swap_text(std::ostream& out, const SwapReport& report);

/// One JSON object, schema kSwapSchema; a figure with an uncertainty is {value, u95, k}.
/// `repeat` is null without a repeat of the normal capture.
void write_swap_json(std::ostream& out, const SwapReport& report);

/// One self-contained HTML page (html_page.hpp): the verdict, the captures side by side, the
/// supply and electrode parts with their u95, the evidence, bar charts of the DCs and parts.
/// Each headline figure in a table carries data-key (its dot path in write_swap_json's output)
/// and data-value (that number).
void write_swap_html(std::ostream& out, const SwapReport& report);

}  // namespace lopside
