#include "lopside/measure_report.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <iterator>
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

std::string count_text(std::uint64_t n, const char* one, const char* many) {
  return std::to_string(n) + " " + (n == 1 ? one : many);
}

// The leading orders as a small table: enough to see DC, the fundamental and the first even
// and odd harmonics at a glance; the full table goes to --spectrum and the JSON.
void write_harmonics_text(std::ostream& out, const HarmonicSummary& h, double f1) {
  out << '\n';
  line(out, "THD (IEC)",
       fixed(100 * h.thd, 2) + " %   orders 2\xE2\x80\x93" + std::to_string(h.max_usable_order) +
           " over the fundamental, DC excluded");
  line(out, "THD with DC",
       fixed(100 * h.thd_with_dc, 2) + " %   IEEE 1459: DC counted as distortion");
  line(
      out, "even harmonics",
      fixed(100 * h.even_harmonic_share, 2) + " % of the harmonic content (orders \xE2\x89\xA5 2)");
  line(out, "DC / fundamental", fixed(100 * h.dc_to_fundamental, 3) + " %");
  if (h.noise_floor_known) {
    line(out, "noise floor", format_si(h.noise_floor_a, "A", 3) + " per order (peak)");
  }
  if (!h.even_evidence_available) {
    line(out, "even orders", "not available (no block with a noise floor, or order 2 unresolved)");
  } else if (h.even_significant_orders.empty()) {
    line(out, "even orders", "none above the noise floor");
  } else {
    const std::string orders = order_list(h.even_significant_orders, 30);
    line(out, "even orders",
         orders + " above the noise floor, rms " +
             format_with_uncertainty(h.even_significant_rms_a, h.even_rms_u95_a, "A", false));
  }
  out << "  harmonics (" << h.blocks << " blocks of " << h.block_cycles << " cycles"
      << (h.iec_61000_4_7 ? ", IEC 61000-4-7 window" : "") << "):\n";
  out << "    order   frequency        amplitude (peak)   \xC2\xB1 u95        % of H1   phase\n";
  const double a1 = h.orders.size() > 1 ? h.orders[1].amplitude_a : 0.0;
  const std::size_t shown = std::min<std::size_t>(h.orders.size(), 8);
  for (std::size_t n = 0; n < shown; ++n) {
    const HarmonicOrder& o = h.orders[n];
    std::array<char, 160> buf{};
    const std::string freq = format_si(static_cast<double>(n) * f1, "Hz", 4);
    const std::string amp = format_si(o.amplitude_a, "A", 4, n == 0);
    const std::string pct = a1 > 0 ? fixed(100 * std::fabs(o.amplitude_a) / a1, 3) : "-";
    const std::string ph = n >= 1 ? fixed(o.phase_deg, 1) + "\xC2\xB0" : "";
    std::snprintf(buf.data(), buf.size(), "    %5zu   ", n);
    out << buf.data() << pad(n == 0 ? "DC" : freq, 14) << "   " << pad(amp, 16) << "   "
        << pad(format_si(o.u95_a, "A", 2) + (n >= 1 && !o.significant ? " ~" : ""), 12) << " ";
    std::snprintf(buf.data(), buf.size(), "%8s   ", pct.c_str());
    out << buf.data() << ph << '\n';
  }
}

std::string course_text(const TimeCourseResult& c) {
  std::string out;
  for (const Event& e : c.events) {
    if (!out.empty()) out += "; ";
    if (e.kind == "flip") {
      out += "polarity flip at " + format_si(e.time_s, "s", 4) + " (" +
             format_si(e.level_before_a, "A", 3, true) + " \xE2\x86\x92 " +
             format_si(e.level_after_a, "A", 3, true) + ")";
    } else if (e.kind == "build_up" && e.tau_s) {
      out += "DC builds up from " + format_si(e.level_before_a, "A", 3, true) + " to " +
             format_si(e.level_after_a, "A", 3, true) +
             ", \xCF\x84 = " + format_si(*e.tau_s, "s", 3);
    }
  }
  if (out.empty()) out = c.steady ? "steady" : "no flip, no build-up";
  if (c.drift_significant) out += "; drifts " + format_si(c.drift_a_per_s.value, "A/s", 3, true);
  return out;
}

