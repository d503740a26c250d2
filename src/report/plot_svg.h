// Private SVG plumbing for the charts: the document, scales, axes, legend and layout.
#pragma once

#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace credence::report {

// The chart look (our own): warm off-white ground, dark warm ink, thin slate axes.
inline constexpr std::string_view kGround = "#fbf8f1";
inline constexpr std::string_view kInk = "#2b2a28";
inline constexpr std::string_view kMuted = "#6b665c";
inline constexpr std::string_view kAxis = "#7a7468";
inline constexpr std::string_view kGrid = "#e7e0d2";
inline constexpr std::string_view kFontStack =
    "system-ui, -apple-system, 'Segoe UI', 'Noto Sans', 'DejaVu Sans', sans-serif";

// One text scale for every chart: titles, then labels (axis titles, legend, notes), then
// tick labels and small annotations. In a page every chart is drawn at its own size (never
// stretched), so these are the sizes the reader sees.
inline constexpr double kTitleSize = 14;
inline constexpr double kLabelSize = 12;
inline constexpr double kTickSize = 11;

/// Rough width in pixels of `text` at `size` px in a sans-serif face (layout only).
double text_width(std::string_view text, double size);

/// A number for an SVG coordinate: two decimals, no "-0.00".
std::string coord(double value);

/// An SVG document under construction. `body` is appended to freely; finish() wraps it.
class SvgDocument {
 public:
  SvgDocument(int width, int height, std::string_view title);
  std::string& body() { return body_; }
  /// Text at (x, y); anchor is "start", "middle" or "end"; `extra` is raw attributes.
  void text(double x, double y, std::string_view content, std::string_view anchor = "start",
            double size = kLabelSize, std::string_view colour = kInk, std::string_view extra = {});
  void line(double x1, double y1, double x2, double y2, std::string_view colour,
            double width = 1, std::string_view extra = {});
  /// The finished document. A clip-path id placeholder "@CLIP@" in the body becomes an
  /// id derived from the content, so several charts inlined in one page never collide.
  std::string finish() const;

 private:
  int width_;
  int height_;
  std::string title_;
  std::string body_;
};

/// A linear or log10 map from data to pixels.
struct Scale {
  double d0 = 0, d1 = 1;  // data domain
  double p0 = 0, p1 = 1;  // pixel range
  bool log = false;
  double operator()(double v) const;
};

/// The plot area in pixels.
struct Area {
  double left = 0, top = 0, right = 0, bottom = 0;
  double width() const { return right - left; }
  double height() const { return bottom - top; }
};

/// How a legend entry's swatch is drawn.
enum class Swatch { kLine, kBox, kTick, kCross };

struct LegendEntry {
  std::string label;
  std::string_view colour;
  Swatch swatch = Swatch::kLine;
  int series = 0;  // line dash index
};

/// The dash pattern of line series i ("" for solid): the first four are solid.
std::string_view series_dash(int i);
/// The palette colour of series i.
std::string_view series_colour(int i);

/// Draws the title and the legend rows from the top of a chart of `width`; returns the
/// y where the plot may start.
double draw_header(SvgDocument& doc, std::string_view title,
                   const std::vector<LegendEntry>& legend, int width);

/// Ticks and their labels for one axis, with the domain they span.
struct AxisTicks {
  std::vector<double> values;
  std::vector<std::string> labels;
  double lo = 0, hi = 1;  // domain to draw (the outer ticks when the range is automatic)
};

/// Ticks for data in [lo, hi] (finite, lo <= hi) or the fixed bounds where not NaN.
AxisTicks linear_axis(double lo, double hi, double fixed_lo, double fixed_hi, int target);
/// Decade ticks for positive data in [lo, hi], or fixed bounds where not NaN.
AxisTicks log_axis(double lo, double hi, double fixed_lo, double fixed_hi);

/// Widest tick label in pixels at the tick font size.
double widest_label(const AxisTicks& ticks);

/// Grid lines, the axis line, tick marks and labels, and the axis title.
void draw_x_axis(SvgDocument& doc, const Area& area, const Scale& x, const AxisTicks& ticks,
                 std::string_view label, bool grid);
void draw_y_axis(SvgDocument& doc, const Area& area, const Scale& y, const AxisTicks& ticks,
                 std::string_view label, bool grid, double label_x);

/// Finished SVG documents (as SvgDocument::finish returns them, of the given sizes) as
/// panels of one document: `columns` per row, under `title`.
std::string compose_panels(const std::vector<std::string>& panels,
                           const std::vector<std::pair<int, int>>& sizes, std::string_view title,
                           int columns);

/// A "no data" mark in the middle of the area.
void draw_no_data(SvgDocument& doc, const Area& area);

}  // namespace credence::report
