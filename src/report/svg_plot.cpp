// Inline SVG charts for the HTML reports (svg_plot.hpp). Every number written into the SVG goes
// through coord() or a tick/read-out formatter that only ever sees finite values, so a NaN or an
// infinity in the data can skip a point or break a line but never reach the markup.
#include "lopside/svg_plot.hpp"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <limits>

#include "lopside/units.hpp"

namespace lopside::svg {
namespace {

// Pixel coordinates are clamped to ±1e7 px before printing: a value far outside the axis span
// would otherwise print as hundreds of digits. The clamp moves a far vertex along its own line
// direction only negligibly inside the visible 1000 px, so the drawn segment keeps its slope.
constexpr double kMaxPixel = 1e7;
constexpr int kMaxTicks = 200;       // a hard cap so a degenerate step cannot loop for ever
constexpr double kMarkerRadius = 3;  // px, as the header states
constexpr double kTickLength = 4;    // px, tick marks drawn outside the plot area
constexpr double kCharWidth = 6.5;   // px per character of 11 px sans-serif text, an estimate
const char* const kMinus = "\xE2\x88\x92";  // U+2212 MINUS SIGN: a real minus in labels

std::string printf_string(const char* fmt, int decimals, double v) {
  std::array<char, 64> buf{};
  std::snprintf(buf.data(), buf.size(), fmt, decimals, v);
  return buf.data();
}

/// A pixel coordinate with two decimals ("12.50").
std::string coord(double px) {
  if (std::isnan(px)) px = 0;
  px = std::clamp(px, -kMaxPixel, kMaxPixel);
  std::string s = printf_string("%.*f", 2, px);
  if (s == "-0.00") s = "0.00";
  return s;
}

std::string point(double x, double y) {
  return coord(x) + "," + coord(y);
}

/// A size such as the chart width without trailing zeros ("400", "412.5").
std::string size_text(double v) {
  std::string s = coord(v);
  while (!s.empty() && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  return s;
}

/// '-' as U+2212 and "-0" as "0": tick labels read as typeset numbers.
std::string with_real_minus(std::string s) {
  if (s.empty() || s[0] != '-') return s;
  if (s.find_first_not_of("-0.") == std::string::npos) return s.substr(1);
  return kMinus + s.substr(1);
}

/// The shortest text (up to `max_digits` significant digits) that reads back as `v` to within
/// 1e-9 relative: plain decimals for 1e-4 ≤ |v| < 1e6 ("10", "0.002"), otherwise an exponent
/// without padding ("1e−6").
std::string short_number(double v, int max_digits = 15) {
  std::string s;
  int digits = 1;
  for (; digits <= max_digits; ++digits) {
    s = printf_string("%.*g", digits, v);
    const double back = std::strtod(s.c_str(), nullptr);
    if (std::fabs(back - v) <= 1e-9 * std::fabs(v)) break;
  }
  digits = std::min(digits, max_digits);
  const double m = std::fabs(v);
  if (s.find('e') != std::string::npos && m >= 1e-4 && m < 1e6) {
    // %g switches to an exponent once the exponent reaches the precision ("1e+01" for 10).
    const int exponent = static_cast<int>(std::floor(std::log10(m)));
    s = printf_string("%.*f", std::max(0, digits - 1 - exponent), v);
  }
  const std::size_t e = s.find('e');
  if (e != std::string::npos) {
    std::string mant = s.substr(0, e), ex = s.substr(e + 1);
    bool negative = false;
    if (!ex.empty() && (ex[0] == '+' || ex[0] == '-')) {
      negative = ex[0] == '-';
      ex.erase(0, 1);
    }
    while (ex.size() > 1 && ex[0] == '0') ex.erase(0, 1);
    s = mant + "e" + (negative ? std::string(kMinus) : std::string()) + ex;
  }
  return with_real_minus(s);
}

/// A 1-2-5 × 10^k step not smaller than `raw` / 1.5 (rounds `raw` to the nearest nice step);
/// 0 when `raw` is not a positive finite number.
double nice_step(double raw) {
  if (!(raw > 0) || !std::isfinite(raw)) return 0;
  const double mag = std::pow(10.0, std::floor(std::log10(raw)));
  if (!(mag > 0) || !std::isfinite(mag)) return 0;
  const double r = raw / mag;
  const double m = r < 1.5 ? 1 : r < 3 ? 2 : r < 7 ? 5 : 10;
  return m * mag;
}

/// The next smaller 1-2-5 step.
double smaller_step(double step) {
  const double mag = std::pow(10.0, std::floor(std::log10(step) + 1e-9));
  const double r = step / mag;
  if (r > 4.5) return 2 * mag;
  if (r > 1.5) return mag;
  return 0.5 * mag;
}

/// The multiples k·step inside [lo, hi] (1e-9 step of slack at both ends).
std::vector<double> multiples(double lo, double hi, double step) {
  std::vector<double> out;
  const double k0 = std::ceil(lo / step - 1e-9), k1 = std::floor(hi / step + 1e-9);
  if (!std::isfinite(k0) || !std::isfinite(k1) || k1 - k0 > kMaxTicks) return out;
  for (double k = k0; k <= k1; k += 1) {
    double v = k * step;
    if (std::fabs(v) < 1e-9 * step) v = 0;
    if (std::isfinite(v)) out.push_back(v);
  }
  return out;
}

/// Labels for linear ticks `step` apart in the axis unit: fixed decimals, just enough for the
/// step, or %e for magnitudes the prefixes (G … f) do not reach.
std::vector<Tick> label_linear(const std::vector<double>& values, double step,
                               const AxisUnit& unit) {
  const double scale = std::pow(10.0, unit.exponent);
  const double disp_step = step / scale;
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(disp_step) + 1e-9)));
  double max_abs = 0;
  for (double v : values) max_abs = std::max(max_abs, std::fabs(v / scale));
  const bool fixed = max_abs < 1e6 && decimals <= 6;
  int mantissa_decimals = 0;
  if (!fixed && max_abs > 0)
    mantissa_decimals = std::clamp(
        static_cast<int>(std::floor(std::log10(max_abs)) - std::floor(std::log10(disp_step))), 0,
        15);
  std::vector<Tick> ticks;
  for (double v : values) {
    const double d = v / scale;
    std::string text =
        fixed ? printf_string("%.*f", decimals, d) : short_number(d, 1 + mantissa_decimals);
    ticks.push_back({v, with_real_minus(text)});
  }
  return ticks;
}