void write_diagnosis_text(std::ostream& out, const MeasureResult& r) {
  const Diagnosis& d = r.diagnosis;
  out << '\n';
  line(out, "time course", course_text(r.time_course));
  if (r.heating) {
    const HeatingShare& h = *r.heating;
    line(out, "electrode heating",
         "A " + fixed(100 * h.electrode_a, 1) + " %, B " + fixed(100 * h.electrode_b, 1) +
             " % (cathode share " + fixed(100 * h.cathode_share_used, 0) + " %, " + h.regime + ")");
    if (h.after_last_flip) {
      line(out, "  after last flip",
           "A " + fixed(100 * h.after_last_flip->electrode_a, 1) + " %, B " +
               fixed(100 * h.after_last_flip->electrode_b, 1) + " % (from " +
               format_si(h.after_last_flip->start_s, "s", 4) + ")");
    }
    if (h.erosion_a_ug_per_h) {
      line(out, "cathode erosion",
           "A " + fixed(*h.erosion_a_ug_per_h, 3) + " \xC2\xB5g/h, B " +
               fixed(*h.erosion_b_ug_per_h, 3) + " \xC2\xB5g/h");
    }
  }
  out << "\n  evidence:\n";
  for (const Evidence& e : d.evidence) {
    const bool deciding =
        std::find(d.deciding.begin(), d.deciding.end(), e.code) != d.deciding.end();
    out << "    " << (deciding ? "* " : "  ") << pad(e.code, 38) << e.text << '\n';
  }
  out << '\n';
  for (const CathodeStretch& c : d.cathodes) {
    line(out, "preferred cathode",
         format_si(c.start_s, "s", 4) + " \xE2\x80\x93 " + format_si(c.end_s, "s", 4) + ": " +
             (c.electrode == "none" ? std::string("none (no material DC)")
                                    : "electrode " + c.electrode) +
             " (DC " + format_with_uncertainty(c.mean_dc_a, c.u95_a, "A", true) + ")");
  }
  line(out, "VERDICT",
       std::string(to_string(d.verdict)) + "  (confidence " + fixed(d.confidence, 2) + ")");
  out << "  " << verdict_sentence(d.verdict) << '\n';
  for (const std::string& step : d.next_steps) out << "  next: " << step << '\n';
  out << "  " << kHighVoltageCaution << '\n';
  out << "  Electrode A is the one the probed lead feeds: while i > 0, A is the anode.\n";
}

// The fundamental with as many digits as its u95 supports: u95 rounded to two significant
// digits and the value to the same decimal place (GUM 7.2.6), in the value's SI prefix. The
// generic formatter stops at 8 significant digits and prints a u95 below the last digit in
// e-notation; a clean synthetic capture can give a u95 of 1e-16 of the value (rounding, not
// measurement), so below 1e-9 of the value the u95 is only bounded, with 10 digits shown.
std::string fundamental_text(const Estimate& f) {
  if (!std::isfinite(f.value) || !(f.value > 0)) return "n/a";
  SiPrefix p{1.0, ""};
  for (const SiPrefix& q : si_prefixes()) {
    if (f.value >= q.factor * 0.9995) {
      p = q;
      break;
    }
  }
  const double v = f.value / p.factor;
  const std::string unit = std::string(" ") + p.symbol + "Hz";
  std::array<char, 96> buf{};
  if (!std::isfinite(f.u95) || f.u95 < 1e-9 * f.value) {
    const int d = std::clamp(9 - static_cast<int>(std::floor(std::log10(v))), 0, 12);
    std::snprintf(buf.data(), buf.size(), "%.*f", d, v);
    return buf.data() + unit + (std::isfinite(f.u95) ? " \xC2\xB1 < 1e-9 relative" : "");
  }
  const double u = f.u95 / p.factor;
  int d = std::clamp(1 - static_cast<int>(std::floor(std::log10(u))), 0, 15);
  // Two significant digits of u95 after rounding (9.96 rounds to 10, one place fewer).
  if (std::round(u * std::pow(10.0, d)) >= 100 && d > 0) --d;
  std::snprintf(buf.data(), buf.size(), "%.*f%s \xC2\xB1 %.*f%s", d, v, unit.c_str(), d, u,
                unit.c_str());
  return buf.data();
}

json estimate_or_null(const Estimate& e) {
  return std::isfinite(e.value) ? estimate_json(e) : json(nullptr);
}

json build_up_json(const std::optional<BuildUp>& b, const char* unit_suffix) {
  if (!b) return nullptr;
  json j;
  j["start_s"] = b->start_s;
  j["tau_s"] = estimate_json(b->tau_s);
  j[std::string("plateau") + unit_suffix] = estimate_json(b->plateau);
  j[std::string("initial") + unit_suffix] = b->initial;
  j[std::string("amplitude") + unit_suffix] = estimate_json(b->amplitude);
  j["significant"] = b->significant;
  return j;
}

