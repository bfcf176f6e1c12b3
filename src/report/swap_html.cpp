// The HTML report of `lopside swap` (swap_report.hpp, issue 12 item 3): the captures side by
// side, the supply and electrode parts of the DC with their u95, the verdict with its evidence,
// and a bar chart of the DCs and parts with u95 whiskers. Every headline figure in a table cell
// carries data-key (its dot path in the --json output) and data-value (that JSON number, %.17g),
// so a browser test can hold the page against the JSON.
#include <array>
#include <cmath>
#include <cstdio>
#include <ostream>
#include <string>
#include <vector>

#include "html_cells.hpp"
#include "lopside/html_page.hpp"
#include "lopside/measure_report.hpp"
#include "lopside/report_format.hpp"
#include "lopside/svg_plot.hpp"
#include "lopside/swap_report.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

using namespace html_detail;

const char* const kPlusMinus = " \xC2\xB1 ";  // " ± "

/// "value ± u95" with the value and the u95 each keyed to their JSON path: "<key>.value" and
/// "<key>.u95" (an {value, u95, k} object of the JSON).
Cell estimate_cell(const std::string& text, const std::string& key, const Estimate& e) {
  const std::size_t at = text.find(kPlusMinus);
  if (at == std::string::npos || !std::isfinite(e.value))
    return keyed_cell(text, key + ".value", e.value);
  std::string html = "<span" + key_attrs(key + ".value", num17(e.value)) + ">" +
                     escape(text.substr(0, at)) + "</span> \xC2\xB1 ";
  const std::string u = text.substr(at + std::string(kPlusMinus).size());
  html += std::isfinite(e.u95)
              ? "<span" + key_attrs(key + ".u95", num17(e.u95)) + ">" + escape(u) + "</span>"
              : escape(u);
  return {html, {}, {}};
}

std::string dc_text(const Estimate& e, double scale = 0) {
  return format_with_uncertainty(e.value, e.u95, "A", true, scale);
}

std::string ratio_text(const Estimate& e) {
  return format_ratio_with_uncertainty(e.value, e.u95, true);
}

bool ends_with(const std::string& s, const std::string& tail) {
  return s.size() >= tail.size() && s.compare(s.size() - tail.size(), tail.size(), tail) == 0;
}

// An evidence figure in the unit its code implies (as the text report states it).
std::string evidence_figure(const std::string& code, double v, bool signed_always) {
  if (!std::isfinite(v)) return "n/a";
  if (ends_with(code, "_bias") || code == "repeat_changed")
    return format_si(v, "A", 3, signed_always);
  if (ends_with(code, "_asymmetry") || code == "repeat_asymmetry_changed")
    return signed_always ? (v >= 0 ? "+" : "") + fixed(v, 4) : fixed(v, 4);
  if (code.rfind("clipped", 0) == 0) return fixed(v, 0) + " cycles";
  return fixed(100 * v, 2) + " %";
}

std::string headline(Verdict v) {
  switch (v) {
    case Verdict::symmetric:
      return "No DC worth acting on in either part";
    case Verdict::driver_imbalance:
      return "Driver imbalance: the DC follows the supply's leads";
    case Verdict::self_rectification:
      return "Self-rectification: the DC stays with the electrodes";
    case Verdict::mixed:
      return "Mixed: both the supply and the electrodes add to the DC";
    case Verdict::inconclusive:
      break;
  }
  return "Inconclusive: this pair cannot split the DC";
}

const char* tone(Verdict v) {
  switch (v) {
    case Verdict::symmetric:
      return "pass";
    case Verdict::inconclusive:
      return "warn";
    default:
      return "fail";
  }
}

bool deciding(const LeadSwapResult& r, const char* code) {
  for (const auto& d : r.deciding)
    if (d == code) return true;
  return false;
}

struct CaptureRow {
  const char* label;  // "normal (N)"
  const char* key;    // JSON object: "normal", "swapped", "repeat"
  const SwapCaptureReport* capture;
  Estimate dc, asymmetry;
};

