#include "lopside/swap_report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <ostream>

#include "lopside/report_format.hpp"
#include "lopside/units.hpp"
#include "provenance_json.hpp"
#include "report_support.hpp"

namespace lopside {
namespace {

using json = nlohmann::ordered_json;
using report_detail::estimate_json;
using report_detail::fixed;
using report_detail::line;
using report_detail::pad;

constexpr const char* kSafety =
    "High voltage can kill: exchange leads only with the supply isolated and discharged, with "
    "probes rated for the voltage; local electrical codes and licensed practice prevail.";

constexpr const char* kSignConvention =
    "positive current flows from the probed lead into electrode A, the electrode that lead fed in "
    "the normal capture; both parts are stated as the normal capture sees them: D > 0, the supply "
    "drives net current into A; E > 0, the electrodes draw net current into A (A is the anode for "
    "more charge, B the preferred cathode)";

json finite_or_null(double v) {
  return std::isfinite(v) ? json(v) : json(nullptr);
}

std::string signed_fixed(double v, int decimals) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%+.*f", decimals, v);
  return buf.data();
}

bool ends_with(const std::string& s, const std::string& tail) {
  return s.size() >= tail.size() && s.compare(s.size() - tail.size(), tail.size(), tail) == 0;
}

// An evidence figure in the unit its code implies.
std::string evidence_figure(const std::string& code, double v) {
  if (!std::isfinite(v)) return "n/a";
  if (ends_with(code, "_bias") || code == "repeat_changed") return format_si(v, "A", 3, true);
  if (ends_with(code, "_asymmetry") || code == "repeat_asymmetry_changed") {
    return signed_fixed(v, 4);
  }
  if (code.rfind("clipped", 0) == 0) return fixed(v, 0) + " cycles";
  return fixed(100 * v, 2) + " %";
}

// The bar a value is held against has no sign.
std::string evidence_bar(const std::string& code, double v) {
  if (!std::isfinite(v)) return "n/a";
  if (ends_with(code, "_bias") || code == "repeat_changed") return format_si(v, "A", 3);
  if (ends_with(code, "_asymmetry") || code == "repeat_asymmetry_changed") return fixed(v, 4);
  return evidence_figure(code, v);
}

void capture_lines(std::ostream& out, const char* label, const SwapCaptureReport& c,
                   const Estimate& dc, const Estimate& asymmetry) {
  const CycleSummary& s = c.summary;
  line(out, label, c.path);
  line(out, "",
       "DC offset " + format_with_uncertainty(dc.value, dc.u95, "A", true) + ", charge asymmetry " +
           format_ratio_with_uncertainty(asymmetry.value, asymmetry.u95, true));
  line(out, "",
       format_si(s.fundamental_hz.value, "Hz", 5) + ", AC RMS " +
           format_si(s.ac_rms_a.value, "A", 4) + ", " + std::to_string(s.cycles) +
           " whole cycles, " + std::to_string(s.clipped_positive + s.clipped_negative) +
           " clipped");
}

std::string counts_text(const std::vector<std::string>& deciding, const char* code) {
  for (const auto& d : deciding) {
    if (d == code) return "counts";
  }
  return "does not count";
}

}  // namespace