json harmonics_json(const HarmonicSummary& h) {
  json orders = json::array();
  for (const HarmonicOrder& o : h.orders) {
    json j;
    j["order"] = o.order;
    j["amplitude_a"] = o.amplitude_a;
    j["rms_a"] = o.rms_a;
    j["phase_deg"] = o.phase_deg;
    j["amplitude_spread_a"] = o.amplitude_spread_a;
    j["phase_spread_deg"] = o.phase_spread_deg;
    j["u95_a"] = o.u95_a;
    j["effective_blocks"] = o.effective_blocks;
    j["noise_floor_a"] = o.noise_floor_a;
    j["detection_limit_a"] = o.detection_limit_a;
    j["significant"] = o.significant;
    if (o.group_rms_a) j["group_rms_a"] = *o.group_rms_a;
    if (o.subgroup_rms_a) j["subgroup_rms_a"] = *o.subgroup_rms_a;
    orders.push_back(j);
  }
  return orders;
}

}  // namespace

// The probe and how the DC was obtained through it, in a line.
std::string probe_text(const MeasureResult& r) {
  const ProbeSettings& p = r.probe;
  std::string t = to_string(p.kind);
  const std::string& m = r.probe_findings.method;
  if (m == "direct") return t + " probe";
  if (m == "droop")
    return t + ", droop-corrected with tau " + format_si(*p.tau_s, "s", 4) +
           (p.tau_tolerance_pct > 0 ? " \xC2\xB1 " + fixed(p.tau_tolerance_pct, 1) + " %" : "") +
           (r.lead_in_s ? ", quiet lead-in " + format_si(*r.lead_in_s, "s", 3) : "");
  if (m == "rogowski")
    return t + ", integrated (M " + format_si(*p.rogowski_v_s_per_a, "V\xC2\xB7s/A", 4) + ")" +
           (r.lead_in_s ? ", quiet lead-in " + format_si(*r.lead_in_s, "s", 3) : "");
  if (m == "dead_intervals")
    return t + " (blocks DC): the rest between lobes, " +
           format_with_uncertainty(r.probe_findings.dead.level_a.value,
                                   r.probe_findings.dead.level_a.u95, "A", true) +
           ", taken as zero";
  return t + " (blocks DC): the DC is NOT measured (" +
         (r.probe_findings.dead.reason.empty() ? std::string("no time constant given")
                                               : r.probe_findings.dead.reason) +
         ")";
}

