#include "api/fit_plot.h"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "api/svg_writer.h"
#include "science/constants.h"
#include "science/passband.h"
#include "science/planck_fit.h"
#include "science/units.h"

namespace planckton::api {

namespace {

using json = nlohmann::ordered_json;
using svg::PathData;
using svg::XmlWriter;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// ---- layout (user units; the document is 800 x 600) -------------------------------------------

constexpr double kWidth = 800.0;
constexpr double kHeight = 600.0;

struct Box {
  double left, top, right, bottom;
  double width() const { return right - left; }
  double height() const { return bottom - top; }
};
constexpr Box kMain{92.0, 66.0, 776.0, 390.0};
constexpr Box kResiduals{92.0, 406.0, 776.0, 512.0};
constexpr double kTickLabelBaseline = kResiduals.bottom + 17.0;
constexpr double kAxisLabelBaseline = kResiduals.bottom + 42.0;

constexpr int kCurvePoints = 400;
constexpr double kLogAxisDecades = 1.5;  // data spanning more than this get a log axis

constexpr const char* kFont = "DejaVu Sans, Liberation Sans, Arial, Helvetica, sans-serif";
constexpr const char* kInk = "#222222";
constexpr const char* kMuted = "#666666";
constexpr const char* kGrid = "#e8e8e8";
constexpr const char* kData = "#1f4e8c";
constexpr const char* kErrorBar = "#8aa5cc";
constexpr const char* kExcluded = "#9a9a9a";
constexpr const char* kExcludedRange = "#ededed";
constexpr const char* kModel = "#c8372d";
constexpr const char* kBand = "#f0a79e";
constexpr const char* kPeak = "#5a5a5a";

// ---- text --------------------------------------------------------------------------------------

// Fixed-point text for people: the minus sign is U+2212, "-0" is "0".
std::string display_fixed(double value, int decimals) {
  decimals = std::clamp(decimals, 0, 12);
  char buffer[64];
  const auto [end, error] = std::to_chars(buffer, buffer + sizeof buffer, value, std::chars_format::fixed, decimals);
  if (error != std::errc()) return "?";
  std::string text(buffer, end);
  if (text.find_first_not_of("-0.") == std::string::npos) return text.substr(text[0] == '-' ? 1 : 0);
  if (text[0] == '-') text.replace(0, 1, "\u2212");
  return text;
}

// Decimals that show an uncertainty with two significant digits (common practice).
int decimals_for(double error) {
  if (!(error > 0.0) || !std::isfinite(error)) return 1;
  return std::clamp(1 - static_cast<int>(std::floor(std::log10(error))), 0, 8);
}

// A value with its uncertainty in the same decimals; large or small values in scientific notation.
std::string with_error(double value, std::optional<double> error) {
  const double magnitude = std::abs(value);
  if (magnitude >= 1e6 || (magnitude > 0.0 && magnitude < 1e-3)) {
    const int exponent = static_cast<int>(std::floor(std::log10(magnitude)));
    const double scale = std::pow(10.0, exponent);
    const int decimals = error ? decimals_for(*error / scale) : 3;
    std::string text = display_fixed(value / scale, decimals);
    if (error) text += " \u00B1 " + display_fixed(*error / scale, decimals);
    return (error ? "(" + text + ")" : text) + "\u00D710^" + std::to_string(exponent);
  }
  const int decimals = error ? decimals_for(*error) : (magnitude >= 100.0 ? 1 : 3);
  std::string text = display_fixed(value, decimals);
  if (error) text += " \u00B1 " + display_fixed(*error, decimals);
  return text;
}

std::optional<double> number_at(const json& document, const json::json_pointer& pointer) {
  if (!document.contains(pointer)) return std::nullopt;
  const json& value = document.at(pointer);
  if (!value.is_number()) return std::nullopt;
  const double v = value.get<double>();
  return std::isfinite(v) ? std::optional(v) : std::nullopt;
}

std::string plural(std::size_t n, const char* one, const char* many) {
  return std::to_string(n) + " " + (n == 1 ? one : many);
}

// ---- scales and ticks --------------------------------------------------------------------------

struct Range {
  double lo = std::numeric_limits<double>::infinity();
  double hi = -std::numeric_limits<double>::infinity();
  void add(double v, bool positive_only = false) {
    if (!std::isfinite(v) || (positive_only && !(v > 0.0))) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool empty() const { return !(lo <= hi); }
};

struct Scale {
  double lo = 0.0, hi = 1.0;  // data coordinates at the two ends
  bool log = false;
  double from = 0.0, to = 1.0;  // pixels of lo and hi