void write_swap_text(std::ostream& out, const SwapReport& rep) {
  const LeadSwapResult& r = rep.result;
  const bool on_electrode = r.probe_on == ProbeOn::electrode;
  const std::string diff = "(N \xE2\x88\x92 S)/2", sum = "(N + S)/2";
  const std::string d_formula = on_electrode ? diff : sum;
  const std::string e_formula = on_electrode ? sum : diff;
  const bool decided = r.verdict != Verdict::symmetric && r.verdict != Verdict::inconclusive;

  out << "lopside swap: probe on "
      << (on_electrode ? "the same electrode's lead" : "the same supply terminal") << '\n';
  capture_lines(out, "normal (N)", rep.normal, r.normal_dc_a, r.normal_asymmetry);
  capture_lines(out, "swapped (S)", rep.swapped, r.swapped_dc_a, r.swapped_asymmetry);
  if (rep.normal_again && r.repeat) {
    const RepeatCheck& rc = *r.repeat;
    capture_lines(out, "normal again (N')", *rep.normal_again, rc.again_dc_a, rc.again_asymmetry);
    line(out, "repeat N' \xE2\x88\x92 N",
         "DC offset " +
             format_with_uncertainty(rc.difference_dc_a.value, rc.difference_dc_a.u95, "A", true) +
             ", charge asymmetry " +
             format_ratio_with_uncertainty(rc.difference_asymmetry.value,
                                           rc.difference_asymmetry.u95, true) +
             ": " + to_string(rc.outcome));
    if (rc.mean_used) {
      line(out, "normal used",
           "(N + N')/2: DC offset " +
               format_with_uncertainty(rc.normal_used_dc_a.value, rc.normal_used_dc_a.u95, "A",
                                       true) +
               ", charge asymmetry " +
               format_ratio_with_uncertainty(rc.normal_used_asymmetry.value,
                                             rc.normal_used_asymmetry.u95, true) +
               " (N below is this mean)");
    } else {
      line(out, "normal used", "N alone: the repeat did not confirm it, the split is not trusted");
    }
  }
  out << '\n';
  line(out, "supply part D",
       pad(format_with_uncertainty(r.driver_bias_a.value, r.driver_bias_a.u95, "A", true), 24) +
           d_formula + (decided ? ", " + counts_text(r.deciding, "driver_bias") : std::string()));
  line(out, "electrode part E",
       pad(format_with_uncertainty(r.electrode_bias_a.value, r.electrode_bias_a.u95, "A", true),
           24) +
           e_formula +
           (decided ? ", " + counts_text(r.deciding, "electrode_bias") : std::string()));
  line(out, "supply asymmetry",
       pad(format_ratio_with_uncertainty(r.driver_asymmetry.value, r.driver_asymmetry.u95, true),
           24) +
           d_formula);
  line(out, "electrode asymmetry",
       pad(format_ratio_with_uncertainty(r.electrode_asymmetry.value, r.electrode_asymmetry.u95,
                                         true),
           24) +
           e_formula);
  out << '\n';
  line(out, "verdict",
       std::string(to_string(r.verdict)) + ", confidence " + fixed(r.confidence, 2));
  out << "  evidence (value, then the bar it is held against):\n";
  // The code column fits the longest code (the repeat's are longer than the pair's).
  std::size_t code_width = 21;
  for (const Evidence& e : r.evidence) code_width = std::max(code_width, e.code.size() + 2);
  for (const Evidence& e : r.evidence) {
    out << "    " << pad(e.code, code_width) << pad(evidence_figure(e.code, e.value), 14)
        << pad(evidence_bar(e.code, e.threshold), 12) << e.text << '\n';
  }
  if (!r.next_steps.empty()) {
    out << "  next steps:\n";
    for (const auto& s : r.next_steps) out << "    - " << s << '\n';
  }
  out << "\n  Uncertainties are expanded (95 %, k = 2 unless stated otherwise in the JSON): each "
         "capture's cycle-to-cycle scatter, independent between the "
      << (r.repeat ? "three" : "two");
  if (rep.probe_offset_a > 0 || rep.probe_gain_pct > 0) {
    out << ", and the probe's stated tolerances, carried alike into "
        << (r.repeat ? "all captures" : "both captures") << " (its offset cancels in " << diff
        << (r.repeat ? " and in N' \xE2\x88\x92 N" : "") << " and adds fully to " << sum << ")";
  }
  out << ".\n  Current probe: " << rep.probe_kind
      << (rep.probe_kind == "shunt" || rep.probe_kind == "hall"
              ? " (passes DC)"
              : " (blocks DC: each capture's DC as corrected or recovered, see measure)");
  out << ".\n  Sign convention: " << kSignConvention << ".\n  " << kSafety << '\n';

  const bool any_warning = !r.warnings.empty() || !rep.normal.warnings.empty() ||
                           !rep.swapped.warnings.empty() ||
                           (rep.normal_again && !rep.normal_again->warnings.empty());
  if (any_warning) {
    out << "\nwarnings:\n";
    for (const auto& w : r.warnings) out << "  - " << w << '\n';
    for (const auto& w : rep.normal.warnings) out << "  - normal: " << w << '\n';
    for (const auto& w : rep.swapped.warnings) out << "  - swapped: " << w << '\n';
    if (rep.normal_again) {
      for (const auto& w : rep.normal_again->warnings) out << "  - normal again: " << w << '\n';
    }
  }
}