void write_measure_text(std::ostream& out, const MeasureResult& r) {
  const CycleSummary& s = r.summary;
  out << "lopside measure: " << r.info.path << '\n';
  line(out, "capture",
       r.info.format + ", " + format_si(r.info.sample_rate_hz, "Hz", 4) + ", " +
           std::to_string(s.frames) + " samples, " +
           format_si(static_cast<double>(s.frames) / r.info.sample_rate_hz, "s", 4));
  line(out, "current",
       "'" + r.current_name + "'" +
           (s.current_zero_a != 0.0
                ? ", zero " + format_with_uncertainty(s.current_zero_a, 2 * r.zero_u_a, "A", true) +
                      " subtracted"
                : std::string()));
  if (r.voltage_name) line(out, "voltage", "'" + *r.voltage_name + "'");
  line(out, "probe", probe_text(r));
  line(out, "cycles",
       std::to_string(s.cycles) + " whole, from rising crossings of the " + s.reference + " (" +
           count_text(s.partial_cycles, "partial cycle", "partial cycles") +
           " at the ends left out" +
           (s.excluded_cycles ? ", " + std::to_string(s.excluded_cycles) + " in the zero stretch"
                              : std::string()) +
           ")");
  line(out, "fundamental",
       fundamental_text(s.fundamental_hz) + "  (recorder clock tolerance not included)");
  out << '\n';
  line(out, "DC offset",
       format_with_uncertainty(s.dc_offset_a.value, s.dc_offset_a.u95, "A", true) +
           (s.dc_significant ? "  significant" : "  not significant"));
  line(out, "RMS", format_with_uncertainty(s.rms_a.value, s.rms_a.u95, "A", false));
  line(out, "AC RMS", format_with_uncertainty(s.ac_rms_a.value, s.ac_rms_a.u95, "A", false));
  line(out, "DC / RMS", format_percent_with_uncertainty(s.dc_to_rms.value, s.dc_to_rms.u95, true));
  line(out, "DC / AC RMS",
       format_percent_with_uncertainty(s.dc_to_ac_rms.value, s.dc_to_ac_rms.u95, true));
  line(out, "charge asymmetry",
       format_ratio_with_uncertainty(s.charge_asymmetry.value, s.charge_asymmetry.u95, true) +
           "  (Q+ \xE2\x88\x92 Q\xE2\x88\x92)/(Q+ + Q\xE2\x88\x92)");
  line(out, "Q+ per cycle",
       format_with_uncertainty(s.charge_positive_c.value, s.charge_positive_c.u95, "C", false));
  line(out, "Q\xE2\x88\x92 per cycle",
       format_with_uncertainty(s.charge_negative_c.value, s.charge_negative_c.u95, "C", false));
  line(out, "positive share",
       format_percent_with_uncertainty(s.positive_share.value, s.positive_share.u95, false) +
           " of each period with i > 0");
  line(out, "peak +",
       format_with_uncertainty(s.peak_positive_a.value, s.peak_positive_a.u95, "A", true));
  line(out, "peak \xE2\x88\x92",
       format_with_uncertainty(s.peak_negative_a.value, s.peak_negative_a.u95, "A", true));
  line(out, "clipped cycles",
       std::to_string(s.clipped_positive) + " positive, " + std::to_string(s.clipped_negative) +
           " negative");
  line(out, "crest factor", fixed(s.crest_factor, 3) + "   form factor " + fixed(s.form_factor, 4));
  if (s.harmonics && s.harmonics->blocks > 0)
    write_harmonics_text(out, *s.harmonics, s.fundamental_hz.value);
  if (s.has_voltage) {
    out << '\n';
    line(out, "voltage mean",
         format_with_uncertainty(s.voltage_mean_v.value, s.voltage_mean_v.u95, "V", true));
    line(out, "voltage RMS",
         format_with_uncertainty(s.voltage_rms_v.value, s.voltage_rms_v.u95, "V", false));
    line(out, "voltage peak +",
         format_with_uncertainty(s.voltage_peak_positive_v.value, s.voltage_peak_positive_v.u95,
                                 "V", true));
    line(out, "voltage peak \xE2\x88\x92",
         format_with_uncertainty(s.voltage_peak_negative_v.value, s.voltage_peak_negative_v.u95,
                                 "V", true));
    line(out, "voltage pos. share",
         format_percent_with_uncertainty(s.voltage_positive_share.value,
                                         s.voltage_positive_share.u95, false));
    line(out, "real power", format_with_uncertainty(s.power_w.value, s.power_w.u95, "W", false));
    line(out, "energy while i > 0",
         format_with_uncertainty(s.energy_positive_j.value, s.energy_positive_j.u95, "J", false) +
             " per cycle");
    line(out, "energy while i < 0",
         format_with_uncertainty(s.energy_negative_j.value, s.energy_negative_j.u95, "J", false) +
             " per cycle");
  }
  out << "\n  Uncertainties are expanded (95 %, k = 2 unless stated otherwise in the JSON): "
         "cycle-to-cycle scatter by batch means";
  if (r.probe_offset_a > 0 || r.probe_gain_pct > 0) out << " and the probe's stated tolerances";
  out << ".\n  Sign convention: positive current flows from the probed lead into electrode A, so "
         "while i > 0 electrode A is the anode.\n";
  if (!r.warnings.empty()) {
    out << "\nwarnings:\n";
    for (const auto& w : r.warnings) out << "  - " << w << '\n';
  }
  write_diagnosis_text(out, r);
}

