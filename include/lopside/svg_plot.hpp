#pragma once
/// \file
/// Plots as inline SVG for the HTML reports: linear and log axes with ticks at 1-2-5 steps and
/// one SI prefix per axis ("current [mA]"), lines, min/max envelopes, bands, bars, markers,
/// each chart with a title and a text alternative (SVG <title>/<desc>, aria-labelledby) so a
/// screen reader or a printout without colour still says what it shows.
///
/// Geometry is fixed so that tests can check it: a chart of width W × height H px draws its
/// plot area from x = kMarginLeft to W − kMarginRight and from y = kMarginTop to
/// H − kMarginBottom; a data value maps linearly (or by log10) onto that span, larger y up.
/// Coordinates are written with two decimals. Styling is by CSS class only (the page's style
/// sheet, html_page.hpp), so the plot code holds no colour.

#include <cstddef>
#include <string>
#include <utility>
#include <vector>

namespace lopside::svg {

inline constexpr double kMarginLeft = 64;
inline constexpr double kMarginRight = 16;
inline constexpr double kMarginTop = 28;
inline constexpr double kMarginBottom = 44;

/// Escapes &, <, >, " and ' for text and attribute values.
std::string escape(const std::string& text);

/// Linear (or log10) map from data [d0, d1] to pixels [p0, p1]; d0 ≠ d1 (a zero span is
/// widened by the Axis that owns it). Log maps need d0, d1 > 0 and clamp values ≤ 0 to d0.
struct Scale {
  double d0 = 0, d1 = 1, p0 = 0, p1 = 1;
  bool log = false;
  double operator()(double value) const;
};

struct Tick {
  double value = 0;   ///< in the data's SI unit
  std::string label;  ///< the value in the axis's display unit, e.g. "-2.5"
};

/// The prefix an axis uses for data spanning [lo, hi] in `unit`: the one that puts the larger
/// of |lo| and |hi| in [1, 1000) (µ, m, none, k, M, …; none for an empty unit or for "%").
/// Returns the power of ten (…, −6, −3, 0, 3, …) and the prefixed unit ("mA").
struct AxisUnit {
  int exponent = 0;
  std::string text;  ///< "mA", "kHz", "" when the unit is empty
};
AxisUnit axis_unit(double lo, double hi, const std::string& unit);

/// Ticks at 1, 2 or 5 × 10^k inside [lo, hi], about `target` of them (never fewer than 2 for a
/// non-empty span), labelled in the axis unit with just enough decimals to tell them apart.
/// Log axes: ticks at the powers of ten inside the span (and 2, 5 × 10^k when fewer than 3
/// decades are shown).
std::vector<Tick> nice_ticks(double lo, double hi, const AxisUnit& unit, bool log = false,
                             int target = 5);

/// [lo, hi] of the finite values (NaN/inf skipped), widened to 1-2-5 tick steps; a span of
/// zero widened by ±1 % of |value| (±1 for zero). `include_zero` extends it to 0.
struct Span {
  double lo = 0, hi = 1;
};
Span nice_span(const std::vector<double>& values, bool include_zero = false);
/// nice_span of the values widened first by 4 % of their range on both sides, so that a marker on
/// an extreme is drawn whole inside the plot area (control charts, lot means). Needs a value.
Span padded_span(const std::vector<double>& values);

/// Min/max decimation: the points (x, y), x increasing, gathered into `columns` equal-width
/// columns of x; each column keeps its x centre and the min and max of its y. Drawn as a filled
/// envelope it shows every excursion of a million points with a few hundred vertices. Columns
/// with no point are left out. NaN y values are skipped.
struct MinMax {
  std::vector<double> x, lo, hi;
};
MinMax min_max_columns(const std::vector<double>& x, const std::vector<double>& y,
                       std::size_t columns);

/// One chart. Call the axes first, then add layers in drawing order, then render.
class Chart {
 public:
  Chart(double width_px, double height_px);

  /// The axes: data span, name and SI unit of the quantity ("time", "s" → "time [ms]").
  void x_axis(Span span, const std::string& name, const std::string& unit, bool log = false);
  void y_axis(Span span, const std::string& name, const std::string& unit, bool log = false);

  /// A polyline through the points (NaN breaks the line). `label` goes into the legend.
  void line(const std::vector<double>& x, const std::vector<double>& y,
            const std::string& css_class, const std::string& label = {});
  /// A filled area between lo(x) and hi(x) (an envelope or an uncertainty band).
  void area(const std::vector<double>& x, const std::vector<double>& lo,
            const std::vector<double>& hi, const std::string& css_class,
            const std::string& label = {});
  /// A band across the whole plot between y0 and y1 (e.g. mean ± u95, a limit's pass zone).
  void y_band(double y0, double y1, const std::string& css_class, const std::string& label = {});
  /// A horizontal or vertical rule across the plot, with an optional text at its end.
  void y_rule(double y, const std::string& css_class, const std::string& text = {});
  void x_rule(double x, const std::string& css_class, const std::string& text = {});
  /// Bars from the axis base (0, or the log axis's lower end) to each height, centred on x,
  /// `width` in data units.
  void bars(const std::vector<double>& x, const std::vector<double>& height, double width,
            const std::string& css_class, const std::string& label = {});
  /// Error bars: vertical whiskers from y − u to y + u.
  void whiskers(const std::vector<double>& x, const std::vector<double>& y,
                const std::vector<double>& u, const std::string& css_class);
  /// Point markers (circles of radius 3 px); `titles` (same length, or empty) become hover
  /// read-outs (<title> inside each marker).
  void markers(const std::vector<double>& x, const std::vector<double>& y,
               const std::string& css_class, const std::string& label = {},
               const std::vector<std::string>& titles = {});
  /// Categorical x labels at given x positions instead of numeric ticks (order numbers, unit
  /// ids); replaces the x ticks.
  void x_labels(const std::vector<double>& x, const std::vector<std::string>& labels);

  const Scale& x_scale() const { return x_; }
  const Scale& y_scale() const { return y_; }

  /// The whole chart as <figure class="chart"><svg …>…</svg><figcaption>…</figcaption>
  /// </figure>: `id` makes the element ids unique on the page, `title` is the caption and the
  /// SVG <title>, `description` the <desc> (the text alternative: what the plot shows, in
  /// figures). A legend lists the labelled layers.
  std::string render(const std::string& id, const std::string& title,
                     const std::string& description) const;

 private:
  double width_, height_;
  Scale x_, y_;
  std::string x_name_, y_name_;
  AxisUnit x_unit_, y_unit_;
  bool x_log_ = false, y_log_ = false;
  std::vector<Tick> x_ticks_, y_ticks_;
  bool x_categorical_ = false;
  std::vector<std::string> layers_;                          // SVG fragments in drawing order
  std::vector<std::pair<std::string, std::string>> legend_;  // (css class, label)
};

}  // namespace lopside::svg