void write_swap_json(std::ostream& out, const SwapReport& rep) {
  const LeadSwapResult& r = rep.result;
  const bool on_electrode = r.probe_on == ProbeOn::electrode;
  json doc;
  doc["schema"] = kSwapSchema;
  doc["provenance"] = report_detail::provenance_json(rep.provenance);
  doc["probe_on"] = to_string(r.probe_on);
  doc["probe"] = json{{"kind", rep.probe_kind},
                      {"offset_tolerance_a", rep.probe_offset_a},
                      {"gain_tolerance_pct", rep.probe_gain_pct}};
  doc["formulas"] = json{{"driver", on_electrode ? "(N - S)/2" : "(N + S)/2"},
                         {"electrode", on_electrode ? "(N + S)/2" : "(N - S)/2"}};
  // With a repeat whose bias came back, N in the formulas is the mean of the two normals.
  if (r.repeat && r.repeat->mean_used) doc["formulas"]["normal"] = "(N + N')/2";
  doc["driver_bias_a"] = estimate_json(r.driver_bias_a);
  doc["electrode_bias_a"] = estimate_json(r.electrode_bias_a);
  doc["driver_asymmetry"] = estimate_json(r.driver_asymmetry);
  doc["electrode_asymmetry"] = estimate_json(r.electrode_asymmetry);
  doc["verdict"] = to_string(r.verdict);
  doc["confidence"] = r.confidence;
  doc["deciding"] = r.deciding;
  json evidence = json::array();
  for (const Evidence& e : r.evidence) {
    evidence.push_back(json{{"code", e.code},
                            {"value", finite_or_null(e.value)},
                            {"threshold", finite_or_null(e.threshold)},
                            {"text", e.text}});
  }
  doc["evidence"] = evidence;
  json warnings = r.warnings;
  for (const auto& w : rep.normal.warnings) warnings.push_back("normal: " + w);
  for (const auto& w : rep.swapped.warnings) warnings.push_back("swapped: " + w);
  if (rep.normal_again) {
    for (const auto& w : rep.normal_again->warnings) warnings.push_back("normal again: " + w);
  }
  doc["warnings"] = warnings;
  doc["next_steps"] = r.next_steps;
  const auto capture = [](const SwapCaptureReport& c, const Estimate& dc, const Estimate& asym) {
    json j;
    j["path"] = c.path;
    j["dc_offset_a"] = estimate_json(dc);
    j["charge_asymmetry"] = estimate_json(asym);
    j["fundamental_hz"] = finite_or_null(c.summary.fundamental_hz.value);
    j["ac_rms_a"] = finite_or_null(c.summary.ac_rms_a.value);
    j["cycle_count"] = c.summary.cycles;
    j["clipped_cycles"] =
        json{{"positive", c.summary.clipped_positive}, {"negative", c.summary.clipped_negative}};
    j["metadata"] = report_detail::metadata_json(c.metadata);
    return j;
  };
  doc["normal"] = capture(rep.normal, r.normal_dc_a, r.normal_asymmetry);
  doc["swapped"] = capture(rep.swapped, r.swapped_dc_a, r.swapped_asymmetry);
  if (rep.normal_again && r.repeat) {
    const RepeatCheck& rc = *r.repeat;
    json j = capture(*rep.normal_again, rc.again_dc_a, rc.again_asymmetry);
    j["difference_dc_a"] = estimate_json(rc.difference_dc_a);
    j["difference_asymmetry"] = estimate_json(rc.difference_asymmetry);
    j["material_dc_a"] = finite_or_null(rc.material_dc_a);
    j["outcome"] = to_string(rc.outcome);
    j["mean_used"] = rc.mean_used;
    j["normal_used_dc_a"] = estimate_json(rc.normal_used_dc_a);
    j["normal_used_asymmetry"] = estimate_json(rc.normal_used_asymmetry);
    doc["repeat"] = j;
  } else {
    doc["repeat"] = nullptr;
  }
  doc["sign_convention"] = kSignConvention;
  doc["safety"] = kSafety;
  out << doc.dump(2, ' ', false, json::error_handler_t::replace) << '\n';
}

}  // namespace lopside