/// The span with non-finite or reversed ends repaired and a zero width widened (±1 % of the
/// value, ±1 for zero); log spans made positive.
Span usable_span(Span s, bool log) {
  if (!std::isfinite(s.lo) || !std::isfinite(s.hi)) {
    if (std::isfinite(s.lo))
      s.hi = s.lo;
    else if (std::isfinite(s.hi))
      s.lo = s.hi;
    else
      s = {0, 1};
  }
  if (s.lo > s.hi) std::swap(s.lo, s.hi);
  if (log) {
    if (!(s.hi > 0)) return {1, 10};
    if (!(s.lo > 0)) s.lo = s.hi / 1000;  // three decades below the top when the low end is ≤ 0
    if (!(s.hi > s.lo)) {
      s.lo /= 10;
      s.hi *= 10;
    }
    if (!(s.lo > 0) || !std::isfinite(s.hi)) return {1, 10};
    return s;
  }
  if (!(s.hi > s.lo)) {
    const double d = s.lo != 0 ? 0.01 * std::fabs(s.lo) : 1.0;
    s.lo -= d;
    s.hi += d;
    if (!(s.hi > s.lo)) return {s.lo - 1, s.lo + 1};  // d lost below the value's last digit
  }
  if (!std::isfinite(s.hi - s.lo) && !std::isfinite(s.hi / 2 - s.lo / 2)) return {0, 1};
  return s;
}

/// Units whose prefixed forms nobody reads ("m%", "kdB"): printed as they are.
bool unprefixable(const std::string& unit) {
  const std::string degree = "\xC2\xB0";  // U+00B0
  return unit.empty() || unit == "%" || unit == "dB" || unit == "dBc" || unit == "ppm" ||
         unit == degree || unit == degree + "C";
}

std::string axis_title(const std::string& name, const AxisUnit& unit) {
  if (unit.text.empty()) return name;
  if (name.empty()) return "[" + unit.text + "]";
  return name + " [" + unit.text + "]";
}