void write_measure_summary(std::ostream& out, std::ostream& warn, const MeasureResult& r,
                           std::size_t max_lines, std::size_t width) {
  using report_detail::cut;
  using report_detail::wrap;
  const CycleSummary& s = r.summary;
  const Diagnosis& d = r.diagnosis;
  std::vector<std::string> lines;
  const auto add = [&lines](std::vector<std::string> more) {
    lines.insert(lines.end(), more.begin(), more.end());
  };
  const auto figure = [&lines, width](const std::string& label, const std::string& text) {
    lines.push_back(cut("  " + pad(label, 20) + text, width));
  };

  lines.push_back(cut("lopside measure: " + r.info.path, width));
  lines.push_back(cut(
      "  " + r.info.format + ", " + format_si(r.info.sample_rate_hz, "Hz", 4) + ", " +
          format_si(static_cast<double>(s.frames) / r.info.sample_rate_hz, "s", 4) + ", " +
          std::to_string(s.cycles) + " whole cycles from the " + s.reference +
          "'s rising crossings" + (passes_dc(r.probe.kind) ? ", " + probe_text(r) : std::string()),
      width));
  // A probe that blocks DC gets a line of its own: how the DC was obtained, or that it was not.
  if (!passes_dc(r.probe.kind)) lines.push_back(cut("  probe " + probe_text(r), width));
  lines.emplace_back();
  add(wrap(verdict_sentence(d.verdict), width, "VERDICT  ", "         "));
  std::string deciding;
  for (const std::string& code : d.deciding) deciding += (deciding.empty() ? "" : ", ") + code;
  lines.push_back(cut("         " + std::string(to_string(d.verdict)) + ", confidence " +
                          fixed(d.confidence, 2) +
                          (deciding.empty() ? std::string() : "; evidence: " + deciding),
                      width));
  for (const std::string& step : d.next_steps) add(wrap(step, width, "  next: ", "        "));
  lines.emplace_back();

  const double rms = s.rms_a.value;
  figure("fundamental", fundamental_text(s.fundamental_hz));
  figure("DC offset",
         format_with_uncertainty(s.dc_offset_a.value, s.dc_offset_a.u95, "A", true, rms) +
             (s.dc_significant ? "  significant" : "  not significant"));
  figure("DC / AC RMS",
         format_percent_with_uncertainty(s.dc_to_ac_rms.value, s.dc_to_ac_rms.u95, true));
  figure("RMS", format_with_uncertainty(s.rms_a.value, s.rms_a.u95, "A", false));
  figure("charge asymmetry",
         format_ratio_with_uncertainty(s.charge_asymmetry.value, s.charge_asymmetry.u95, true) +
             "  (Q+ \xE2\x88\x92 Q\xE2\x88\x92)/(Q+ + Q\xE2\x88\x92)");
  if (s.harmonics && s.harmonics->blocks > 0) {
    const HarmonicSummary& h = *s.harmonics;
    if (!h.even_evidence_available) {
      figure("even harmonics", "not assessed (no block with a noise floor)");
    } else if (h.even_significant_orders.empty()) {
      figure("even harmonics", "none above the noise floor; THD " + fixed(100 * h.thd, 2) + " %");
    } else {
      figure("even harmonics",
             "orders " + order_list(h.even_significant_orders, 20) + ", rms " +
                 format_with_uncertainty(h.even_significant_rms_a, h.even_rms_u95_a, "A", false) +
                 "; THD " + fixed(100 * h.thd, 2) + " %");
    }
  }
  if (s.has_voltage) {
    figure("voltage mean", format_with_uncertainty(s.voltage_mean_v.value, s.voltage_mean_v.u95,
                                                   "V", true, s.voltage_rms_v.value));
    figure("voltage pos. share",
           format_percent_with_uncertainty(s.voltage_positive_share.value,
                                           s.voltage_positive_share.u95, false));
  }
  figure("time course", course_text(r.time_course));
  if (r.heating) {
    const HeatingShare& h = *r.heating;
    const bool flip = h.after_last_flip.has_value();
    const double a = flip ? h.after_last_flip->electrode_a : h.electrode_a;
    const double b = flip ? h.after_last_flip->electrode_b : h.electrode_b;
    figure("electrode heating", "A " + fixed(100 * a, 1) + " %, B " + fixed(100 * b, 1) + " % (" +
                                    h.regime + ", cathode share " +
                                    fixed(100 * h.cathode_share_used, 0) + " %" +
                                    (flip ? ", after the last flip" : "") + ")");
  }
  const std::uint64_t left_out =
      s.not_finite_cycles + s.glitch_cycles + s.irregular_cycles + s.neighbour_cycles;
  if (left_out > 0) {
    figure("left out", std::to_string(left_out) + " cycles (not finite " +
                           std::to_string(s.not_finite_cycles) + ", glitch " +
                           std::to_string(s.glitch_cycles) + ", irregular " +
                           std::to_string(s.irregular_cycles) + ", neighbour " +
                           std::to_string(s.neighbour_cycles) + ")");
  }
  lines.emplace_back();
  add(wrap(kHighVoltageCaution, width, "", ""));
  lines.push_back(
      cut("\xC2\xB1 is u95 (95 %). While i > 0, electrode A (the probed lead's) is the "
          "anode. More: --full, --json.",
          width));
  // Over the screen with the warnings' line: the blank lines between blocks go first.
  const std::size_t warn_lines = r.warnings.empty() ? 0 : 1;
  while (lines.size() + warn_lines > max_lines) {
    const auto blank = std::find(lines.rbegin(), lines.rend(), std::string());
    if (blank == lines.rend()) break;
    lines.erase(std::next(blank).base());
  }
  for (const std::string& l : lines) out << l << '\n';

  // Warnings on standard error, in the room the screen has left (at least three lines).
  if (r.warnings.empty()) return;
  const std::size_t room =
      std::max<std::size_t>(1, max_lines > lines.size() ? max_lines - lines.size() : 0);
  const std::size_t n = r.warnings.size();
  const std::size_t shown = n <= room ? n : room - 1;
  for (std::size_t k = 0; k < shown; ++k) warn << cut("warning: " + r.warnings[k], width) << '\n';
  if (shown < n) {
    warn << "warning: " << (n - shown) << (shown > 0 ? " more" : " warnings")
         << " (lopside measure --full, or the JSON's \"warnings\", lists them all)\n";
  }
}