  double coordinate(double v) const { return log ? std::log10(v) : v; }
  // Data -> pixel, clamped far outside the panel (its clip path hides what lies beyond).
  double map(double v) const {
    double t = -20.0;
    if (!log || v > 0.0) t = (coordinate(v) - coordinate(lo)) / (coordinate(hi) - coordinate(lo));
    if (std::isnan(t)) t = -20.0;
    t = std::clamp(t, -20.0, 21.0);
    return from + t * (to - from);
  }
  bool contains(double v) const { return v >= lo && v <= hi; }
};

// The range padded (a fraction of its span at each end; log: of its decades), at least min_span
// wide (linear: relative to its size; log: decades).
Scale make_scale(Range range, bool log, double pad, double from, double to, bool zero_baseline = false) {
  Scale s;
  s.log = log;
  s.from = from;
  s.to = to;
  if (range.empty()) range = log ? Range{1.0, 10.0} : Range{0.0, 1.0};
  if (log) {
    double l0 = std::log10(range.lo), l1 = std::log10(range.hi);
    if (l1 - l0 < 0.2) {
      const double middle = 0.5 * (l0 + l1);
      l0 = middle - 0.1;
      l1 = middle + 0.1;
    }
    const double span = l1 - l0;
    s.lo = std::pow(10.0, l0 - pad * span);
    s.hi = std::pow(10.0, l1 + pad * span);
    return s;
  }
  double lo = range.lo, hi = range.hi;
  if (!(hi > lo)) {
    const double half = lo != 0.0 ? 0.1 * std::abs(lo) : 1.0;
    lo -= half;
    hi += half;
  }
  const double span = hi - lo;
  if (zero_baseline && lo >= 0.0 && lo < 0.5 * hi) {
    s.lo = 0.0;
    s.hi = hi + pad * hi;
  } else {
    s.lo = lo - pad * span;
    s.hi = hi + pad * span;
  }
  return s;
}

// A tick label: mantissa text, and an exponent written as a superscript of it ("10" with 3 is 10^3).
struct Label {
  std::string text;
  std::optional<int> exponent;
};
struct Tick {
  double value = 0.0;
  bool major = true;  // labelled and with a grid line
  Label label;
};
struct Ticks {
  std::vector<Tick> ticks;
  int offset_exponent = 0;  // linear axes: the labels are value / 10^offset_exponent
};

double nice_step(double raw) {
  const double magnitude = std::pow(10.0, std::floor(std::log10(raw)));
  const double f = raw / magnitude;
  return (f < 1.5 ? 1.0 : f < 3.5 ? 2.0 : f < 7.5 ? 5.0 : 10.0) * magnitude;
}

Ticks linear_ticks(const Scale& s, double target_count) {
  Ticks out;
  const double step = nice_step((s.hi - s.lo) / target_count);
  const double largest = std::max(std::abs(s.lo), std::abs(s.hi));
  if (largest >= 1e5 || largest < 1e-2) out.offset_exponent = static_cast<int>(std::floor(std::log10(largest)));
  const double offset = std::pow(10.0, out.offset_exponent);
  const int decimals = std::max(0, -static_cast<int>(std::floor(std::log10(step / offset) + 1e-9)));
  const double first = std::ceil(s.lo / step - 1e-9);
  for (int k = 0; k < 64; ++k) {
    double v = (first + k) * step;
    if (v > s.hi + 1e-9 * step) break;
    if (std::abs(v) < 1e-9 * step) v = 0.0;
    out.ticks.push_back({v, true, {display_fixed(v / offset, decimals), std::nullopt}});
  }
  return out;
}

Label log_label(int mantissa, int decade) {
  if (decade >= -3 && decade <= 4) {
    return {display_fixed(mantissa * std::pow(10.0, decade), std::max(0, -decade)), std::nullopt};
  }
  return {mantissa == 1 ? std::string("10") : std::to_string(mantissa) + "\u00D710", decade};
}

// Labels at decades (1 x 10^d), or more mantissas per decade when the decades are far apart, so
// that labels are at least min_spacing pixels apart; narrow ranges get linear steps on the log axis.
Ticks log_ticks(const Scale& s, double min_spacing) {
  Ticks out;
  const double l0 = std::log10(s.lo), l1 = std::log10(s.hi);
  const double pixels_per_decade = std::abs(s.to - s.from) / (l1 - l0);
  static const std::vector<std::vector<int>> kSets = {{1, 2, 3, 5}, {1, 2, 5}, {1, 3}, {1}};
  static const std::array<double, 4> kSmallestGap = {0.1761, 0.3010, 0.4771, 1.0};  // decades
  std::vector<int> labelled = {1};
  int decade_step = 1;
  std::size_t set = 0;
  while (set < kSets.size() && kSmallestGap[set] * pixels_per_decade < min_spacing) ++set;
  if (set < kSets.size()) {
    labelled = kSets[set];
  } else {
    decade_step = static_cast<int>(std::ceil(min_spacing / pixels_per_decade));
  }
  const int d0 = static_cast<int>(std::floor(l0)) - 1, d1 = static_cast<int>(std::ceil(l1)) + 1;
  std::size_t labels = 0;
  for (int d = d0; d <= d1; ++d) {
    for (int m = 1; m <= 9; ++m) {
      const double v = m * std::pow(10.0, d);
      if (v < s.lo * (1 - 1e-9) || v > s.hi * (1 + 1e-9)) continue;
      const bool major = std::find(labelled.begin(), labelled.end(), m) != labelled.end() && (m != 1 || d % decade_step == 0);
      const bool minor = !major && (pixels_per_decade >= 40.0 || (m == 1 && decade_step > 1));
      if (major) {
        out.ticks.push_back({v, true, log_label(m, d)});
        ++labels;
      } else if (minor) {
        out.ticks.push_back({v, false, {}});
      }
    }
  }
  if (labels >= 3 || set > 0) return out;
  // Less than a decade with too few labels: linear steps, placed logarithmically.
  Ticks linear = linear_ticks(Scale{s.lo, s.hi, false, s.from, s.to}, 5.0);
  linear.ticks.erase(std::remove_if(linear.ticks.begin(), linear.ticks.end(), [](const Tick& t) { return !(t.value > 0.0); }),
                     linear.ticks.end());
  if (linear.offset_exponent != 0) {
    for (Tick& t : linear.ticks) t.label.text += "\u00D710", t.label.exponent = linear.offset_exponent;
    linear.offset_exponent = 0;
  }
  return linear;
}

Ticks ticks_for(const Scale& s, bool horizontal) {
  const double pixels = std::abs(s.to - s.from);
  return s.log ? log_ticks(s, horizontal ? 52.0 : 24.0) : linear_ticks(s, std::max(4.0, pixels / (horizontal ? 90.0 : 45.0)));
}

// ---- what a plot shows, in data coordinates ----------------------------------------------------

struct Point {
  double x = 0.0, y = 0.0;
  double y_lo = kNaN, y_hi = kNaN;  // error bar
  double x_lo = kNaN, x_hi = kNaN;  // band width
  bool excluded = false;
  bool upper_limit = false;
  double model = kNaN;     // the model's value in a band
  double residual = kNaN;  // in the residual panel's units
  std::string id;          // band id
};

struct Curve {
  std::vector<double> x, value, lower, upper;
};

struct PeakMark {
  double x = 0.0;
  std::string text;    // "peak 743.06 ± 0.66 nm"
  std::string legend;  // "peak per unit wavelength"
};

// An axis title "quantity (unit)", with a linear axis' common factor before the unit:
// "Flux density (10^-11 W/m2/um)".
struct AxisTitle {
  std::string quantity, unit, note;
};

struct Plot {
  bool photometry = false;
  std::string title, subtitle, description, footer;
  std::string curve_legend = "Planck fit";
  AxisTitle x_label, y_label, residual_label;
  std::string residual_note;
  bool x_log = false, y_log = false;
  std::vector<Point> points;
  std::vector<std::array<double, 2>> excluded_ranges;
  Curve curve;
  std::optional<PeakMark> peak;
  double residual_floor = 3.0;  // smallest half-height of the residual panel
  bool has_errors = true;
};

// The fitted curve and its one-sigma band on kCurvePoints between lo and hi (log-spaced on a log
// axis), in the caller's unit (SI / to_si).
void sample_curve(Curve& curve, double lo, double hi, bool log_axis, const std::function<ModelPoint(double)>& model_at,
                  double to_si) {
  for (int k = 0; k < kCurvePoints; ++k) {
    const double t = static_cast<double>(k) / (kCurvePoints - 1);
    const double x = log_axis ? lo * std::pow(hi / lo, t) : lo + t * (hi - lo);
    const ModelPoint m = model_at(x);
    if (!std::isfinite(m.value)) continue;  // outside an extinction law's range: not drawn
    const double value = m.value / to_si;
    curve.x.push_back(x);
    curve.value.push_back(value);
    curve.lower.push_back(value * std::exp(-m.log_sigma));
    curve.upper.push_back(value * std::exp(m.log_sigma));
  }
}

// ---- drawing -----------------------------------------------------------------------------------

void text_at(XmlWriter& out, double x, double y, const std::string& content, const char* anchor = "start",
             double size = 11.0, const char* fill = kInk) {
  out.open("text").attribute("x", x, 1).attribute("y", y, 1);
  if (std::string_view(anchor) != "start") out.attribute("text-anchor", anchor);
  out.attribute("font-size", size, 1);
  if (std::string_view(fill) != kInk) out.attribute("fill", fill);
  out.text(content).close();
}

void label_text(XmlWriter& out, double x, double y, const Label& label, const char* anchor, double size) {
  out.open("text").attribute("x", x, 1).attribute("y", y, 1).attribute("text-anchor", anchor).attribute("font-size", size, 1);
  out.text(label.text);
  if (label.exponent) {
    out.open("tspan").attribute("dy", -0.45 * size, 1).attribute("font-size", 0.78 * size, 1);
    out.text(display_fixed(*label.exponent, 0)).close();
  }
  out.close();
}

void axis_title(XmlWriter& out, const AxisTitle& title, int offset_exponent, double size) {
  out.text(title.quantity + " (");
  if (offset_exponent != 0) {
    out.text("10");
    out.open("tspan").attribute("dy", -0.4 * size, 1).attribute("font-size", 0.75 * size, 1).text(display_fixed(offset_exponent, 0)).close();
    out.open("tspan").attribute("dy", 0.4 * size, 1).text(" " + title.unit + ")").close();
  } else {
    out.text(title.unit + ")");
  }
  if (!title.note.empty()) out.text(title.note);
}

void line(XmlWriter& out, double x1, double y1, double x2, double y2) {
  out.open("line").attribute("x1", x1).attribute("y1", y1).attribute("x2", x2).attribute("y2", y2).close();
}

// The request's excluded ranges as shaded rectangles across a panel.
void shade_excluded_ranges(XmlWriter& out, const Plot& plot, const Scale& x, const Box& panel, const char* css_class) {
  for (const auto& [lo, hi] : plot.excluded_ranges) {
    const double x0 = std::clamp(x.map(lo), panel.left - 1, panel.right + 1);
    const double x1 = std::clamp(x.map(hi), panel.left - 1, panel.right + 1);
    out.open("rect").attribute("class", css_class).attribute("x", std::min(x0, x1)).attribute("y", panel.top);
    out.attribute("width", std::abs(x1 - x0)).attribute("height", panel.height()).attribute("fill", kExcludedRange).close();
  }
}

void draw_x_axis(XmlWriter& out, const Scale& x, const AxisTitle& label) {
  const Ticks ticks = ticks_for(x, true);
  out.open("g").attribute("class", "axis x").attribute("data-scale", x.log ? "log" : "linear");
  out.open("g").attribute("class", "grid").attribute("stroke", kGrid).attribute("stroke-width", 1.0);
  for (const Tick& t : ticks.ticks) {
    if (!t.major) continue;
    const double px = x.map(t.value);
    line(out, px, kMain.top, px, kMain.bottom);
    line(out, px, kResiduals.top, px, kResiduals.bottom);
  }
  out.close();
  out.open("g").attribute("class", "ticks").attribute("stroke", kInk).attribute("stroke-width", 1.0);
  for (const Tick& t : ticks.ticks) {
    const double px = x.map(t.value);
    const double length = t.major ? 5.0 : 3.0;
    line(out, px, kMain.bottom, px, kMain.bottom + length);
    line(out, px, kResiduals.bottom, px, kResiduals.bottom + length);
  }
  out.close();
  out.open("g").attribute("class", "tick-labels").attribute("fill", kInk);
  for (const Tick& t : ticks.ticks) {
    if (t.major) label_text(out, x.map(t.value), kTickLabelBaseline, t.label, "middle", 11.0);
  }
  out.close();
  out.open("text").attribute("class", "axis-label").attribute("x", 0.5 * (kMain.left + kMain.right), 1);
  out.attribute("y", kAxisLabelBaseline, 1).attribute("text-anchor", "middle").attribute("font-size", 13.0, 1);
  axis_title(out, label, ticks.offset_exponent, 13.0);
  out.close();
  out.close();
}

void draw_y_axis(XmlWriter& out, const Scale& y, const Box& box, const char* name, const AxisTitle& label, double label_size) {
  const Ticks ticks = ticks_for(y, false);
  out.open("g").attribute("class", std::string("axis ") + name).attribute("data-scale", y.log ? "log" : "linear");
  out.open("g").attribute("class", "grid").attribute("stroke", kGrid).attribute("stroke-width", 1.0);
  for (const Tick& t : ticks.ticks) {
    if (t.major) line(out, box.left, y.map(t.value), box.right, y.map(t.value));
  }
  out.close();
  out.open("g").attribute("class", "ticks").attribute("stroke", kInk).attribute("stroke-width", 1.0);
  for (const Tick& t : ticks.ticks) line(out, box.left - (t.major ? 5.0 : 3.0), y.map(t.value), box.left, y.map(t.value));
  out.close();
  out.open("g").attribute("class", "tick-labels").attribute("fill", kInk);
  for (const Tick& t : ticks.ticks) {
    if (t.major) label_text(out, box.left - 8.0, y.map(t.value) + 4.0, t.label, "end", 11.0);
  }
  out.close();
  const double cx = 24.0, cy = 0.5 * (box.top + box.bottom);
  out.open("text").attribute("class", "axis-label").attribute("x", cx, 1).attribute("y", cy, 1);
  out.attribute("text-anchor", "middle").attribute("font-size", label_size, 1);
  out.attribute("transform", "rotate(-90 " + svg::number(cx, 1) + " " + svg::number(cy, 1) + ")");
  axis_title(out, label, ticks.offset_exponent, label_size);
  out.close();
  out.close();
}

void clip_path(XmlWriter& out, const char* id, const Box& box) {
  out.open("clipPath").attribute("id", id);
  out.open("rect").attribute("x", box.left).attribute("y", box.top).attribute("width", box.width()).attribute("height", box.height()).close();
  out.close();
}

void frame(XmlWriter& out, const Box& box) {
  out.open("rect").attribute("class", "frame").attribute("x", box.left).attribute("y", box.top);
  out.attribute("width", box.width()).attribute("height", box.height());
  out.attribute("fill", "none").attribute("stroke", kInk).attribute("stroke-width", 1.0).close();
}

std::string polyline_points(const std::vector<std::array<double, 2>>& points) {
  std::string text;
  for (const auto& [x, y] : points) {
    if (!text.empty()) text += ' ';
    text += svg::number(x) + "," + svg::number(y);
  }
  return text;
}

// Up or down triangle centred at (x, y).
void triangle(PathData& d, double x, double y, double size, bool down) {
  const double h = down ? size : -size;
  d.move_to(x - size, y - 0.6 * h).line_to(x + size, y - 0.6 * h).line_to(x, y + 0.8 * h).close();
}

enum class Swatch { kPoint, kHollowPoint, kLine, kBand, kRange, kDashed, kArrow, kSquare };
struct LegendEntry {
  Swatch swatch;
  std::string text;
};

void draw_swatch(XmlWriter& out, Swatch swatch, double x, double y) {
  switch (swatch) {
    case Swatch::kPoint:
      line(out, x + 12, y - 6, x + 12, y + 6);
      out.open("circle").attribute("cx", x + 12).attribute("cy", y).attribute("r", 3.2).attribute("fill", kData).close();
      break;
    case Swatch::kHollowPoint:
      out.open("circle").attribute("cx", x + 12).attribute("cy", y).attribute("r", 3.2).attribute("fill", "#ffffff");
      out.attribute("stroke", kExcluded).attribute("stroke-width", 1.2).close();
      break;
    case Swatch::kLine:
      out.open("line").attribute("x1", x).attribute("y1", y).attribute("x2", x + 24).attribute("y2", y);
      out.attribute("stroke", kModel).attribute("stroke-width", 2.0).close();
      break;
    case Swatch::kBand:
      out.open("rect").attribute("x", x).attribute("y", y - 5).attribute("width", 24).attribute("height", 10);
      out.attribute("fill", kBand).attribute("fill-opacity", 0.7).close();
      break;
    case Swatch::kRange:
      out.open("rect").attribute("x", x).attribute("y", y - 6).attribute("width", 24).attribute("height", 12);
      out.attribute("fill", kExcludedRange).attribute("stroke", "#cfcfcf").attribute("stroke-width", 0.8).close();
      break;
    case Swatch::kDashed:
      out.open("line").attribute("x1", x).attribute("y1", y).attribute("x2", x + 24).attribute("y2", y);
      out.attribute("stroke", kPeak).attribute("stroke-width", 1.2).attribute("stroke-dasharray", "5 3").close();
      break;
    case Swatch::kArrow: {
      PathData d;
      d.move_to(x + 7, y - 7).line_to(x + 17, y - 7).move_to(x + 12, y - 7).line_to(x + 12, y + 2);
      triangle(d, x + 12, y + 3, 3.5, true);
      out.open("path").attribute("d", d.str()).attribute("fill", kData).attribute("stroke", kData).attribute("stroke-width", 1.4).close();
      break;
    }
    case Swatch::kSquare:
      out.open("rect").attribute("x", x + 8).attribute("y", y - 4).attribute("width", 8).attribute("height", 8);
      out.attribute("fill", "#ffffff").attribute("stroke", kModel).attribute("stroke-width", 1.5).close();
      break;
  }
}

// The legend along the top or bottom edge of the main panel where it covers the fewest drawn
// points; ties go to the top, then to the right.
void draw_legend(XmlWriter& out, const std::vector<LegendEntry>& entries, const std::vector<std::array<double, 2>>& occupied) {
  if (entries.empty()) return;
  std::size_t longest = 0;
  for (const auto& e : entries) {
    // Characters, not bytes: UTF-8 continuation bytes do not count.
    const auto chars = static_cast<std::size_t>(std::count_if(e.text.begin(), e.text.end(), [](char c) {
      return (static_cast<unsigned char>(c) & 0xC0) != 0x80;
    }));
    longest = std::max(longest, chars);
  }
  const double width = 44.0 + 6.4 * static_cast<double>(longest);
  const double height = 10.0 + 18.0 * static_cast<double>(entries.size());
  const double inset = 10.0;
  std::vector<std::array<double, 2>> places;
  for (const double top : {kMain.top + inset, kMain.bottom - inset - height}) {
    for (double left = kMain.right - inset - width; left >= kMain.left + inset - 1e-9; left -= 20.0) places.push_back({left, top});
    places.push_back({kMain.left + inset, top});
  }
  std::size_t best = 0, best_count = std::numeric_limits<std::size_t>::max();
  for (std::size_t c = 0; c < places.size(); ++c) {
    // Plain names, not a structured binding: clang before 16 cannot capture one in a lambda.
    const double x0 = places[c][0], y0 = places[c][1];
    const auto count = static_cast<std::size_t>(std::count_if(occupied.begin(), occupied.end(), [&](const auto& p) {
      return p[0] >= x0 - 4 && p[0] <= x0 + width + 4 && p[1] >= y0 - 4 && p[1] <= y0 + height + 4;
    }));
    if (count < best_count) {
      best = c;
      best_count = count;
    }
  }
  const auto [x0, y0] = places[best];
  out.open("g").attribute("class", "legend");
  out.open("rect").attribute("x", x0).attribute("y", y0).attribute("width", width).attribute("height", height);
  out.attribute("rx", 3.0).attribute("fill", "#ffffff").attribute("fill-opacity", 0.9).attribute("stroke", "#c8c8c8").close();
  for (std::size_t i = 0; i < entries.size(); ++i) {
    const double y = y0 + 14.0 + 18.0 * static_cast<double>(i);
    out.open("g").attribute("stroke", kErrorBar).attribute("stroke-width", 1.0);
    draw_swatch(out, entries[i].swatch, x0 + 8.0, y);
    out.close();
    text_at(out, x0 + 38.0, y + 4.0, entries[i].text, "start", 12.0);
  }
  out.close();
}

// The robust half-height of the residual panel: at least the floor, at most twice the 95th
// percentile of |r| (so that one spike does not flatten the rest; it is drawn at the edge).
double residual_half_height(const std::vector<Point>& points, double floor) {
  std::vector<double> magnitudes;
  for (const Point& p : points) {
    if (std::isfinite(p.residual)) magnitudes.push_back(std::abs(p.residual));
  }
  if (magnitudes.empty()) return floor;
  std::sort(magnitudes.begin(), magnitudes.end());
  const double largest = magnitudes.back();
  const double p95 = magnitudes[static_cast<std::size_t>(0.95 * static_cast<double>(magnitudes.size() - 1))];
  return std::max(floor, std::min(1.1 * largest, 2.0 * p95 > 0.0 ? 2.0 * p95 : 1.1 * largest));
}

std::string render(const Plot& plot) {
  // Scales.
  Range x_range, y_range;
  for (const Point& p : plot.points) {
    x_range.add(p.x, plot.x_log);
    x_range.add(p.x_lo, plot.x_log);
    x_range.add(p.x_hi, plot.x_log);
    y_range.add(p.y, plot.y_log);
    y_range.add(p.y_lo, plot.y_log);
    y_range.add(p.y_hi, plot.y_log);
    y_range.add(p.model, plot.y_log);
    if (p.upper_limit) y_range.add(p.y * 0.45, plot.y_log);
  }
  const Scale x = make_scale(x_range, plot.x_log, plot.x_log ? 0.04 : 0.02, kMain.left, kMain.right);
  for (std::size_t i = 0; i < plot.curve.x.size(); ++i) {
    if (!x.contains(plot.curve.x[i])) continue;
    y_range.add(plot.curve.lower[i], plot.y_log);
    y_range.add(plot.curve.upper[i], plot.y_log);
  }
  const Scale y = make_scale(y_range, plot.y_log, plot.y_log ? 0.06 : 0.05, kMain.bottom, kMain.top, !plot.photometry);
  const double half = residual_half_height(plot.points, plot.residual_floor);
  const Scale r = make_scale(Range{-half, half}, false, 0.08, kResiduals.bottom, kResiduals.top);

  const std::size_t n = plot.points.size();
  const double radius = plot.photometry ? 4.0 : n > 300 ? 1.5 : n > 100 ? 2.2 : 3.2;
  const double bar_width = plot.photometry ? 1.4 : n > 300 ? 0.7 : 1.0;
  const char* bar_colour = plot.photometry ? kData : kErrorBar;

  XmlWriter out;
  out.open("svg").attribute("xmlns", svg::kNamespace).attribute("version", "1.1");
  out.attribute("width", kWidth).attribute("height", kHeight).attribute("viewBox", "0 0 800 600");
  out.attribute("role", "img").attribute("aria-labelledby", "plot-title plot-desc");
  out.attribute("font-family", kFont);
  out.open("title").attribute("id", "plot-title").text(plot.title).close();
  out.open("desc").attribute("id", "plot-desc").text(plot.description).close();
  out.open("defs");
  clip_path(out, "clip-main", kMain);
  clip_path(out, "clip-residuals", kResiduals);
  out.close();
  out.open("rect").attribute("class", "background").attribute("width", kWidth).attribute("height", kHeight).attribute("fill", "#ffffff").close();

  // Title lines.
  out.open("text").attribute("class", "title").attribute("x", kMain.left, 1).attribute("y", 26.0, 1);
  out.attribute("font-size", 16.0, 1).attribute("font-weight", "bold").text(plot.title).close();
  text_at(out, kMain.left, 46.0, plot.subtitle, "start", 12.0, kMuted);

  // Axes and grids (under the data).
  draw_x_axis(out, x, plot.x_label);
  draw_y_axis(out, y, kMain, "y", plot.y_label, 13.0);
  draw_y_axis(out, r, kResiduals, "residual", plot.residual_label, 11.0);

  std::vector<std::array<double, 2>> occupied;  // pixels covered, for the legend's place

  // ---- main panel
  out.open("g").attribute("class", "panel main").attribute("clip-path", "url(#clip-main)");
  shade_excluded_ranges(out, plot, x, kMain, "excluded-range");
  std::vector<std::array<double, 2>> model_line, band_upper, band_lower;
  for (std::size_t i = 0; i < plot.curve.x.size(); ++i) {
    const double px = x.map(plot.curve.x[i]);
    model_line.push_back({px, y.map(plot.curve.value[i])});
    band_upper.push_back({px, y.map(plot.curve.upper[i])});
    band_lower.push_back({px, y.map(plot.curve.lower[i])});
  }
  std::vector<std::array<double, 2>> band_polygon = band_upper;
  band_polygon.insert(band_polygon.end(), band_lower.rbegin(), band_lower.rend());
  out.open("polygon").attribute("class", "model-band").attribute("points", polyline_points(band_polygon));
  out.attribute("fill", kBand).attribute("fill-opacity", 0.7).attribute("stroke", "none").close();

  // Error bars and band widths, one path each.
  PathData errors, widths;
  for (const Point& p : plot.points) {
    const double px = x.map(p.x), py = y.map(p.y);
    if (std::isfinite(p.y_lo) && std::isfinite(p.y_hi) && !p.upper_limit) {
      const double lo = plot.y_log && !(p.y_lo > 0.0) ? kMain.bottom + 2 : y.map(p.y_lo);
      errors.move_to(px, lo).line_to(px, y.map(p.y_hi));
    }
    if (std::isfinite(p.x_lo) && std::isfinite(p.x_hi)) {
      widths.move_to(x.map(p.x_lo), py).line_to(x.map(p.x_hi), py);
      for (double bx = x.map(p.x_lo); bx < x.map(p.x_hi); bx += 8.0) occupied.push_back({bx, py});
    }
  }
  if (!widths.empty()) {
    out.open("path").attribute("class", "band-width").attribute("d", widths.str());
    out.attribute("stroke", kErrorBar).attribute("stroke-width", 2.2).attribute("fill", "none").close();
  }
  if (!errors.empty()) {
    out.open("path").attribute("class", "error-bars").attribute("d", errors.str());
    out.attribute("stroke", bar_colour).attribute("stroke-width", bar_width).attribute("fill", "none").close();
  }

  // The points: filled, hollow when excluded, arrows for upper limits.
  out.open("g").attribute("class", "data");
  for (const Point& p : plot.points) {
    const double px = x.map(p.x), py = y.map(p.y);
    occupied.push_back({px, py});
    if (p.upper_limit) {
      PathData d;
      d.move_to(px - 6, py).line_to(px + 6, py).move_to(px, py).line_to(px, py + 24);
      triangle(d, px, py + 26, 4.5, true);
      out.open("path").attribute("class", "upper-limit");
      if (!p.id.empty()) out.attribute("data-band", p.id);
      out.attribute("d", d.str()).attribute("fill", kData).attribute("stroke", kData).attribute("stroke-width", 1.6).close();
      continue;
    }
    out.open("circle").attribute("class", p.excluded ? "point excluded" : "point");
    if (!p.id.empty()) out.attribute("data-band", p.id);
    out.attribute("cx", px).attribute("cy", py).attribute("r", radius);
    if (p.excluded) {
      out.attribute("fill", "#ffffff").attribute("stroke", kExcluded).attribute("stroke-width", 0.8);
    } else {
      out.attribute("fill", kData);
    }
    out.close();
  }
  out.close();

  // The model's value in each band.
  bool model_values = false;
  for (const Point& p : plot.points) {
    if (!std::isfinite(p.model)) continue;
    model_values = true;
    const double px = x.map(p.x), py = y.map(p.model);
    occupied.push_back({px, py});
    out.open("rect").attribute("class", "model-value");
    if (!p.id.empty()) out.attribute("data-band", p.id);
    out.attribute("x", px - 4.5).attribute("y", py - 4.5).attribute("width", 9.0).attribute("height", 9.0);
    out.attribute("fill", "none").attribute("stroke", kModel).attribute("stroke-width", 1.5).close();
  }

  // The model curve, on top of the points.
  PathData model;
  for (std::size_t i = 0; i < model_line.size(); ++i) {
    const auto [px, py] = model_line[i];
    if (i == 0) model.move_to(px, py); else model.line_to(px, py);
    occupied.push_back({px, py});
  }
  out.open("path").attribute("class", "model").attribute("d", model.str());
  out.attribute("fill", "none").attribute("stroke", kModel).attribute("stroke-width", 2.0).attribute("stroke-linejoin", "round").close();
  out.close();  // panel main

  // The peak (outside the clip, so that its label can sit at the edge).
  bool peak_drawn = false;
  if (plot.peak) {
    out.open("g").attribute("class", "peak");
    const double label_y = kMain.bottom - 10.0;
    if (x.contains(plot.peak->x)) {
      const double px = x.map(plot.peak->x);
      out.open("line").attribute("x1", px).attribute("y1", kMain.top).attribute("x2", px).attribute("y2", kMain.bottom);
      out.attribute("stroke", kPeak).attribute("stroke-width", 1.2).attribute("stroke-dasharray", "5 3").close();
      // The label runs up along the line, on its left (on its right near the left edge).
      const double baseline = px - kMain.left < 24.0 ? px + 14.0 : px - 5.0;
      const double bottom = kMain.bottom - 8.0;
      out.open("text").attribute("x", baseline, 1).attribute("y", bottom, 1);
      out.attribute("transform", "rotate(-90 " + svg::number(baseline, 1) + " " + svg::number(bottom, 1) + ")");
      out.attribute("font-size", 12.0, 1).attribute("fill", kPeak);
      out.attribute("stroke", "#ffffff").attribute("stroke-width", 3.0).attribute("paint-order", "stroke");
      out.text(plot.peak->text).close();
      for (double ly = kMain.top; ly <= kMain.bottom; ly += 8.0) occupied.push_back({px, ly});
      const double label_length = 7.0 * static_cast<double>(plot.peak->text.size());
      for (double l = 0.0; l <= label_length; l += 8.0) occupied.push_back({baseline - 4.0, bottom - l});
      peak_drawn = true;
    } else {
      const bool below = plot.peak->x < x.lo;
      const double px = below ? kMain.left + 8.0 : kMain.right - 8.0;
      out.open("text").attribute("x", px, 1).attribute("y", label_y, 1);
      if (!below) out.attribute("text-anchor", "end");
      out.attribute("font-size", 12.0, 1).attribute("fill", kPeak);
      out.attribute("stroke", "#ffffff").attribute("stroke-width", 3.0).attribute("paint-order", "stroke");
      out.text(below ? "\u2190 " + plot.peak->text + " (beyond the data)" : plot.peak->text + " (beyond the data) \u2192").close();
    }
    out.close();
  }
  frame(out, kMain);

  // ---- residual panel
  out.open("g").attribute("class", "panel residuals").attribute("clip-path", "url(#clip-residuals)");
  shade_excluded_ranges(out, plot, x, kResiduals, "excluded-range-residuals");
  out.open("line").attribute("class", "zero").attribute("x1", kResiduals.left).attribute("y1", r.map(0.0));
  out.attribute("x2", kResiduals.right).attribute("y2", r.map(0.0)).attribute("stroke", kModel).attribute("stroke-width", 1.2).close();
  PathData beyond, beyond_excluded, limits;
  for (const Point& p : plot.points) {
    if (!std::isfinite(p.residual)) continue;
    const double px = x.map(p.x);
    if (p.upper_limit) {
      triangle(limits, px, r.map(std::clamp(p.residual, r.lo, r.hi)), 4.5, true);
      continue;
    }
    if (!r.contains(p.residual)) {
      triangle(p.excluded ? beyond_excluded : beyond, px, p.residual > 0 ? kResiduals.top + 5.0 : kResiduals.bottom - 5.0, 3.5,
               p.residual < 0);
      continue;
    }
    out.open("circle").attribute("class", p.excluded ? "residual excluded" : "residual");
    out.attribute("cx", px).attribute("cy", r.map(p.residual)).attribute("r", std::min(radius, 3.2));
    if (p.excluded) {
      out.attribute("fill", "#ffffff").attribute("stroke", kExcluded).attribute("stroke-width", 0.8);
    } else {
      out.attribute("fill", kData);
    }
    out.close();
  }
  if (!beyond.empty()) {
    out.open("path").attribute("class", "residual beyond").attribute("d", beyond.str()).attribute("fill", kData).close();
  }
  if (!beyond_excluded.empty()) {
    out.open("path").attribute("class", "residual beyond excluded").attribute("d", beyond_excluded.str());
    out.attribute("fill", "#ffffff").attribute("stroke", kExcluded).attribute("stroke-width", 0.8).close();
  }
  if (!limits.empty()) {
    out.open("path").attribute("class", "residual upper-limit-residual").attribute("d", limits.str());
    out.attribute("fill", "#ffffff").attribute("stroke", kData).attribute("stroke-width", 1.3).close();
  }
  out.close();
  out.open("text").attribute("class", "residual-note").attribute("x", kResiduals.left + 6.0, 1).attribute("y", kResiduals.top + 13.0, 1);
  out.attribute("font-size", 10.5, 1).attribute("fill", kMuted).attribute("stroke", "#ffffff").attribute("stroke-width", 3.0);
  out.attribute("paint-order", "stroke").text(plot.residual_note).close();
  frame(out, kResiduals);

  // ---- legend and footer
  std::vector<LegendEntry> legend;
  const bool any_limit = std::any_of(plot.points.begin(), plot.points.end(), [](const Point& p) { return p.upper_limit; });
  const bool any_excluded = std::any_of(plot.points.begin(), plot.points.end(), [](const Point& p) { return p.excluded; });
  if (plot.photometry) {
    legend.push_back({Swatch::kPoint, plot.has_errors ? "measured \u00B1 1\u03C3, bar: band width" : "measured, bar: band width"});
    if (any_limit) legend.push_back({Swatch::kArrow, "upper limit"});
    if (model_values) legend.push_back({Swatch::kSquare, "model in each band"});
  } else {
    legend.push_back({Swatch::kPoint, plot.has_errors ? "data \u00B1 1\u03C3" : "data (no errors given)"});
    if (any_excluded) legend.push_back({Swatch::kHollowPoint, "excluded points (not fitted)"});
    if (!plot.excluded_ranges.empty()) legend.push_back({Swatch::kRange, "excluded ranges"});
  }
  legend.push_back({Swatch::kLine, plot.curve_legend});
  legend.push_back({Swatch::kBand, "fit \u00B1 1\u03C3"});
  if (peak_drawn) legend.push_back({Swatch::kDashed, plot.peak->legend});
  draw_legend(out, legend, occupied);
  text_at(out, kWidth - 10.0, kHeight - 8.0, plot.footer, "end", 10.0, kMuted);
  out.close();  // svg
  return out.finish();
}

// ---- from the outcome to what is drawn -------------------------------------------------------

struct Headline {
  std::string title, temperature_text, curve, legend;
};

// "T = 5772 ± 12 K" of a temperature parameter of the response.
std::string temperature_text(const json& response, const std::string& name, const char* symbol) {
  const json::json_pointer t("/parameters/" + name);
  const double value = number_at(response, t / "value").value_or(0.0);
  return std::string(symbol) + " = " + with_error(value, number_at(response, t / "error")) + " K";
}

Headline headline(const json& response) {
  const std::string model = response.contains("model") && response["model"].is_string() ? response["model"].get<std::string>() : "planck";
  const char* what = model == "diluted_planck"        ? "Diluted Planck fit"
                     : model == "modified_black_body" ? "Modified black-body fit"
                     : model == "two_temperature"     ? "Two-temperature fit"
                                                      : "Planck fit";
  Headline out;
  out.curve = model == "planck" ? "the fitted Planck curve" : "the fitted model";
  out.legend = model == "planck" ? "Planck fit" : "model fit";
  if (model == "two_temperature") {
    out.temperature_text = temperature_text(response, "temperature_1", "T\u2081") + ", " +
                           temperature_text(response, "temperature_2", "T\u2082");
    out.title = std::string(what) + ": " + out.temperature_text;
    return out;
  }
  const json::json_pointer t("/parameters/temperature");
  const std::optional<double> error = number_at(response, t / "error");
  const std::optional<double> lo = number_at(response, t / "interval_68" / 0);
  const std::optional<double> hi = number_at(response, t / "interval_68" / 1);
  out.temperature_text = temperature_text(response, "temperature", "T");
  out.title = std::string(what) + ": " + out.temperature_text;
  if (lo && hi) {
    const int decimals = decimals_for(error.value_or(0.0));
    out.title += "  (68 %: " + display_fixed(*lo, decimals) + " \u2013 " + display_fixed(*hi, decimals) + " K)";
  } else {
    out.title += "  (no interval: the covariance is not available)";
  }
  return out;
}

std::string goodness(const json& response) {
  const json::json_pointer s("/statistics");
  const std::optional<double> chi2 = number_at(response, s / "chi_square");
  const std::optional<double> dof = number_at(response, s / "degrees_of_freedom");
  const std::optional<double> p = number_at(response, s / "p_value");
  std::string text;
  if (chi2 && dof) {
    text = "\u03C7\u00B2 = " + display_fixed(*chi2, *chi2 >= 100 ? 1 : 2) + " for " + display_fixed(*dof, 0) + " degrees of freedom";
    if (p) text += *p < 1e-4 ? std::string(", p < 0.0001") : ", p = " + display_fixed(*p, *p < 0.01 ? 4 : 2);
  } else {
    text = "no errors given: the errors were estimated from the scatter";
  }
  if (response.value("status", std::string()) != "converged") {
    text += " \u00B7 not converged (" + response.value("/solver/termination"_json_pointer, std::string("?")) + ")";
  }
  return text;
}

std::string footer(const json& response) {
  const std::string model = response.value("model", std::string("planck"));
  return "planckton " + response.value("/provenance/version"_json_pointer, std::string("?")) + " \u00B7 model: " +
         (model == "planck" ? std::string("scale \u00D7 Planck's law") : model) +
         (response.contains("extinction") ? " with " + response.value("/extinction/law"_json_pointer, std::string("")) + " extinction" : "") +
         ", " + response.value("/provenance/constants"_json_pointer, std::string("")) + " constants";
}

// The peak of the data's convention, as the response reports it, converted by to_axis (Hz -> the
// axis coordinate).
template <typename ToAxis>
std::optional<PeakMark> peak_mark(const json& response, const std::string& axis_unit, ToAxis to_axis) {
  const json& peaks = response.contains("peaks") ? response["peaks"] : json();
  if (!peaks.is_object() || !peaks.contains("of_data") || !peaks["of_data"].is_string()) return std::nullopt;
  const std::string id = peaks["of_data"].get<std::string>();
  if (!peaks.contains(id) || !peaks[id].is_object()) return std::nullopt;
  const json& peak = peaks[id];
  const std::optional<double> value = number_at(peak, json::json_pointer("/value"));
  if (!value || !(*value > 0.0)) return std::nullopt;
  const std::optional<double> error = number_at(peak, json::json_pointer("/error"));
  const std::optional<double> frequency = peak.value("unit", std::string()) == "Hz" ? value : number_at(peak, json::json_pointer("/frequency"));
  if (!frequency || !(*frequency > 0.0)) return std::nullopt;
  PeakMark mark;
  mark.x = to_axis(*frequency);
  std::optional<double> axis_error;
  if (error) axis_error = mark.x * (*error / *value);  // the same relative error on any axis
  mark.text = "peak " + with_error(mark.x, axis_error) + " " + axis_unit;
  static const std::vector<std::pair<std::string, std::string>> kNames = {
      {"frequency", "peak per unit frequency"}, {"wavelength", "peak per unit wavelength"},
      {"log_interval", "peak of \u03BD F\u03BD"}, {"photon_frequency", "photon peak per unit frequency"},
      {"photon_wavelength", "photon peak per unit wavelength"}};
  mark.legend = "peak";
  for (const auto& [key, name] : kNames) {
    if (key == id) mark.legend = name;
  }
  return mark;
}

std::string axis_quantity(SpectralAxisKind kind) {
  switch (kind) {
    case SpectralAxisKind::kWavelength: return "Wavelength";
    case SpectralAxisKind::kFrequency: return "Frequency";
    case SpectralAxisKind::kWavenumber: return "Wavenumber";
    case SpectralAxisKind::kPhotonEnergy: return "Photon energy";
  }
  return "x";
}

std::string flux_quantity(const FluxDensityUnit& unit) {
  const bool photons = unit.convention == Convention::kPhotonsPerFrequency || unit.convention == Convention::kPhotonsPerWavelength ||
                       unit.convention == Convention::kPhotonsPerWavenumber || unit.convention == Convention::kPhotonsPerPhotonEnergy;
  if (unit.relative) return "Relative spectral density";
  if (unit.per_steradian) return photons ? "Photon radiance" : "Intensity";
  return photons ? "Photon flux density" : "Flux density";
}

bool spans_decades(const Range& range) { return !range.empty() && range.lo > 0.0 && range.hi / range.lo > std::pow(10.0, kLogAxisDecades); }

Plot spectrum_plot(const FitOutcome& outcome) {
  const SpectrumInput& input = outcome.request.spectrum;
  const SpectralAxisUnit& x_unit = outcome.spectrum->x_unit;
  const FluxDensityUnit& unit = outcome.unit;
  const Convention convention = unit.convention;
  const bool has_errors = !input.y_error.empty();
  const auto model_at = [&](double x) { return outcome_curve(outcome, convention, to_frequency(x_unit, x)); };

  Plot plot;
  plot.has_errors = has_errors;
  plot.excluded_ranges = input.exclude;
  Range xs, ys;
  bool all_positive = true;
  std::size_t excluded = 0;
  for (std::size_t i = 0; i < input.x.size(); ++i) {
    Point p;
    p.x = input.x[i];
    p.y = input.y[i];
    p.excluded = std::any_of(input.exclude.begin(), input.exclude.end(), [&](const auto& r) { return p.x >= r[0] && p.x <= r[1]; });
    excluded += p.excluded ? 1 : 0;
    const double model = model_at(p.x).value / unit.to_si;
    if (has_errors) {
      p.y_lo = p.y - input.y_error[i];
      p.y_hi = p.y + input.y_error[i];
      p.residual = (p.y - model) / input.y_error[i];
    } else {
      p.residual = model != 0.0 ? 100.0 * (p.y - model) / model : kNaN;
    }
    xs.add(p.x);
    ys.add(p.y);
    all_positive = all_positive && p.y > 0.0;
    plot.points.push_back(std::move(p));
  }
  plot.x_log = spans_decades(xs);
  plot.y_log = all_positive && spans_decades(ys);

  // The model on a fine grid over the data range (log-spaced on a log axis).
  if (!xs.empty()) sample_curve(plot.curve, xs.lo, xs.hi, plot.x_log, model_at, unit.to_si);

  const Headline head = headline(outcome.response);
  plot.title = head.title;
  plot.curve_legend = head.legend;
  plot.subtitle = plural(input.x.size(), "point", "points") + " (" + std::to_string(excluded) + " excluded) \u00B7 " + goodness(outcome.response);
  plot.footer = footer(outcome.response);
  plot.x_label = {axis_quantity(x_unit.kind), x_unit.text, ""};
  plot.y_label = {flux_quantity(unit), unit.text, ""};
  plot.residual_label = {"residual", has_errors ? "\u03C3" : "%", ""};
  plot.residual_note = has_errors ? "(y \u2212 model) / y_error" : "(y \u2212 model) / model, in % (no y_error given)";
  plot.residual_floor = has_errors ? 3.0 : 1.0;
  plot.peak = peak_mark(outcome.response, x_unit.text, [&](double nu) { return from_frequency(x_unit, nu); });
  plot.description = "Measured spectrum of " + plural(input.x.size(), "point", "points") + " (" + unit.text + " against " +
                     x_unit.text + (has_errors ? ", with one-sigma error bars" : ", without errors") + ")" +
                     (excluded > 0 ? "; " + plural(excluded, "point", "points") + " inside the excluded ranges drawn hollow and grey, the ranges shaded" : "") +
                     "; " + head.curve + ", " + head.temperature_text + ", in the data's convention (" +
                     std::string(convention_name(convention)) + ") with its linearised one-sigma band" +
                     (plot.peak ? "; its " + plot.peak->legend + " at " + plot.peak->text.substr(5) + " marked" : "") +
                     ". Lower panel: residuals, " + plot.residual_note + ". Axes: x " + (plot.x_log ? "logarithmic" : "linear") +
                     ", y " + (plot.y_log ? "logarithmic" : "linear") + ".";
  return plot;
}

Plot photometry_plot(const FitOutcome& outcome) {
  const MeasuredPhotometry& data = *outcome.photometry;
  const PhotometryFitResult& result = *outcome.photometry_fit;
  const FluxDensityUnit& unit = outcome.unit;
  const json& bands = outcome.response.contains("bands") ? outcome.response["bands"] : json::array();
  constexpr double kMicrometre = 1e-6;
  const auto flux = [&](const BandMeasurement& m, double v) { return m.to_quoted_f_nu(v) / unit.to_si; };

  Plot plot;
  plot.photometry = true;
  plot.x_log = true;
  plot.y_log = true;
  plot.has_errors = data.has_errors;
  for (std::size_t b = 0; b < data.bands.size(); ++b) {
    const BandMeasurement& m = data.bands[b];
    Point p;
    p.id = m.band->id;
    const std::optional<double> pivot_nm = b < bands.size() ? number_at(bands[b], json::json_pointer("/pivot_wavelength_nm")) : std::nullopt;
    p.x = pivot_nm ? *pivot_nm * 1e-9 / kMicrometre : m.quadrature.pivot_wavelength_m / kMicrometre;
    const double width = effective_width(*m.band) / kMicrometre;
    p.x_lo = std::max(p.x - 0.5 * width, 0.02 * p.x);
    p.x_hi = p.x + 0.5 * width;
    p.upper_limit = m.upper_limit;
    p.y = flux(m, m.value);
    if (m.error > 0.0 && !m.upper_limit) {
      if (m.scale == MeasurementScale::kFluxDensity) {
        p.y_lo = flux(m, m.value - m.error);
        p.y_hi = flux(m, m.value + m.error);
      } else {  // brighter is a smaller magnitude
        p.y_lo = flux(m, m.value + m.error);
        p.y_hi = flux(m, m.value - m.error);
      }
    }
    p.model = flux(m, result.bands[b].model);
    p.residual = result.bands[b].residual;
    plot.points.push_back(std::move(p));
  }

  Range xs;
  for (const Point& p : plot.points) {
    xs.add(p.x_lo, true);
    xs.add(p.x_hi, true);
  }
  if (!xs.empty()) {
    const auto model_at = [&](double lambda_um) {
      return outcome_curve(outcome, Convention::kEnergyPerFrequency, constants::kSpeedOfLight / (lambda_um * kMicrometre));
    };
    // The curve reaches a little beyond the bands.
    sample_curve(plot.curve, xs.lo / 1.15, xs.hi * 1.15, true, model_at, unit.to_si);
  }

  const Headline head = headline(outcome.response);
  plot.title = head.title;
  plot.curve_legend = head.legend;
  plot.subtitle = "band photometry, " + plural(data.bands.size(), "band", "bands") + " (" + plural(data.upper_limits, "upper limit", "upper limits") + ") \u00B7 " +
                  goodness(outcome.response);
  plot.footer = footer(outcome.response);
  plot.x_label = {"Wavelength", "\u00B5m", ", at each band's pivot wavelength"};
  plot.y_label = {std::string(unit.per_steradian ? "Intensity" : "Flux density") + " F\u03BD", unit.text, ""};
  plot.residual_label = {"residual", "\u03C3", ""};
  plot.residual_note = "(measured \u2212 model) / \u03C3" + std::string(data.upper_limits > 0 ? "; limits: censored residual (open triangles)" : "");
  plot.residual_floor = 3.0;
  plot.peak = peak_mark(outcome.response, "\u00B5m", [](double nu) { return constants::kSpeedOfLight / nu / kMicrometre; });
  std::string band_list;
  for (const Point& p : plot.points) band_list += (band_list.empty() ? "" : ", ") + p.id;
  plot.description = "Band photometry, " + plural(data.bands.size(), "band", "bands") + " (" + band_list + "), as quoted F_nu in " + unit.text +
                     " at each band's pivot wavelength, with horizontal bars for the effective widths and one-sigma error bars" +
                     (data.upper_limits > 0 ? "; upper limits drawn as downward arrows" : "") +
                     "; " + head.curve + (head.curve == "the fitted Planck curve" ? " scale \u00D7 B_nu" : "") + ", " + head.temperature_text +
                     ", with its linearised one-sigma band, and the model's value in each band as open squares" +
                     (plot.peak ? "; its " + plot.peak->legend + " at " + plot.peak->text.substr(5) + " marked" : "") +
                     ". Lower panel: residuals, " + plot.residual_note + ". Axes: logarithmic.";
  return plot;
}

}  // namespace

std::string fit_svg(const FitOutcome& outcome) {
  return render(outcome.photometry ? photometry_plot(outcome) : spectrum_plot(outcome));
}

}  // namespace planckton::api