/// "12.5 ms": a value in an axis's unit with four significant digits, for read-outs.
std::string readout(double v, const AxisUnit& unit) {
  const std::string num = short_number(v / std::pow(10.0, unit.exponent), 4);
  return unit.text.empty() ? num : num + " " + unit.text;
}

std::string class_attr(const std::string& kind, const std::string& css_class) {
  return css_class.empty() ? kind : kind + " " + css_class;
}

}  // namespace

std::string escape(const std::string& text) {
  std::string out;
  out.reserve(text.size());
  for (char c : text) {
    switch (c) {
      case '&':
        out += "&amp;";
        break;
      case '<':
        out += "&lt;";
        break;
      case '>':
        out += "&gt;";
        break;
      case '"':
        out += "&quot;";
        break;
      case '\'':
        out += "&#39;";
        break;
      default:
        out += c;
    }
  }
  return out;
}

double Scale::operator()(double value) const {
  double t = 0;
  if (log && d0 > 0 && d1 > 0) {
    const double v = value > 0 ? value : d0;
    const double a = std::log10(d0), b = std::log10(d1);
    if (a == b) return 0.5 * (p0 + p1);
    t = (std::log10(v) - a) / (b - a);
  } else {
    if (d0 == d1) return 0.5 * (p0 + p1);
    // Halved so that a span of ±1e308 does not overflow to inf/inf; exact in binary.
    t = (value / 2 - d0 / 2) / (d1 / 2 - d0 / 2);
  }
  return p0 + t * (p1 - p0);
}

AxisUnit axis_unit(double lo, double hi, const std::string& unit) {
  if (unprefixable(unit)) return {0, unit};
  double m = 0;
  if (std::isfinite(lo)) m = std::fabs(lo);
  if (std::isfinite(hi)) m = std::max(m, std::fabs(hi));
  if (!(m > 0)) return {0, unit};
  const auto& prefixes = si_prefixes();
  const SiPrefix* chosen = &prefixes.back();
  // 1e-9 of slack: 0.001 computed as 1e-3·(1 − ε) still reads "1 m…", not "1000 µ…".
  for (const SiPrefix& p : prefixes)
    if (m >= p.factor * (1 - 1e-9)) {
      chosen = &p;
      break;
    }
  return {static_cast<int>(std::lround(std::log10(chosen->factor))), chosen->symbol + unit};
}

std::vector<Tick> nice_ticks(double lo, double hi, const AxisUnit& unit, bool log, int target) {
  if (!std::isfinite(lo) || !std::isfinite(hi)) return {};
  if (lo > hi) std::swap(lo, hi);
  target = std::clamp(target, 2, 50);
  if (lo == hi) return label_linear({lo}, lo != 0 ? std::fabs(lo) : 1.0, unit);

  if (log && lo > 0) {
    const double a = std::log10(lo), b = std::log10(hi);
    const double decade_step = std::max(1.0, std::ceil((b - a) / target));
    std::vector<double> values;
    const double k0 = std::ceil(a - 1e-9), k1 = std::floor(b + 1e-9);
    for (double k = k0; k <= k1 && values.size() < kMaxTicks; k += decade_step)
      values.push_back(std::pow(10.0, k));
    if (b - a < 3) {  // fewer than three decades: 2 and 5 × 10^k as well
      values.clear();
      for (double k = std::floor(a); k <= k1 && values.size() < kMaxTicks; k += 1)
        for (double m : {1.0, 2.0, 5.0}) {
          const double v = m * std::pow(10.0, k);
          if (v >= lo * (1 - 1e-9) && v <= hi * (1 + 1e-9)) values.push_back(v);
        }
    }
    if (values.size() >= 2) {
      std::vector<Tick> ticks;
      const double scale = std::pow(10.0, unit.exponent);
      for (double v : values) ticks.push_back({v, short_number(v / scale, 6)});
      return ticks;
    }
    // Within one decade the 1-2-5 marks are too few: fall back to linear steps.
  }

  double step = nice_step(hi / target - lo / target);
  if (!(step > 0)) return {};
  std::vector<double> values = multiples(lo, hi, step);
  for (int guard = 0; values.size() < 2 && guard < 6; ++guard) {
    step = smaller_step(step);
    if (!(step > 0)) break;
    values = multiples(lo, hi, step);
  }
  if (values.empty()) return {};
  return label_linear(values, step, unit);
}