std::vector<Cell> capture_cells(const CaptureRow& c) {
  const CycleSummary& s = c.capture->summary;
  const std::string k = c.key;
  const double scale = std::isfinite(s.ac_rms_a.value) ? s.ac_rms_a.value : 0.0;
  // The AC RMS and the fundamental: the JSON holds their values only; their u95 here is the
  // capture's own scatter (the probe's tolerances enter the DC and the asymmetry, where the
  // split needs them, not these two).
  return {
      text_cell(c.label),
      text_cell(c.capture->path),
      estimate_cell(dc_text(c.dc, scale), k + ".dc_offset_a", c.dc),
      estimate_cell(ratio_text(c.asymmetry), k + ".charge_asymmetry", c.asymmetry),
      keyed_cell(format_with_uncertainty(s.ac_rms_a.value, s.ac_rms_a.u95, "A", false),
                 k + ".ac_rms_a", s.ac_rms_a.value),
      keyed_cell(format_with_uncertainty(s.fundamental_hz.value, s.fundamental_hz.u95, "Hz", false),
                 k + ".fundamental_hz", s.fundamental_hz.value),
      {"<span" + key_attrs(k + ".cycle_count", std::to_string(s.cycles)) + ">" +
           std::to_string(s.cycles) + "</span> (" +
           std::to_string(s.clipped_positive + s.clipped_negative) + " clipped)",
       {},
       {}}};
}

/// A bar chart of estimates with u95 whiskers: one bar per item, each group its own class.
struct Bar {
  std::string label;  // x label
  Estimate e;
  std::string css;  // series class
  std::string legend;
};

std::string bar_chart(const std::string& id, const std::vector<Bar>& bars, const std::string& name,
                      const std::string& unit, const std::string& title,
                      const std::string& description) {
  svg::Chart chart(520, 280);
  std::vector<double> ends{0.0};
  for (const Bar& b : bars) {
    const double u = std::isfinite(b.e.u95) ? std::fabs(b.e.u95) : 0.0;
    ends.push_back(b.e.value - u);
    ends.push_back(b.e.value + u);
  }
  chart.x_axis({0.4, static_cast<double>(bars.size()) + 0.6}, "", "");
  chart.y_axis(svg::nice_span(ends, true), name, unit);
  std::vector<double> xs;
  std::vector<std::string> labels;
  for (std::size_t i = 0; i < bars.size(); ++i) {
    xs.push_back(static_cast<double>(i + 1));
    labels.push_back(bars[i].label);
  }
  chart.x_labels(xs, labels);
  // One bars() call per series, in first-seen order, so that the legend lists each once.
  std::vector<std::string> done;
  for (const Bar& b : bars) {
    bool seen = false;
    for (const auto& d : done) seen = seen || d == b.css;
    if (seen) continue;
    done.push_back(b.css);
    std::vector<double> x, h;
    for (std::size_t i = 0; i < bars.size(); ++i)
      if (bars[i].css == b.css) {
        x.push_back(xs[i]);
        h.push_back(bars[i].e.value);
      }
    chart.bars(x, h, 0.56, b.css, b.legend);
  }
  std::vector<double> y, u;
  for (const Bar& b : bars) {
    y.push_back(b.e.value);
    u.push_back(b.e.u95);
  }
  // The whiskers in the axis ink: neutral, over every series colour.
  chart.whiskers(xs, y, u, "s-whisker");
  return chart.render(id, title, description);
}

}  // namespace

