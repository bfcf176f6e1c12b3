// The measure report as one self-contained HTML page (issue 12): the verdict and what to do
// first, then the pictures that show the asymmetry, then every figure with its u95. The page
// only formats a MeasureResult; every number on it is one the JSON carries too, and the cells
// that show one say where (data-key, the JSON path; data-value, the exact number) so a test
// can hold the page against the JSON.
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <limits>
#include <optional>
#include <ostream>
#include <string>
#include <vector>

#include "html_cells.hpp"
#include "lopside/html_page.hpp"
#include "lopside/measure_report.hpp"
#include "lopside/report_format.hpp"
#include "lopside/svg_plot.hpp"
#include "report_support.hpp"

namespace lopside {
namespace {

using report_detail::fixed;
using svg::escape;

constexpr double kWide = 1040, kHalf = 515, kTall = 280, kShort = 250;
// Above this many samples the strip is drawn as a min/max envelope of this many columns.
constexpr std::size_t kStripPoints = 2000;

// A table cell that shows `text` and says which JSON number it is.
std::string cell(const std::string& key, double value, const std::string& text) {
  if (!std::isfinite(value)) return escape(text);
  return "<span" + html_detail::key_attrs(key, html_detail::num17(value)) + ">" + escape(text) +
         "</span>";
}

// One row of the figures table: name, value ± u95 (tagged), what it means.
std::vector<std::string> figure_row(const std::string& name, const std::string& key,
                                    const Estimate& e, const std::string& text,
                                    const std::string& note) {
  return {escape(name), escape(note), cell(key + ".value", e.value, text)};
}

const char* tone_of(Verdict v) {
  switch (v) {
    case Verdict::symmetric:
      return "pass";
    case Verdict::inconclusive:
      return "info";
    default:
      // A cause was found: a DC to act on, even where flips average it out over the record.
      return "warn";
  }
}

std::vector<double> scaled(const std::vector<double>& v, double factor) {
  std::vector<double> out(v.size());
  for (std::size_t k = 0; k < v.size(); ++k) out[k] = v[k] * factor;
  return out;
}

// −f(φ + ½) for bins 0 … K−1 (K even): the mirror of the negative half onto the positive.
std::vector<double> mirrored(const std::vector<double>& f) {
  const std::size_t n = f.size(), half = n / 2;
  std::vector<double> out(n);
  for (std::size_t k = 0; k < n; ++k) out[k] = -f[(k + half) % n];
  return out;
}

// The largest |f(φ) + f(φ + ½)| over the bins: how far the cycle is from half-wave symmetry.
double largest_mirror_gap(const std::vector<double>& f) {
  const std::vector<double> m = mirrored(f);
  double gap = 0;
  for (std::size_t k = 0; k < f.size(); ++k) {
    if (std::isfinite(f[k]) && std::isfinite(m[k])) gap = std::max(gap, std::fabs(f[k] - m[k]));
  }
  return gap;
}

double finite_peak(const std::vector<double>& v) {
  double p = 0;
  for (const double x : v) {
    if (std::isfinite(x)) p = std::max(p, std::fabs(x));
  }
  return p;
}

std::vector<double> concat(std::vector<double> a, const std::vector<double>& b) {
  a.insert(a.end(), b.begin(), b.end());
  return a;
}

// The average cycle of one channel with its mirrored negative half.
std::string average_cycle_chart(const CyclePicture& p, const std::vector<double>& f,
                                const std::string& id, const std::string& quantity,
                                const std::string& unit, const std::string& series_class,
                                std::size_t flips) {
  svg::Chart c(kHalf, kShort);
  const std::vector<double> deg = scaled(p.phase, 360.0);
  const std::vector<double> mirror = mirrored(f);
  c.x_axis({0, 360}, "phase in the cycle", "\xC2\xB0");
  c.y_axis(svg::nice_span(concat(f, mirror), true), quantity, unit);
  c.y_rule(0, "s-zero");
  c.line(deg, f, series_class, quantity + " f(\xCF\x86)");
  c.line(deg, mirror, "s-mirror",
         "mirrored negative half \xE2\x88\x92"
         "f(\xCF\x86 + 180\xC2\xB0)");
  const double gap = largest_mirror_gap(f), peak = finite_peak(f);
  const std::string desc =
      "Average " + quantity + " over the phase of the cycle, from " +
      std::to_string(p.cycles_averaged) + " cycles (period " + format_si(p.period_s, "s") +
      "), with its negative half shifted by half a period and turned over. The two lines " +
      "coincide when the halves are mirror images (no DC, no even harmonics); here they differ " +
      "by up to " + format_si(gap, unit) + " (" +
      (peak > 0 ? fixed(100 * gap / peak, 1) : std::string("0")) + " % of the peak " +
      format_si(peak, unit) + ")." +
      (flips > 0 ? " The record's DC flips polarity, so the cycles before and after each flip "
                   "average each other out here: the strip of the last cycles and the record "
                   "below show each stretch."
                 : "");
  return c.render(id, "Average cycle of the " + quantity + ", negative half mirrored", desc);
}

// A strip of the last recorded cycles, drawn sample by sample (or as an envelope).
std::string strip_chart(const CyclePicture& p, const std::vector<double>& y, const std::string& id,
                        const std::string& quantity, const std::string& unit,
                        const std::string& series_class) {
  svg::Chart c(kHalf, kShort);
  const double span = p.strip_boundaries_s.empty() ? 0.0 : p.strip_boundaries_s.back();
  c.x_axis({0, span > 0 ? span : 1.0}, "time from the strip's start", "s");
  c.y_axis(svg::nice_span(y, true), quantity, unit);
  c.y_rule(0, "s-zero");
  if (y.size() > kStripPoints) {
    const svg::MinMax m = svg::min_max_columns(p.strip_time_s, y, kStripPoints / 2);
    c.area(m.x, m.lo, m.hi, series_class + "-fill", quantity + " (min/max per pixel column)");
  } else {
    c.line(p.strip_time_s, y, series_class, quantity);
  }
  for (const double b : p.strip_boundaries_s) c.x_rule(b, "s-boundary");
  const std::string desc = "The last " + std::to_string(p.strip_cycles) +
                           " whole cycles as recorded (cycles " +
                           std::to_string(p.strip_first_cycle) + " to " +
                           std::to_string(p.strip_first_cycle + p.strip_cycles - 1) + ", from " +
                           format_si(p.strip_start_s, "s") + "), " + quantity +
                           " sample by sample; vertical rules mark the cycle boundaries lopside "
                           "found, peak " +
                           format_si(finite_peak(y), unit) + ".";
  return c.render(id, "Recorded cycles: " + quantity, desc);
}

// The per-cycle DC (or the charge asymmetry) over the whole record: the decimated points'
// means as a line, the single cycles' extremes as an envelope, the whole record's value ± u95
// as a band, flips and the build-up fit marked.
std::string course_chart(const MeasureResult& r, bool dc) {
  const TimeCourseResult& c = r.time_course;
  const CycleSummary& s = r.summary;
  std::vector<double> t, mean, lo, hi;
  for (const CoursePoint& p : c.points) {
    t.push_back(p.time_s);
    mean.push_back(dc ? p.dc_offset_a : p.charge_asymmetry);
    lo.push_back(dc ? p.dc_min_a : p.asymmetry_min);
    hi.push_back(dc ? p.dc_max_a : p.asymmetry_max);
  }
  const Estimate& whole = dc ? s.dc_offset_a : s.charge_asymmetry;
  svg::Chart ch(kWide, kTall);
  const double t0 = t.empty() ? 0.0 : t.front(), t1 = t.empty() ? 1.0 : t.back();
  ch.x_axis({t0, t1 > t0 ? t1 : t0 + 1.0}, "time in the record", "s");
  std::vector<double> span_values = concat(lo, hi);
  span_values.push_back(whole.value + whole.u95);
  span_values.push_back(whole.value - whole.u95);
  ch.y_axis(svg::nice_span(span_values, true), dc ? "DC offset per cycle" : "charge asymmetry",
            dc ? "A" : "");
  ch.y_rule(0, "s-zero");
  if (c.cycles_per_point > 1) ch.area(t, lo, hi, "s-envelope", "extremes of single cycles");
  ch.y_band(whole.value - whole.u95, whole.value + whole.u95, "s-band",
            "whole record \xC2\xB1 u95");
  ch.line(t, mean, "s-current",
          c.cycles_per_point > 1 ? "mean of " + std::to_string(c.cycles_per_point) + " cycles"
                                 : "each cycle");
  if (dc) {
    for (const Segment& g : c.segments) {
      ch.line({g.start_s, g.end_s}, {g.mean_dc_a, g.mean_dc_a}, "s-segment");
    }
  }
  std::size_t flips = 0;
  for (const Event& e : c.events) {
    if (e.kind == "flip") {
      ch.x_rule(e.time_s, "s-flip", "flip");
      ++flips;
    }
  }
  const std::optional<BuildUp>& b = dc ? c.build_up : c.asymmetry_build_up;
  std::string fit_text;
  if (b && b->significant && b->tau_s.value > 0) {
    std::vector<double> ft, fy;
    for (int k = 0; k <= 200; ++k) {
      const double tt = b->start_s + (t1 - b->start_s) * k / 200.0;
      ft.push_back(tt);
      fy.push_back(b->plateau.value +
                   (b->initial - b->plateau.value) * std::exp(-(tt - b->start_s) / b->tau_s.value));
    }
    ch.line(ft, fy, "s-fit", "build-up fit");
    fit_text = " A build-up from " + format_si(b->initial, dc ? "A" : "") + " to " +
               format_si(b->plateau.value, dc ? "A" : "") +
               " with \xCF\x84 = " + format_si(b->tau_s.value, "s") + " is drawn as a curve.";
  }
  const std::string what =
      dc ? "DC offset" : "charge asymmetry (Q+ \xE2\x88\x92 Q\xE2\x88\x92)/(Q+ + Q\xE2\x88\x92)";
  const std::string unit = dc ? "A" : "";
  const std::string whole_text =
      dc ? format_with_uncertainty(whole.value, whole.u95, "A", true, s.rms_a.value)
         : format_ratio_with_uncertainty(whole.value, whole.u95, true);
  const std::string desc =
      "The " + what + " cycle by cycle over " + std::to_string(s.cycles) + " cycles (" +
      std::to_string(c.points.size()) + " points of " + std::to_string(c.cycles_per_point) +
      " cycle(s) each), between " + format_si(t0, "s") + " and " + format_si(t1, "s") +
      ". The band is the whole record's value " + whole_text + ". " +
      (flips ? std::to_string(flips) + " polarity flip(s) are marked." : "No polarity flip.") +
      fit_text;
  return ch.render(dc ? "chart-course-dc" : "chart-course-asymmetry",
                   dc ? "DC offset over the record" : "Charge asymmetry over the record", desc);
}

std::string spectrum_chart(const HarmonicSummary& h, double f1) {
  std::vector<double> ev_x, ev_y, od_x, od_y, floor_x, floor_y, sig_x, sig_y, u_x, u_y, u_u;
  std::vector<std::string> sig_titles;
  double top = 0;
  double bottom = std::numeric_limits<double>::infinity();
  for (const HarmonicOrder& o : h.orders) {
    if (o.order == 0) continue;
    const double a = std::fabs(o.amplitude_a);
    const double x = static_cast<double>(o.order);
    if (o.order % 2 == 0) {
      ev_x.push_back(x);
      ev_y.push_back(a);
    } else {
      od_x.push_back(x);
      od_y.push_back(a);
    }
    u_x.push_back(x);
    u_y.push_back(a);
    u_u.push_back(o.u95_a);
    if (o.noise_floor_a > 0) {
      floor_x.push_back(x);
      floor_y.push_back(o.noise_floor_a);
      bottom = std::min(bottom, o.noise_floor_a);
    }
    if (o.significant && o.order % 2 == 0) {
      sig_x.push_back(x);
      sig_y.push_back(a);
      sig_titles.push_back("order " + std::to_string(o.order) + ": " +
                           format_with_uncertainty(a, o.u95_a, "A", false) +
                           " peak, above its noise floor " + format_si(o.noise_floor_a, "A"));
    }
    top = std::max(top, a);
    if (a > 0) bottom = std::min(bottom, a);
  }
  svg::Chart c(kWide, kTall);
  const double n = static_cast<double>(h.orders.empty() ? 1 : h.orders.size() - 1);
  c.x_axis({0.4, n + 0.6}, "harmonic order", "");
  // Five decades below the fundamental at most: lower than that is the analyser's resolution.
  const double lo = std::max(std::isfinite(bottom) ? bottom / 2 : top * 1e-5, top * 1e-5);
  c.y_axis({lo > 0 ? lo : 1e-9, top > 0 ? top * 2 : 1.0}, "amplitude (peak)", "A", true);
  c.bars(od_x, od_y, 0.6, "s-odd", "odd orders");
  c.bars(ev_x, ev_y, 0.6, "s-even", "even orders");
  c.whiskers(u_x, u_y, u_u, "s-whisker");
  if (!floor_x.empty()) c.line(floor_x, floor_y, "s-floor", "noise floor");
  if (!sig_x.empty())
    c.markers(sig_x, sig_y, "s-flag", "even order above the noise floor", sig_titles);
  std::vector<double> label_x;
  std::vector<std::string> labels;
  const std::size_t step = n > 20 ? 5 : 1;
  for (std::size_t k = 1; k <= static_cast<std::size_t>(n); ++k) {
    if (k == 1 || k % step == 0) {
      label_x.push_back(static_cast<double>(k));
      labels.push_back(std::to_string(k));
    }
  }
  c.x_labels(label_x, labels);
  std::string even_text =
      h.even_significant_orders.empty()
          ? std::string("No even order stands above the noise floor.")
          : "Even orders " + order_list(h.even_significant_orders) +
                " stand above the noise floor (marked), rms " +
                format_with_uncertainty(h.even_significant_rms_a, h.even_rms_u95_a, "A", false) +
                ".";
  const std::string desc =
      "Amplitude of each harmonic of the current (peak, log scale) for orders 1 to " +
      std::to_string(static_cast<std::size_t>(n)) + " of the " + format_si(f1, "Hz") +
      " fundamental, even orders light with an outline, odd orders solid, u95 as whiskers, the "
      "local noise "
      "floor as a dashed line. " +
      even_text + " THD " + fixed(100 * h.thd, 2) + " %.";
  return c.render("chart-spectrum", "Harmonic spectrum of the current", desc);
}

std::string heating_chart(const HeatingShare& h) {
  const bool flip = h.after_last_flip.has_value();
  const double a = flip ? h.after_last_flip->electrode_a : h.electrode_a;
  const double b = flip ? h.after_last_flip->electrode_b : h.electrode_b;
  svg::Chart c(kHalf, kShort);
  c.x_axis({0.4, 2.6}, "electrode", "");
  c.y_axis({0, 1}, "share of the electrode heating", "");
  c.y_rule(0.5, "s-target", "even split");
  c.bars({1}, {a}, 0.5, "s-current", "electrode A (probed lead)");
  c.bars({2}, {b}, 0.5, "s-voltage", "electrode B");
  c.x_labels({1, 2}, {"A", "B"});
  const std::string desc = "Share of the heat the discharge deposits in each electrode" +
                           std::string(flip ? " after the last polarity flip" : "") + ": A " +
                           fixed(100 * a, 1) + " %, B " + fixed(100 * b, 1) + " % (" + h.regime +
                           ", the cathode taking " + fixed(100 * h.cathode_share_used, 0) +
                           " % of the heat per coulomb).";
  return c.render("chart-heating", "Electrode heating", desc);
}

std::string course_words(const TimeCourseResult& c) {
  std::string out;
  for (const Event& e : c.events) {
    if (!out.empty()) out += "; ";
    if (e.kind == "flip") {
      out += "polarity flip at " + format_si(e.time_s, "s");
    } else if (e.kind == "build_up" && e.tau_s) {
      out += "the DC builds up with \xCF\x84 = " + format_si(*e.tau_s, "s");
    }
  }
  if (out.empty()) out = c.steady ? "steady" : "no flip, no build-up";
  if (c.drift_significant) out += "; drifts " + format_si(c.drift_a_per_s.value, "A/s");
  return out;
}

}  // namespace

void write_measure_html(std::ostream& out, const MeasureResult& r) {
  const CycleSummary& s = r.summary;
  const Diagnosis& d = r.diagnosis;
  const double duration_s = static_cast<double>(s.frames) / r.info.sample_rate_hz;
  html::page_begin(out, "Discharge current: " + r.info.path,
                   r.info.format + ", " + format_si(r.info.sample_rate_hz, "Hz") + ", " +
                       format_si(duration_s, "s") + ", " + std::to_string(s.cycles) +
                       " whole cycles");

  // 1. The verdict, its evidence and what to do, with the caution, first.
  {
    std::vector<std::string> lines;
    lines.push_back("<span data-key=\"diagnosis.verdict\" data-value=\"" +
                    escape(to_string(d.verdict)) + "\">" + escape(to_string(d.verdict)) +
                    "</span>, confidence " +
                    cell("diagnosis.confidence", d.confidence, fixed(d.confidence, 2)));
    for (const Evidence& e : d.evidence) {
      if (std::find(d.deciding.begin(), d.deciding.end(), e.code) != d.deciding.end())
        lines.push_back("Evidence: " + escape(e.text));
    }
    for (const std::string& step : d.next_steps) lines.push_back("Next: " + escape(step));
    for (const CathodeStretch& c : d.cathodes) {
      lines.push_back(escape(
          format_si(c.start_s, "s") + " to " + format_si(c.end_s, "s") + ": preferred cathode " +
          (c.electrode == "none" ? std::string("none") : "electrode " + c.electrode) + ", DC " +
          format_with_uncertainty(c.mean_dc_a, c.u95_a, "A", true)));
    }
    html::verdict_banner(out, tone_of(d.verdict), verdict_sentence(d.verdict), lines);
    html::caution(out, kHighVoltageCaution);
  }

  // 2. The headline figures.
  html::section_begin(out, "figures", "The figures that matter");
  {
    const double rms = s.rms_a.value;
    std::vector<std::vector<std::string>> rows;
    rows.push_back(figure_row(
        "DC offset", "dc_offset_a", s.dc_offset_a,
        format_with_uncertainty(s.dc_offset_a.value, s.dc_offset_a.u95, "A", true, rms),
        s.dc_significant ? "significant: |DC| > u95" : "not significant: |DC| \xE2\x89\xA4 u95"));
    rows.push_back(
        figure_row("DC / AC RMS", "dc_to_ac_rms", s.dc_to_ac_rms,
                   format_percent_with_uncertainty(s.dc_to_ac_rms.value, s.dc_to_ac_rms.u95, true),
                   "the ratio limits are written in; the probe's gain cancels"));
    rows.push_back(figure_row("RMS", "rms_a", s.rms_a,
                              format_with_uncertainty(rms, s.rms_a.u95, "A", false), ""));
    rows.push_back(figure_row("AC RMS", "ac_rms_a", s.ac_rms_a,
                              format_with_uncertainty(s.ac_rms_a.value, s.ac_rms_a.u95, "A", false),
                              ""));
    rows.push_back(figure_row(
        "charge asymmetry", "charge_asymmetry", s.charge_asymmetry,
        format_ratio_with_uncertainty(s.charge_asymmetry.value, s.charge_asymmetry.u95, true),
        "(Q+ \xE2\x88\x92 Q\xE2\x88\x92)/(Q+ + Q\xE2\x88\x92)"));
    rows.push_back(figure_row(
        "Q+ per cycle", "charge_positive_c", s.charge_positive_c,
        format_with_uncertainty(s.charge_positive_c.value, s.charge_positive_c.u95, "C", false),
        "charge while i > 0 (electrode A anode)"));
    rows.push_back(figure_row(
        "Q\xE2\x88\x92 per cycle", "charge_negative_c", s.charge_negative_c,
        format_with_uncertainty(s.charge_negative_c.value, s.charge_negative_c.u95, "C", false),
        "charge while i < 0 (electrode A cathode)"));
    rows.push_back(figure_row(
        "positive share", "positive_share", s.positive_share,
        format_percent_with_uncertainty(s.positive_share.value, s.positive_share.u95, false),
        "of each period with i > 0"));
    rows.push_back(figure_row(
        "peak +", "peak_positive_a", s.peak_positive_a,
        format_with_uncertainty(s.peak_positive_a.value, s.peak_positive_a.u95, "A", true),
        "mean of the cycles' peaks"));
    rows.push_back(figure_row(
        "peak \xE2\x88\x92", "peak_negative_a", s.peak_negative_a,
        format_with_uncertainty(s.peak_negative_a.value, s.peak_negative_a.u95, "A", true), ""));
    {
      rows.push_back({"fundamental", "recorder clock tolerance not included",
                      cell("fundamental_hz.value", s.fundamental_hz.value,
                           format_with_uncertainty(s.fundamental_hz.value, s.fundamental_hz.u95,
                                                   "Hz", false))});
    }
    if (s.harmonics && s.harmonics->blocks > 0) {
      const HarmonicSummary& h = *s.harmonics;
      rows.push_back({"THD (IEC 61000-4-7)",
                      "orders 2 to " + std::to_string(h.max_usable_order) + ", DC excluded",
                      cell("thd", h.thd, fixed(100 * h.thd, 2) + " %")});
      if (h.even_evidence_available && !h.even_significant_orders.empty()) {
        rows.push_back(
            {"even harmonics",
             escape("rms of orders " + order_list(h.even_significant_orders) +
                    ", above the noise floor"),
             cell(
                 "even_harmonic_evidence.significant_rms_a.value", h.even_significant_rms_a,
                 format_with_uncertainty(h.even_significant_rms_a, h.even_rms_u95_a, "A", false))});
      } else {
        rows.push_back({"even harmonics", "",
                        h.even_evidence_available ? "none above the noise floor"
                                                  : "not assessed (no noise floor)"});
      }
    }
    if (s.has_voltage) {
      const double vrms = s.voltage_rms_v.value;
      rows.push_back(figure_row(
          "voltage mean", "voltage.mean_v", s.voltage_mean_v,
          format_with_uncertainty(s.voltage_mean_v.value, s.voltage_mean_v.u95, "V", true, vrms),
          "a DC in the voltage points at the supply"));
      rows.push_back(figure_row("voltage RMS", "voltage.rms_v", s.voltage_rms_v,
                                format_with_uncertainty(vrms, s.voltage_rms_v.u95, "V", false),
                                ""));
      rows.push_back(
          figure_row("voltage positive share", "voltage.positive_share", s.voltage_positive_share,
                     format_percent_with_uncertainty(s.voltage_positive_share.value,
                                                     s.voltage_positive_share.u95, false),
                     "uneven switching shows here"));
      rows.push_back(figure_row("real power", "voltage.power_w", s.power_w,
                                format_with_uncertainty(s.power_w.value, s.power_w.u95, "W", false),
                                ""));
    }
    rows.push_back({"current probe", "how the DC was obtained through it",
                    "<span data-key=\"probe.kind\" data-value=\"" +
                        escape(to_string(r.probe.kind)) + "\">" + escape(probe_text(r)) +
                        "</span>"});
    rows.push_back({"time course", "", escape(course_words(r.time_course))});
    html::table_html(out, {"figure", "what it says", "value \xC2\xB1 u95"}, rows, 2, "figures");
  }
  html::section_end(out);

  // 3. The waveform: average cycle with its mirrored half, and real cycles.
  if (r.picture && r.picture->cycles_averaged > 0) {
    const CyclePicture& p = *r.picture;
    html::section_begin(out, "waveform", "The waveform");
    html::row_begin(out);
    std::size_t flips = 0;
    for (const Event& e : r.time_course.events) flips += e.kind == "flip" ? 1u : 0u;
    out << average_cycle_chart(p, p.current_a, "chart-average-cycle", "current", "A", "s-current",
                               flips);
    if (!p.voltage_v.empty())
      out << average_cycle_chart(p, p.voltage_v, "chart-average-voltage", "voltage", "V",
                                 "s-voltage", 0);
    html::row_end(out);
    if (p.strip_cycles > 0) {
      html::row_begin(out);
      out << strip_chart(p, p.strip_current_a, "chart-cycle-strip", "current", "A", "s-current");
      if (!p.strip_voltage_v.empty())
        out << strip_chart(p, p.strip_voltage_v, "chart-voltage-strip", "voltage", "V",
                           "s-voltage");
      html::row_end(out);
    }
    html::section_end(out);
  }

  // 4. The record over time.
  html::section_begin(out, "time-course", "Over the record");
  out << course_chart(r, true) << course_chart(r, false);
  html::section_end(out);

  // 5. Harmonics.
  if (s.harmonics && s.harmonics->blocks > 0) {
    const HarmonicSummary& h = *s.harmonics;
    html::section_begin(out, "harmonics", "Harmonics");
    out << spectrum_chart(h, s.fundamental_hz.value);
    std::vector<std::vector<std::string>> rows;
    const double a1 = h.orders.size() > 1 ? h.orders[1].amplitude_a : 0.0;
    for (const HarmonicOrder& o : h.orders) {
      const std::string key = "harmonics." + std::to_string(o.order) + ".amplitude_a";
      rows.push_back(
          {std::to_string(o.order),
           o.order == 0
               ? "DC"
               : escape(format_si(static_cast<double>(o.order) * s.fundamental_hz.value, "Hz")),
           cell(key, o.amplitude_a,
                format_with_uncertainty(o.amplitude_a, o.u95_a, "A", o.order == 0)),
           a1 > 0 ? fixed(100 * std::fabs(o.amplitude_a) / a1, 2) + " %" : "",
           o.order == 0 ? "" : escape(format_si(o.noise_floor_a, "A")),
           o.order == 0 ? "" : (o.significant ? "yes" : "no")});
    }
    html::table_html(out,
                     {"order", "frequency", "amplitude (peak) \xC2\xB1 u95", "of H1", "noise floor",
                      "above floor"},
                     rows, 2, "figures harmonics");
    html::section_end(out);
  }

  // 6. Electrodes.
  if (r.heating) {
    html::section_begin(out, "electrodes", "Which electrode pays");
    html::row_begin(out);
    out << heating_chart(*r.heating);
    html::row_end(out);
    if (r.heating->erosion_a_ug_per_h) {
      html::key_values(
          out,
          {{"cathode erosion of A", fixed(*r.heating->erosion_a_ug_per_h, 3) + " \xC2\xB5g/h"},
           {"cathode erosion of B", fixed(*r.heating->erosion_b_ug_per_h, 3) + " \xC2\xB5g/h"}});
    }
    html::section_end(out);
  }

  // 7. The evidence, whole.
  html::section_begin(out, "evidence", "Evidence examined");
  {
    std::vector<std::vector<std::string>> rows;
    for (const Evidence& e : d.evidence) {
      const bool deciding =
          std::find(d.deciding.begin(), d.deciding.end(), e.code) != d.deciding.end();
      rows.push_back({escape(e.code), deciding ? "deciding" : "", escape(e.text)});
    }
    html::table_html(out, {"evidence", "role", "what it says"}, rows, 3, "evidence");
  }
  html::section_end(out);

  // 8. The capture and the warnings.
  html::section_begin(out, "capture", "The capture");
  {
    std::vector<std::pair<std::string, std::string>> kv{
        {"file", r.info.path},
        {"format", r.info.format + (r.info.detail.empty() ? "" : " (" + r.info.detail + ")")},
        {"sample rate", format_si(r.info.sample_rate_hz, "Hz")},
        {"samples", std::to_string(s.frames)},
        {"duration", format_si(duration_s, "s")},
        {"current channel", r.current_name},
        {"current probe", probe_text(r)},
        {"voltage channel", r.voltage_name ? *r.voltage_name : "none"},
        {"cycles set by", "rising crossings of the " + s.reference},
        {"whole cycles", std::to_string(s.cycles) + " (" + std::to_string(s.partial_cycles) +
                             " partial at the ends left out)"},
        {"probe tolerances", "offset \xC2\xB1" + format_si(r.probe_offset_a, "A") +
                                 ", gain \xC2\xB1" + fixed(r.probe_gain_pct, 2) + " %"}};
    for (const auto& [key, value] : r.info.metadata) kv.emplace_back(key, value);
    html::key_values(out, kv);
  }
  html::section_end(out);
  if (!r.warnings.empty()) {
    html::section_begin(out, "warnings", "Warnings");
    html::bullet_list(out, r.warnings, "notes warnings");
    html::section_end(out);
  }
  html::page_end(out, std::string(kMeasureSchema) +
                          ". Uncertainties are expanded (95 %). Sign convention: positive current "
                          "flows from the probed lead into electrode A, so while i > 0 electrode "
                          "A is the anode.");
}

}  // namespace lopside