Span nice_span(const std::vector<double>& values, bool include_zero) {
  double lo = std::numeric_limits<double>::infinity(), hi = -lo;
  for (double v : values)
    if (std::isfinite(v)) {
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  if (!(lo <= hi)) return {0, 1};  // nothing finite: the unit span
  if (include_zero) {
    lo = std::min(lo, 0.0);
    hi = std::max(hi, 0.0);
  }
  Span s = usable_span({lo, hi}, false);
  const double step = nice_step(s.hi / 5 - s.lo / 5);  // the default tick count of nice_ticks
  if (step > 0) {
    const double wlo = std::floor(s.lo / step + 1e-9) * step;
    const double whi = std::ceil(s.hi / step - 1e-9) * step;
    if (std::isfinite(wlo) && std::isfinite(whi) && whi > wlo) {
      s.lo = wlo;
      s.hi = whi;
    }
  }
  return s;
}

MinMax min_max_columns(const std::vector<double>& x, const std::vector<double>& y,
                       std::size_t columns) {
  MinMax out;
  const std::size_t n = std::min(x.size(), y.size());
  if (columns == 0 || n == 0) return out;
  double x_lo = std::numeric_limits<double>::infinity(), x_hi = -x_lo;
  for (std::size_t i = 0; i < n; ++i)
    if (std::isfinite(x[i]) && !std::isnan(y[i])) {
      x_lo = std::min(x_lo, x[i]);
      x_hi = std::max(x_hi, x[i]);
    }
  if (!(x_lo <= x_hi)) return out;
  const double cols = static_cast<double>(columns);
  const double width = x_hi / cols - x_lo / cols;  // divided first: no overflow for huge x
  // One pass, flushing a column when x moves on (x is increasing), so the work is O(n) and the
  // memory O(kept columns) however many columns are asked for.
  bool open = false;
  std::size_t current = 0;
  double c_lo = 0, c_hi = 0;
  auto flush = [&] {
    if (!open) return;
    const double centre = width > 0 ? x_lo + (static_cast<double>(current) + 0.5) * width : x_lo;
    out.x.push_back(centre);
    out.lo.push_back(c_lo);
    out.hi.push_back(c_hi);
  };
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(x[i]) || std::isnan(y[i])) continue;
    std::size_t col = 0;
    if (width > 0) {
      const double f = std::floor((x[i] - x_lo) / width);
      col = f <= 0 ? 0 : std::min(columns - 1, static_cast<std::size_t>(std::min(f, cols - 1)));
    }
    if (open && col == current) {
      c_lo = std::min(c_lo, y[i]);
      c_hi = std::max(c_hi, y[i]);
      continue;
    }
    flush();
    open = true;
    current = col;
    c_lo = c_hi = y[i];
  }
  flush();
  return out;
}

Chart::Chart(double width_px, double height_px)
    : width_(std::isfinite(width_px) && width_px > kMarginLeft + kMarginRight + 1
                 ? width_px
                 : kMarginLeft + kMarginRight + 1),
      height_(std::isfinite(height_px) && height_px > kMarginTop + kMarginBottom + 1
                  ? height_px
                  : kMarginTop + kMarginBottom + 1) {
  x_ = {0, 1, kMarginLeft, width_ - kMarginRight, false};
  y_ = {0, 1, height_ - kMarginBottom, kMarginTop, false};
}

void Chart::x_axis(Span span, const std::string& name, const std::string& unit, bool log) {
  const Span s = usable_span(span, log);
  x_log_ = log;
  x_ = {s.lo, s.hi, kMarginLeft, width_ - kMarginRight, log};
  x_name_ = name;
  x_unit_ = axis_unit(s.lo, s.hi, unit);
  // About one tick per 90 px of plot width: labels of five or six characters stay apart.
  const int target = std::clamp(static_cast<int>((x_.p1 - x_.p0) / 90), 3, 10);
  if (!x_categorical_) x_ticks_ = nice_ticks(s.lo, s.hi, x_unit_, log, target);
}