void write_swap_html(std::ostream& out, const SwapReport& rep) {
  const LeadSwapResult& r = rep.result;
  const bool on_electrode = r.probe_on == ProbeOn::electrode;
  const std::string diff = "(N \xE2\x88\x92 S)/2", sum = "(N + S)/2";
  const std::string d_formula = on_electrode ? diff : sum;
  const std::string e_formula = on_electrode ? sum : diff;
  const bool decided = r.verdict != Verdict::symmetric && r.verdict != Verdict::inconclusive;
  const double scale = rep.normal.summary.ac_rms_a.value;

  html::page_begin(
      out,
      "Lead swap \xE2\x80\x94 " + std::string(to_string(r.verdict)) + ", confidence " +
          fixed(r.confidence, 2),
      "normal: " + rep.normal.path + " \xC2\xB7 swapped: " + rep.swapped.path +
          (rep.normal_again ? " \xC2\xB7 normal again: " + rep.normal_again->path : "") +
          " \xC2\xB7 probe kept on " +
          (on_electrode ? "the same electrode's lead" : "the same supply terminal"));

  // The verdict and the two parts first: what a technician acts on.
  std::vector<std::string> lines;
  lines.push_back(
      "Supply part D = <strong>" + escape(dc_text(r.driver_bias_a, scale)) + "</strong> (" +
      escape(d_formula) + ")" +
      (decided ? (deciding(r, "driver_bias") ? ", counts" : ", does not count") : std::string()) +
      "; electrode part E = <strong>" + escape(dc_text(r.electrode_bias_a, scale)) + "</strong> (" +
      escape(e_formula) + ")" +
      (decided ? (deciding(r, "electrode_bias") ? ", counts" : ", does not count")
               : std::string()) +
      ".");
  lines.push_back("Confidence " + fixed(r.confidence, 2) + " (0 to 1).");
  html::verdict_banner(out, tone(r.verdict), headline(r.verdict), lines);
  if (!r.next_steps.empty()) {
    out << "<h3>Next steps</h3>\n";
    html::bullet_list(out, r.next_steps, "notes");
  }
  html::caution(out, kHighVoltageCaution);

  // The captures side by side.
  html::section_begin(out, "captures", "The captures");
  std::vector<CaptureRow> captures{
      {"normal (N)", "normal", &rep.normal, r.normal_dc_a, r.normal_asymmetry},
      {"swapped (S)", "swapped", &rep.swapped, r.swapped_dc_a, r.swapped_asymmetry}};
  if (rep.normal_again && r.repeat)
    captures.push_back({"normal again (N\xE2\x80\xB2)", "repeat", &*rep.normal_again,
                        r.repeat->again_dc_a, r.repeat->again_asymmetry});
  std::vector<std::vector<Cell>> rows;
  for (const CaptureRow& c : captures) rows.push_back(capture_cells(c));
  write_table(
      out,
      {"capture", "file", "DC offset", "charge asymmetry", "AC RMS", "fundamental", "whole cycles"},
      rows, 2, "figures captures", std::size_t(-1), {}, true);
  out << "<p>Each figure with its expanded uncertainty u95 (95 %, k = 2 unless the JSON states "
         "another k). The DC offset and the charge asymmetry include the probe's stated "
         "tolerances";
  if (rep.probe_offset_a > 0 || rep.probe_gain_pct > 0)
    out << " (offset \xC2\xB1" << escape(format_si(rep.probe_offset_a, "A", 3)) << ", gain \xC2\xB1"
        << escape(fixed(rep.probe_gain_pct, 2)) << " %)";
  out << "; the AC RMS and the fundamental carry the capture's own cycle-to-cycle scatter "
         "only.</p>\n";
  if (rep.normal_again && r.repeat) {
    const RepeatCheck& rc = *r.repeat;
    out << "<h3>Did the bias come back?</h3>\n";
    std::vector<std::vector<Cell>> rr;
    rr.push_back(
        {text_cell("N\xE2\x80\xB2 \xE2\x88\x92 N"),
         estimate_cell(dc_text(rc.difference_dc_a, scale), "repeat.difference_dc_a",
                       rc.difference_dc_a),
         estimate_cell(ratio_text(rc.difference_asymmetry), "repeat.difference_asymmetry",
                       rc.difference_asymmetry),
         keyed_cell(format_si(rc.material_dc_a, "A", 3), "repeat.material_dc_a", rc.material_dc_a),
         {escape(to_string(rc.outcome)), key_attrs("repeat.outcome", to_string(rc.outcome)), {}}});
    if (rc.mean_used)
      rr.push_back({text_cell("normal used, (N + N\xE2\x80\xB2)/2"),
                    estimate_cell(dc_text(rc.normal_used_dc_a, scale), "repeat.normal_used_dc_a",
                                  rc.normal_used_dc_a),
                    estimate_cell(ratio_text(rc.normal_used_asymmetry),
                                  "repeat.normal_used_asymmetry", rc.normal_used_asymmetry),
                    text_cell(""), text_cell("the split below uses this mean as N")});
    else
      rr.push_back({text_cell("normal used"), text_cell("N alone"), text_cell(""), text_cell(""),
                    text_cell("the repeat did not confirm N: the split is not trusted")});
    write_table(out, {"", "DC offset", "charge asymmetry", "material from", "outcome"}, rr, 1,
                "figures", 4, {}, true);
  }
  html::section_end(out);

  // The split.
  html::section_begin(out, "parts", "Supply part and electrode part");
  std::vector<std::vector<Cell>> parts;
  const auto counts = [&](const char* code) {
    return text_cell(decided ? (deciding(r, code) ? "counts" : "does not count") : "\xE2\x80\x94");
  };
  parts.push_back(
      {text_cell("supply part D"),
       estimate_cell(dc_text(r.driver_bias_a, scale), "driver_bias_a", r.driver_bias_a),
       estimate_cell(ratio_text(r.driver_asymmetry), "driver_asymmetry", r.driver_asymmetry),
       text_cell(d_formula), counts("driver_bias"),
       text_cell("reverses with the leads: the supply's uneven switching. D > 0: the "
                 "supply drives net current into electrode A")});
  parts.push_back(
      {text_cell("electrode part E"),
       estimate_cell(dc_text(r.electrode_bias_a, scale), "electrode_bias_a", r.electrode_bias_a),
       estimate_cell(ratio_text(r.electrode_asymmetry), "electrode_asymmetry",
                     r.electrode_asymmetry),
       text_cell(e_formula), counts("electrode_bias"),
       text_cell("stays with the electrodes: the discharge rectifies. E > 0: A is "
                 "the anode for more charge, B the preferred cathode")});
  write_table(
      out, {"part", "DC offset", "charge asymmetry", "formula", "in the verdict", "what it means"},
      parts, 1, "figures parts", 4, {}, true);
  out << "<p>Both parts are stated as the normal capture sees them. Verdict <strong><span"
      << key_attrs("verdict", to_string(r.verdict)) << ">" << escape(to_string(r.verdict))
      << "</span></strong>, confidence <span" << key_attrs("confidence", num17(r.confidence)) << ">"
      << escape(fixed(r.confidence, 2)) << "</span>.</p>\n";

  // The bar charts: the DC and the charge asymmetry of the captures and of the two parts.
  std::vector<Bar> dc_bars, asym_bars;
  for (const CaptureRow& c : captures) {
    std::string short_label = c.label;
    short_label = short_label.substr(short_label.find('(') + 1);
    short_label.pop_back();  // "N", "S", "N′"
    dc_bars.push_back({short_label, c.dc, "s-current", "captures"});
    asym_bars.push_back({short_label, c.asymmetry, "s-current", "captures"});
  }
  dc_bars.push_back({"D supply", r.driver_bias_a, "s-fit", "supply part"});
  dc_bars.push_back({"E electrodes", r.electrode_bias_a, "s-voltage", "electrode part"});
  asym_bars.push_back({"D supply", r.driver_asymmetry, "s-fit", "supply part"});
  asym_bars.push_back({"E electrodes", r.electrode_asymmetry, "s-voltage", "electrode part"});
  const auto describe = [&](const std::vector<Bar>& bars, bool dc) {
    std::string d = std::string("Bars of the ") + (dc ? "DC offset" : "charge asymmetry") +
                    ", each with a whisker spanning its u95: ";
    for (std::size_t i = 0; i < bars.size(); ++i) {
      d += (i ? "; " : "") + bars[i].label + " " +
           (dc ? dc_text(bars[i].e, scale) : ratio_text(bars[i].e));
    }
    return d + ".";
  };
  html::row_begin(out);
  out << bar_chart("swap-dc", dc_bars, "DC offset", "A", "DC offset of the captures and its parts",
                   describe(dc_bars, true));
  out << bar_chart("swap-asymmetry", asym_bars, "charge asymmetry", "",
                   "Charge asymmetry of the captures and its parts", describe(asym_bars, false));
  html::row_end(out);
  html::section_end(out);

  // The evidence the verdict was drawn from.
  html::section_begin(out, "evidence", "Evidence");
  std::vector<std::vector<Cell>> ev;
  for (std::size_t i = 0; i < r.evidence.size(); ++i) {
    const Evidence& e = r.evidence[i];
    const std::string k = "evidence." + std::to_string(i);
    ev.push_back(
        {text_cell(e.code),
         keyed_cell(evidence_figure(e.code, e.value, true), k + ".value", e.value),
         keyed_cell(evidence_figure(e.code, e.threshold, false), k + ".threshold", e.threshold),
         text_cell(deciding(r, e.code.c_str()) ? "yes" : ""), text_cell(e.text)});
  }
  write_table(out, {"evidence", "value", "held against", "decides", "what it says"}, ev, 1,
              "figures evidence", 3, {}, true);
  html::section_end(out);

  // Warnings, then each capture's key/values.
  std::vector<std::string> warnings = r.warnings;
  for (const auto& w : rep.normal.warnings) warnings.push_back("normal: " + w);
  for (const auto& w : rep.swapped.warnings) warnings.push_back("swapped: " + w);
  if (rep.normal_again)
    for (const auto& w : rep.normal_again->warnings) warnings.push_back("normal again: " + w);
  if (!warnings.empty()) {
    html::section_begin(out, "warnings", "Warnings");
    html::bullet_list(out, warnings, "notes");
    html::section_end(out);
  }
  bool any_metadata = false;
  for (const CaptureRow& c : captures) any_metadata = any_metadata || !c.capture->metadata.empty();
  if (any_metadata) {
    html::section_begin(out, "metadata", "What the captures say about themselves");
    for (const CaptureRow& c : captures) {
      if (c.capture->metadata.empty()) continue;
      out << "<h3>" << escape(c.label) << "</h3>\n";
      html::key_values(out, c.capture->metadata);
    }
    html::section_end(out);
  }

  html::page_end(
      out, std::string("lopside swap, the same figures as its --json output (schema ") +
               kSwapSchema +
               ").\nSign convention: positive current flows from the probed lead into electrode "
               "A, so while i > 0 electrode A is the anode; A is the electrode that lead fed in "
               "the normal capture.\nUncertainties are expanded (95 %).");
}

}  // namespace lopside