void write_measure_json(std::ostream& out, const MeasureResult& r) {
  const CycleSummary& s = r.summary;
  json doc;
  doc["schema"] = kMeasureSchema;
  doc["provenance"] = report_detail::provenance_json(r.provenance);
  json input;
  input["path"] = r.info.path;
  input["format"] = r.info.format;
  input["detail"] = r.info.detail;
  input["sample_rate_hz"] = r.info.sample_rate_hz;
  input["samples"] = s.frames;
  input["start_time_s"] = r.info.start_time_s;
  input["current_channel"] = r.current_name;
  input["voltage_channel"] = r.voltage_name ? json(*r.voltage_name) : json(nullptr);
  input["metadata"] = report_detail::metadata_json(r.info.metadata);
  doc["input"] = input;
  json probe;
  probe["offset_tolerance_a"] = r.probe_offset_a;
  probe["gain_tolerance_pct"] = r.probe_gain_pct;
  probe["zero_a"] = s.current_zero_a;
  probe["zero_u_a"] = r.zero_u_a;
  probe["zero_stretch_s"] = r.zero_stretch_s
                                ? json::array({r.zero_stretch_s->first, r.zero_stretch_s->second})
                                : json(nullptr);
  probe["kind"] = to_string(r.probe.kind);
  probe["passes_dc"] = passes_dc(r.probe.kind);
  probe["dc_method"] = r.probe_findings.method;
  probe["tau_s"] = r.probe.tau_s ? json(*r.probe.tau_s) : json(nullptr);
  probe["tau_tolerance_pct"] = r.probe.tau_tolerance_pct;
  probe["rogowski_v_s_per_a"] =
      r.probe.rogowski_v_s_per_a ? json(*r.probe.rogowski_v_s_per_a) : json(nullptr);
  probe["lead_in_s"] = r.lead_in_s ? json(*r.lead_in_s) : json(nullptr);
  {
    const DeadLevel& dl = r.probe_findings.dead;
    json dj;
    dj["found"] = dl.found;
    dj["cycles_examined"] = dl.cycles_examined;
    dj["cycles_with"] = dl.cycles_with;
    dj["share_of_period"] = dl.share_of_period;
    dj["rest_level_a"] = dl.cycles_with > 0 ? estimate_json(dl.level_a) : json(nullptr);
    dj["reason"] = dl.reason.empty() ? json(nullptr) : json(dl.reason);
    probe["dead_intervals"] = dj;
  }
  probe["dc_from_dead_intervals_a"] =
      r.dc_from_dead_intervals_a ? estimate_json(*r.dc_from_dead_intervals_a) : json(nullptr);
  doc["probe"] = probe;
  doc["reference"] = s.reference;
  doc["fundamental_hz"] = estimate_json(s.fundamental_hz);
  doc["cycle_count"] = s.cycles;
  doc["partial_cycles"] = s.partial_cycles;
  doc["excluded_cycles"] = s.excluded_cycles;
  // Issue 9, items 5 and 6: what was left out and why, and how the reference was chosen.
  doc["left_out_cycles"] = json{{"not_finite", s.not_finite_cycles},
                                {"glitch", s.glitch_cycles},
                                {"irregular", s.irregular_cycles},
                                {"neighbour", s.neighbour_cycles}};
  doc["not_finite_samples"] = s.not_finite_samples;
  json excl = json::array();
  for (const Exclusion& e : s.exclusions)
    excl.push_back(json{{"start_s", e.start_s}, {"end_s", e.end_s}, {"reason", e.reason}});
  doc["left_out_stretches"] = excl;
  doc["reference_note"] = s.reference_note.empty() ? json(nullptr) : json(s.reference_note);
  doc["boundary_jitter_s"] = std::isfinite(s.boundary_jitter_s)
                                 ? json{{"measured", s.boundary_jitter_s},
                                        {"explained_by_noise", s.boundary_jitter_noise_s}}
                                 : json(nullptr);
  doc["first_cycle_start_s"] = s.first_start_s;
  doc["last_cycle_end_s"] = s.last_end_s;
  json dc = estimate_json(s.dc_offset_a);
  dc["significant"] = s.dc_significant;
  doc["dc_offset_a"] = dc;
  doc["rms_a"] = estimate_json(s.rms_a);
  doc["ac_rms_a"] = estimate_json(s.ac_rms_a);
  doc["dc_to_rms"] = estimate_json(s.dc_to_rms);
  doc["dc_to_ac_rms"] = estimate_json(s.dc_to_ac_rms);
  doc["charge_positive_c"] = estimate_json(s.charge_positive_c);
  doc["charge_negative_c"] = estimate_json(s.charge_negative_c);
  doc["charge_asymmetry"] = estimate_json(s.charge_asymmetry);
  doc["positive_share"] = estimate_json(s.positive_share);
  doc["peak_positive_a"] = estimate_json(s.peak_positive_a);
  doc["peak_negative_a"] = estimate_json(s.peak_negative_a);
  doc["clipped_cycles"] = json{{"positive", s.clipped_positive}, {"negative", s.clipped_negative}};
  if (s.has_voltage) {
    json v;
    v["mean_v"] = estimate_json(s.voltage_mean_v);
    v["rms_v"] = estimate_json(s.voltage_rms_v);
    v["peak_positive_v"] = estimate_json(s.voltage_peak_positive_v);
    v["peak_negative_v"] = estimate_json(s.voltage_peak_negative_v);
    v["positive_share"] = estimate_json(s.voltage_positive_share);
    v["power_w"] = estimate_json(s.power_w);
    v["energy_positive_j"] = estimate_json(s.energy_positive_j);
    v["energy_negative_j"] = estimate_json(s.energy_negative_j);
    doc["voltage"] = v;
  } else {
    doc["voltage"] = nullptr;
  }
  doc["crest_factor"] = s.crest_factor;
  doc["form_factor"] = s.form_factor;
  if (s.harmonics) {
    const HarmonicSummary& h = *s.harmonics;
    doc["harmonics"] = harmonics_json(h);
    doc["thd"] = h.thd;
    doc["thd_with_dc"] = h.thd_with_dc;
    doc["even_harmonic_share"] = h.even_harmonic_share;
    doc["dc_to_fundamental"] = h.dc_to_fundamental;
    doc["max_usable_order"] = h.max_usable_order;
    doc["harmonic_blocks"] = h.blocks;
    doc["harmonic_block_cycles"] = h.block_cycles;
    doc["harmonic_iec_61000_4_7"] = h.iec_61000_4_7;
    doc["harmonic_noise_floor_a"] = h.noise_floor_known ? json(h.noise_floor_a) : json(nullptr);
    doc["harmonic_false_alarm_per_order"] = h.false_alarm_per_order;
    json even;
    even["available"] = h.even_evidence_available;
    even["significant_orders"] = h.even_significant_orders;
    even["significant_rms_a"] =
        json{{"value", h.even_significant_rms_a}, {"u95", h.even_rms_u95_a}};
    doc["even_harmonic_evidence"] = even;
    doc["harmonic_phase_convention"] =
        "phase_deg = phi_n - n*phi_1, sine basis a*sin(n*theta + phi)";
  } else {
    doc["harmonics"] = nullptr;
  }
  if (s.has_voltage) {
    doc["voltage"]["burning_voltage_positive_v"] = estimate_or_null(s.burning_voltage_positive_v);
    doc["voltage"]["burning_voltage_negative_v"] = estimate_or_null(s.burning_voltage_negative_v);
  }
  {
    const Diagnosis& d = r.diagnosis;
    json diag;
    diag["verdict"] = to_string(d.verdict);
    diag["verdict_text"] = verdict_sentence(d.verdict);
    diag["confidence"] = d.confidence;
    diag["deciding"] = d.deciding;
    json ev = json::array();
    for (const Evidence& e : d.evidence) {
      ev.push_back(
          json{{"code", e.code}, {"value", e.value}, {"threshold", e.threshold}, {"text", e.text}});
    }
    diag["evidence"] = ev;
    diag["next_steps"] = d.next_steps;
    json cath = json::array();
    for (const CathodeStretch& c : d.cathodes) {
      cath.push_back(json{{"start_s", c.start_s},
                          {"end_s", c.end_s},
                          {"electrode", c.electrode},
                          {"mean_dc_a", json{{"value", c.mean_dc_a}, {"u95", c.u95_a}}}});
    }
    diag["preferred_cathode_by_stretch"] = cath;
    diag["caution"] = kHighVoltageCaution;
    doc["diagnosis"] = diag;
    const TimeCourseResult& c = r.time_course;
    json events = json::array();
    for (const Event& e : c.events) {
      json j{{"kind", e.kind},
             {"time_s", e.time_s},
             {"level_before_a", e.level_before_a},
             {"level_after_a", e.level_after_a}};
      if (e.tau_s) j["tau_s"] = *e.tau_s;
      events.push_back(j);
    }
    doc["events"] = events;
    json tc;
    tc["cycles_per_point"] = c.cycles_per_point;
    tc["build_up"] = build_up_json(c.build_up, "_a");
    tc["asymmetry_build_up"] = build_up_json(c.asymmetry_build_up, "");
    tc["drift_a_per_s"] = estimate_json(c.drift_a_per_s);
    tc["drift_significant"] = c.drift_significant;
    tc["scatter_a"] = c.scatter_a;
    tc["steady"] = c.steady;
    json segs = json::array();
    for (const Segment& g : c.segments) {
      segs.push_back(json{{"start_s", g.start_s},
                          {"end_s", g.end_s},
                          {"mean_dc_a", g.mean_dc_a},
                          {"u95_a", g.u95_a},
                          {"decided", g.decided}});
    }
    tc["segments"] = segs;
    json pts = json::array();
    for (const CoursePoint& p : c.points)
      pts.push_back(json::array({p.time_s, p.dc_offset_a, p.charge_asymmetry}));
    tc["points_time_s_dc_a_asymmetry"] = pts;
    doc["time_course"] = tc;
    if (r.heating) {
      const HeatingShare& h = *r.heating;
      json hs{{"electrode_a", h.electrode_a},
              {"electrode_b", h.electrode_b},
              {"cathode_share_used", h.cathode_share_used},
              {"regime", h.regime}};
      hs["erosion_a_ug_per_h"] = h.erosion_a_ug_per_h ? json(*h.erosion_a_ug_per_h) : json(nullptr);
      hs["erosion_b_ug_per_h"] = h.erosion_b_ug_per_h ? json(*h.erosion_b_ug_per_h) : json(nullptr);
      hs["after_last_flip"] = h.after_last_flip
                                  ? json{{"start_s", h.after_last_flip->start_s},
                                         {"electrode_a", h.after_last_flip->electrode_a},
                                         {"electrode_b", h.after_last_flip->electrode_b}}
                                  : json(nullptr);
      doc["heating_share"] = hs;
    } else {
      doc["heating_share"] = nullptr;
    }
  }
  doc["sign_convention"] =
      "positive current flows from the probed lead into electrode A, so while i > 0 electrode A is "
      "the anode";
  doc["warnings"] = r.warnings;
  out << doc.dump(2, ' ', false, json::error_handler_t::replace) << '\n';
}