void Chart::y_axis(Span span, const std::string& name, const std::string& unit, bool log) {
  const Span s = usable_span(span, log);
  y_log_ = log;
  y_ = {s.lo, s.hi, height_ - kMarginBottom, kMarginTop, log};
  y_name_ = name;
  y_unit_ = axis_unit(s.lo, s.hi, unit);
  const int target = std::clamp(static_cast<int>((y_.p0 - y_.p1) / 40), 3, 8);
  y_ticks_ = nice_ticks(s.lo, s.hi, y_unit_, log, target);
}

void Chart::line(const std::vector<double>& x, const std::vector<double>& y,
                 const std::string& css_class, const std::string& label) {
  const std::size_t n = std::min(x.size(), y.size());
  const std::string cls = escape(class_attr("line", css_class));
  std::string svg, run;
  std::size_t run_points = 0;
  auto close_run = [&] {
    if (run_points == 1) run += " " + run;  // a lone point: a round-capped dot, not nothing
    if (run_points > 0) svg += "<polyline class=\"" + cls + "\" points=\"" + run + "\"/>";
    run.clear();
    run_points = 0;
  };
  for (std::size_t i = 0; i < n; ++i) {
    const bool ok = std::isfinite(x[i]) && std::isfinite(y[i]) && !(x_log_ && x[i] <= 0) &&
                    !(y_log_ && y[i] <= 0);
    if (!ok) {
      close_run();
      continue;
    }
    if (run_points > 0) run += ' ';
    run += point(x_(x[i]), y_(y[i]));
    ++run_points;
  }
  close_run();
  if (svg.empty()) return;
  layers_.push_back(svg);
  if (!label.empty()) legend_.emplace_back(class_attr("line", css_class), label);
}

void Chart::area(const std::vector<double>& x, const std::vector<double>& lo,
                 const std::vector<double>& hi, const std::string& css_class,
                 const std::string& label) {
  const std::size_t n = std::min({x.size(), lo.size(), hi.size()});
  std::string d;
  std::vector<std::size_t> run;
  auto close_run = [&] {
    if (!run.empty()) {
      // Along the lower edge, back along the upper edge, closed.
      for (std::size_t k = 0; k < run.size(); ++k)
        d += (k == 0 ? "M" : "L") + point(x_(x[run[k]]), y_(lo[run[k]]));
      for (std::size_t k = run.size(); k-- > 0;) d += "L" + point(x_(x[run[k]]), y_(hi[run[k]]));
      d += "Z";
    }
    run.clear();
  };
  for (std::size_t i = 0; i < n; ++i) {
    if (std::isfinite(x[i]) && std::isfinite(lo[i]) && std::isfinite(hi[i]) &&
        !(x_log_ && x[i] <= 0))
      run.push_back(i);
    else
      close_run();
  }
  close_run();
  if (d.empty()) return;
  layers_.push_back("<path class=\"" + escape(class_attr("area", css_class)) + "\" d=\"" + d +
                    "\"/>");
  if (!label.empty()) legend_.emplace_back(class_attr("area", css_class), label);
}

void Chart::y_band(double y0, double y1, const std::string& css_class, const std::string& label) {
  if (!std::isfinite(y0) || !std::isfinite(y1)) return;
  const double a = y_(y0), b = y_(y1);
  const double top = std::min(a, b), h = std::fabs(a - b);
  layers_.push_back("<rect class=\"" + escape(class_attr("band", css_class)) + "\" x=\"" +
                    coord(x_.p0) + "\" y=\"" + coord(top) + "\" width=\"" + coord(x_.p1 - x_.p0) +
                    "\" height=\"" + coord(h) + "\"/>");
  if (!label.empty()) legend_.emplace_back(class_attr("band", css_class), label);
}

void Chart::y_rule(double y, const std::string& css_class, const std::string& text) {
  if (!std::isfinite(y) || (y_log_ && y <= 0)) return;
  const double py = y_(y);
  std::string svg = "<line class=\"" + escape(class_attr("rule", css_class)) + "\" x1=\"" +
                    coord(x_.p0) + "\" y1=\"" + coord(py) + "\" x2=\"" + coord(x_.p1) + "\" y2=\"" +
                    coord(py) + "\"/>";
  if (!text.empty()) {
    // Above the rule at the right end; below it when the rule runs along the top.
    const double ty = py - 3 < y_.p1 + 10 ? py + 11 : py - 3;
    svg += "<text class=\"rule-text\" x=\"" + coord(x_.p1 - 4) + "\" y=\"" + coord(ty) +
           "\" text-anchor=\"end\">" + escape(text) + "</text>";
  }
  layers_.push_back(svg);
}

void Chart::x_rule(double x, const std::string& css_class, const std::string& text) {
  if (!std::isfinite(x) || (x_log_ && x <= 0)) return;
  const double px = x_(x);
  std::string svg = "<line class=\"" + escape(class_attr("rule", css_class)) + "\" x1=\"" +
                    coord(px) + "\" y1=\"" + coord(y_.p0) + "\" x2=\"" + coord(px) + "\" y2=\"" +
                    coord(y_.p1) + "\"/>";
  if (!text.empty()) {
    // At the top, right of the rule; left of it when the rule is in the right half.
    const bool left = px > 0.5 * (x_.p0 + x_.p1);
    svg += "<text class=\"rule-text\" x=\"" + coord(left ? px - 3 : px + 3) + "\" y=\"" +
           coord(y_.p1 + 10) + "\" text-anchor=\"" + (left ? "end" : "start") + "\">" +
           escape(text) + "</text>";
  }
  layers_.push_back(svg);
}

void Chart::bars(const std::vector<double>& x, const std::vector<double>& height, double width,
                 const std::string& css_class, const std::string& label) {
  const std::size_t n = std::min(x.size(), height.size());
  // The base: zero on a linear axis, the lower end on a log axis (log 0 does not exist).
  const double base = y_log_ ? y_(y_.d0) : y_(0.0);
  const double half = std::isfinite(width) ? std::fabs(width) / 2 : 0;
  std::string d;
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(x[i]) || !std::isfinite(height[i])) continue;
    if (y_log_ && height[i] <= y_.d0) continue;  // nothing to draw above the axis's lower end
    double left = x_(x[i] - half), right = x_(x[i] + half);
    if (x_log_) {
      if (x[i] <= 0) continue;
      left = x_(std::max(x[i] - half, x[i] / 2));
    }
    if (right - left < 1) {  // at least one pixel wide so a narrow bar still shows
      const double c = x_(x[i]);
      left = c - 0.5;
      right = c + 0.5;
    }
    d += "M" + point(left, base) + "V" + coord(y_(height[i])) + "H" + coord(right) + "V" +
         coord(base) + "Z";
  }
  if (d.empty()) return;
  layers_.push_back("<path class=\"" + escape(class_attr("bars", css_class)) + "\" d=\"" + d +
                    "\"/>");
  if (!label.empty()) legend_.emplace_back(class_attr("bars", css_class), label);
}

void Chart::whiskers(const std::vector<double>& x, const std::vector<double>& y,
                     const std::vector<double>& u, const std::string& css_class) {
  const std::size_t n = std::min({x.size(), y.size(), u.size()});
  std::string d;
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(x[i]) || !std::isfinite(y[i]) || !std::isfinite(u[i])) continue;
    if (x_log_ && x[i] <= 0) continue;
    const double px = x_(x[i]), a = y_(y[i] - std::fabs(u[i])), b = y_(y[i] + std::fabs(u[i]));
    // The whisker with 3 px caps at both ends.
    d += "M" + point(px, a) + "V" + coord(b) + "M" + point(px - 3, a) + "H" + coord(px + 3) + "M" +
         point(px - 3, b) + "H" + coord(px + 3);
  }
  if (d.empty()) return;
  layers_.push_back("<path class=\"" + escape(class_attr("whisker", css_class)) + "\" d=\"" + d +
                    "\"/>");
}