void write_spectrum_csv(std::ostream& out, const MeasureResult& r) {
  out << "order,frequency_hz,amplitude_a,rms_a,phase_deg,amplitude_spread_a,phase_spread_deg,"
         "group_rms_a,subgroup_rms_a\n";
  if (!r.summary.harmonics) return;
  const double f1 = r.summary.fundamental_hz.value;
  std::array<char, 320> buf{};
  for (const HarmonicOrder& o : r.summary.harmonics->orders) {
    std::snprintf(buf.data(), buf.size(), "%zu,%.9g,%.9g,%.9g,%.6g,%.6g,%.6g,", o.order,
                  static_cast<double>(o.order) * f1, o.amplitude_a, o.rms_a, o.phase_deg,
                  o.amplitude_spread_a, o.phase_spread_deg);
    out << buf.data();
    if (o.group_rms_a) out << fixed(*o.group_rms_a * 1, 12);
    out << ',';
    if (o.subgroup_rms_a) out << fixed(*o.subgroup_rms_a, 12);
    out << '\n';
  }
}

CycleCsvWriter::CycleCsvWriter(std::ostream& out, bool with_voltage)
    : out_(out), with_voltage_(with_voltage) {
  out_ << "index,start_s,period_s,dc_offset_a,rms_a,ac_rms_a,charge_positive_c,"
          "charge_negative_c,charge_asymmetry,peak_positive_a,peak_negative_a,positive_share,"
          "flat_top_positive,flat_top_negative";
  if (with_voltage_) {
    out_ << ",voltage_mean_v,voltage_rms_v,voltage_peak_positive_v,voltage_peak_negative_v,"
            "voltage_positive_share,power_w,energy_positive_j,energy_negative_j";
  }
  out_ << '\n';
}

void CycleCsvWriter::write(const CycleRecord& c) {
  // %.12g keeps start times to 1 ns at 1000 s into a capture; the rest need fewer digits.
  std::array<char, 512> buf{};
  int n = std::snprintf(buf.data(), buf.size(),
                        "%llu,%.12g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%d,%d",
                        static_cast<unsigned long long>(c.index), c.start_s, c.period_s, c.mean_a,
                        c.rms_a, c.ac_rms_a, c.charge_positive_c, c.charge_negative_c,
                        c.charge_asymmetry, c.peak_positive_a, c.peak_negative_a, c.positive_share,
                        c.flat_top_positive ? 1 : 0, c.flat_top_negative ? 1 : 0);
  out_.write(buf.data(), n);
  if (with_voltage_) {
    n = std::snprintf(buf.data(), buf.size(), ",%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g",
                      c.voltage_mean_v, c.voltage_rms_v, c.voltage_peak_positive_v,
                      c.voltage_peak_negative_v, c.voltage_positive_share, c.power_w,
                      c.energy_positive_j, c.energy_negative_j);
    out_.write(buf.data(), n);
  }
  out_ << '\n';
}

}  // namespace lopside