void Chart::markers(const std::vector<double>& x, const std::vector<double>& y,
                    const std::string& css_class, const std::string& label,
                    const std::vector<std::string>& titles) {
  const std::size_t n = std::min(x.size(), y.size());
  const bool own_titles = titles.size() == n && n > 0;
  const std::string cls = escape(class_attr("marker", css_class));
  std::string svg;
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(x[i]) || !std::isfinite(y[i])) continue;
    if ((x_log_ && x[i] <= 0) || (y_log_ && y[i] <= 0)) continue;
    // The hover read-out: the caller's text, or the point in the axes' units.
    const std::string title =
        own_titles ? titles[i]
                   : (x_categorical_ ? std::string() : readout(x[i], x_unit_) + ", ") +
                         readout(y[i], y_unit_);
    svg += "<circle class=\"" + cls + "\" cx=\"" + coord(x_(x[i])) + "\" cy=\"" + coord(y_(y[i])) +
           "\" r=\"" + size_text(kMarkerRadius) + "\">";
    svg +=
        title.empty() ? std::string("</circle>") : "<title>" + escape(title) + "</title></circle>";
  }
  if (svg.empty()) return;
  layers_.push_back(svg);
  if (!label.empty()) legend_.emplace_back(class_attr("marker", css_class), label);
}

void Chart::x_labels(const std::vector<double>& x, const std::vector<std::string>& labels) {
  x_categorical_ = true;
  x_ticks_.clear();
  const std::size_t n = std::min(x.size(), labels.size());
  std::size_t widest = 1;
  for (std::size_t i = 0; i < n; ++i) widest = std::max(widest, labels[i].size());
  // Every k-th label only, so that labels about `widest` characters wide do not overlap.
  const double room = n > 1 ? (x_.p1 - x_.p0) / static_cast<double>(n) : x_.p1 - x_.p0;
  const double needed = static_cast<double>(widest) * kCharWidth + 6;
  const std::size_t every =
      room >= needed ? 1 : static_cast<std::size_t>(std::ceil(needed / std::max(room, 1e-3)));
  for (std::size_t i = 0; i < n; i += std::max<std::size_t>(every, 1))
    if (std::isfinite(x[i])) x_ticks_.push_back({x[i], labels[i]});
}

std::string Chart::render(const std::string& id, const std::string& title,
                          const std::string& description) const {
  const std::string eid = escape(id);
  const double left = x_.p0, right = x_.p1, bottom = y_.p0, top = y_.p1;
  std::string s;
  s.reserve(4096);
  s += "<figure class=\"chart\" id=\"" + eid + "\">";
  s += "<svg xmlns=\"http://www.w3.org/2000/svg\" viewBox=\"0 0 " + size_text(width_) + " " +
       size_text(height_) + "\" width=\"" + size_text(width_) + "\" height=\"" +
       size_text(height_) + "\" role=\"img\" aria-labelledby=\"" + eid + "-title " + eid +
       "-desc\"";
  // The axis maps for the optional hover script: "d0 d1 p0 p1 log exponent unit".
  auto map_attr = [](const Scale& sc, const AxisUnit& u) {
    // Plain ASCII numbers (no U+2212) so that the script can read them back.
    return printf_string("%.*g", 17, sc.d0) + " " + printf_string("%.*g", 17, sc.d1) + " " +
           size_text(sc.p0) + " " + size_text(sc.p1) + " " + (sc.log ? "1" : "0") + " " +
           std::to_string(u.exponent) + " " + escape(u.text);
  };
  if (!x_categorical_) s += " data-x=\"" + map_attr(x_, x_unit_) + "\"";
  s += " data-y=\"" + map_attr(y_, y_unit_) + "\">";
  s += "<title id=\"" + eid + "-title\">" + escape(title) + "</title>";
  s += "<desc id=\"" + eid + "-desc\">" + escape(description) + "</desc>";
  s += "<defs><clipPath id=\"" + eid + "-clip\"><rect x=\"" + coord(left) + "\" y=\"" + coord(top) +
       "\" width=\"" + coord(right - left) + "\" height=\"" + coord(bottom - top) +
       "\"/></clipPath></defs>";

  // Grid: one path, a line per numeric tick.
  std::string grid;
  if (!x_categorical_)
    for (const Tick& t : x_ticks_) grid += "M" + point(x_(t.value), bottom) + "V" + coord(top);
  for (const Tick& t : y_ticks_) grid += "M" + point(left, y_(t.value)) + "H" + coord(right);
  if (!grid.empty()) s += "<path class=\"grid\" d=\"" + grid + "\"/>";
  if (!y_log_ && y_.d0 < 0 && y_.d1 > 0)
    s += "<line class=\"zero\" x1=\"" + coord(left) + "\" y1=\"" + coord(y_(0.0)) + "\" x2=\"" +
         coord(right) + "\" y2=\"" + coord(y_(0.0)) + "\"/>";

  s += "<g clip-path=\"url(#" + eid + "-clip)\">";
  for (const std::string& layer : layers_) s += layer;
  s += "</g>";

  // Axes (left and bottom) with tick marks outside the plot area.
  std::string axes = "M" + point(left, top) + "V" + coord(bottom) + "H" + coord(right);
  for (const Tick& t : x_ticks_)
    axes += "M" + point(x_(t.value), bottom) + "v" + size_text(kTickLength);
  for (const Tick& t : y_ticks_)
    axes += "M" + point(left, y_(t.value)) + "h" + size_text(-kTickLength);
  s += "<path class=\"axis\" d=\"" + axes + "\"/>";

  s += "<g class=\"ticks\">";
  for (const Tick& t : x_ticks_)
    s += "<text class=\"tick\" x=\"" + coord(x_(t.value)) + "\" y=\"" + coord(bottom + 16) +
         "\" text-anchor=\"middle\">" + escape(t.label) + "</text>";
  for (const Tick& t : y_ticks_)
    s += "<text class=\"tick\" x=\"" + coord(left - 7) + "\" y=\"" + coord(y_(t.value)) +
         "\" dy=\"0.32em\" text-anchor=\"end\">" + escape(t.label) + "</text>";
  s += "</g>";

  const std::string x_title = axis_title(x_name_, x_unit_);
  const std::string y_title = axis_title(y_name_, y_unit_);
  if (!x_title.empty())
    s += "<text class=\"axis-name\" x=\"" + coord(0.5 * (left + right)) + "\" y=\"" +
         coord(height_ - 8) + "\" text-anchor=\"middle\">" + escape(x_title) + "</text>";
  if (!y_title.empty()) {
    const std::string cy = coord(0.5 * (top + bottom));
    s += "<text class=\"axis-name\" x=\"14\" y=\"" + cy + "\" transform=\"rotate(-90 14 " + cy +
         ")\" text-anchor=\"middle\">" + escape(y_title) + "</text>";
  }

  // Legend along the top margin, wrapping to a further row when the chart is too narrow.
  if (!legend_.empty()) {
    s += "<g class=\"legend\">";
    double lx = left, ly = 12;
    for (const auto& [cls, text] : legend_) {
      const double w = 22 + static_cast<double>(text.size()) * kCharWidth + 12;
      if (lx > left && lx + w > right) {
        lx = left;
        ly += 14;
      }
      const std::string kind = cls.substr(0, cls.find(' '));
      const std::string ec = escape(cls);
      if (kind == "line" || kind == "rule")
        s += "<line class=\"" + ec + "\" x1=\"" + coord(lx) + "\" y1=\"" + coord(ly) + "\" x2=\"" +
             coord(lx + 16) + "\" y2=\"" + coord(ly) + "\"/>";
      else if (kind == "marker")
        s += "<circle class=\"" + ec + "\" cx=\"" + coord(lx + 8) + "\" cy=\"" + coord(ly) +
             "\" r=\"" + size_text(kMarkerRadius) + "\"/>";
      else
        s += "<rect class=\"" + ec + "\" x=\"" + coord(lx + 2) + "\" y=\"" + coord(ly - 5) +
             "\" width=\"12\" height=\"10\"/>";
      s += "<text class=\"legend-text\" x=\"" + coord(lx + 22) + "\" y=\"" + coord(ly) +
           "\" dy=\"0.32em\">" + escape(text) + "</text>";
      lx += w;
    }
    s += "</g>";
  }
  s += "</svg><figcaption>" + escape(title) + "</figcaption></figure>";
  return s;
}

Span padded_span(const std::vector<double>& values) {
  if (values.empty()) return nice_span(values);
  double lo = values.front(), hi = values.front();
  for (const double v : values) {
    lo = std::fmin(lo, v);
    hi = std::fmax(hi, v);
  }
  const double pad = 0.04 * (hi - lo);
  std::vector<double> ends = values;
  ends.push_back(lo - pad);
  ends.push_back(hi + pad);
  return nice_span(ends);
}

}  // namespace lopside::svg
