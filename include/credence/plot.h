// plot: credence's own small SVG charts for reports (reliability diagrams, line charts,
// histograms), each returned as one SVG document in a std::string.
//
// A chart is described by a plain struct and drawn by one pure function, so every call is
// safe from several threads at once. The SVG is a standalone document (it carries the SVG
// namespace and a viewBox, so a browser opens it as a file) that HtmlReport::figure() also
// inlines into a page. Every piece of text (titles, axis labels, series names, which come
// from user data such as class or column names) is escaped; non-finite values are skipped
// without breaking a path; an empty chart still draws its frame with a "no data" mark.
//
//   LineChart chart;
//   chart.title = "NLL against step size";
//   chart.x_label = "step size";  chart.log_x = true;  chart.markers = true;
//   chart.series.push_back({"sghmc", steps, nll_sghmc});
//   std::string svg = render_line_chart(chart);
//
// The look is our own: a warm off-white ground, thin slate axes, a light grid, the legend
// in a row above the plot, one text scale for every chart, and series colours from
// plot_palette(), whose first five stay apart for readers with red-green colour
// blindness (checked under simulated deuteranopia and protanopia); line series beyond the
// fourth are also dashed. Several methods or chains are drawn as small multiples (one
// panel each, same axes) rather than piled on one plot.
#pragma once

#include <cstddef>
#include <limits>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

#include "credence/metrics.h"

namespace credence {

/// An axis bound to take from the data.
inline constexpr double kAutoRange = std::numeric_limits<double>::quiet_NaN();

/// Outer size of a chart in CSS pixels (the SVG scales with its container in a page).
struct PlotFrame {
  int width = 500;   // total width with margins, at least 200; two fit side by side in a page
  int height = 380;  // total height including title, legend and axis labels; at least 160
};

/// One named series of (x, y) points, drawn in the order given. Points whose x or y is
/// NaN or infinite (or x <= 0 on a log axis) are skipped: the line breaks there.
struct LineSeries {
  std::string name;
  std::vector<double> x;  // same length as y
  std::vector<double> y;
};

/// A vertical line across the plot at x, labelled at its top (e.g. the end of burn-in).
struct XMark {
  double x = 0;
  std::string label;
};

/// A point of series `series` at x that has no value (e.g. every chain diverged there):
/// drawn as a cross in the series' colour on the top edge of the plot, inside the x range.
struct MissingPoint {
  std::size_t series = 0;
  double x = 0;
};

/// A line chart of several series on shared axes.
struct LineChart {
  std::string title;
  std::string x_label;
  std::string y_label;
  bool log_x = false;    // decades on x (ticks at powers of ten); non-positive x skipped
  bool markers = false;  // a small mark at every point as well as the line; without marks a
                         // series longer than 4 points per pixel column is thinned to each
                         // column's first, lowest, highest and last point (same picture)
  // Axis ranges: kAutoRange (NaN, the default) takes the bound from the data, widened
  // to the nearest tick. Points outside a fixed range are clipped at the plot area.
  double x_min = kAutoRange, x_max = kAutoRange;
  double y_min = kAutoRange, y_max = kAutoRange;
  std::vector<LineSeries> series;
  std::vector<XMark> x_marks;
  std::vector<MissingPoint> missing;  // listed in the legend as "x = <missing_label>"
  std::string missing_label = "no value";
  int first_colour = 0;  // series i takes palette colour first_colour + i (small multiples)
  // A dashed y = x reference line across the plot (chance on a ROC curve, perfect
  // calibration on a reliability curve), labelled in the legend when `diagonal_label` is set.
  bool diagonal = false;
  std::string diagonal_label;
  PlotFrame frame;
};

/// An accuracy-rejection curve as a line series (coverage on x, accuracy on y).
LineSeries rejection_series(std::string name, const RejectionCurve& curve);

/// One method's reliability table in a reliability diagram.
struct ReliabilitySeries {
  std::string name;
  ReliabilityTable table;  // rows with NaN means (empty bins) draw no bar
  int colour = -1;         // palette index; -1: the series' position in the chart
};

/// A reliability diagram: per bin, a bar up to the accuracy of the rows in it, with a
/// dark tick across the bar at their mean confidence (so the gap between the two reads
/// directly), the diagonal of perfect calibration, and a strip below with the rows per
/// bin. Several series share each bin side by side, one slice of the bin per series. The
/// legend shows each series' ECE from its table.
struct ReliabilityChart {
  std::string title = "Reliability";
  std::string x_label = "confidence";
  std::string y_label = "accuracy";
  std::vector<ReliabilitySeries> series;
  PlotFrame frame{500, 470};
};

/// One named set of values for a histogram (NaN and infinities are left out).
struct HistogramSeries {
  std::string name;
  std::vector<double> values;
};

/// Histograms of several series on common bins, overlaid translucently.
struct HistogramChart {
  std::string title;
  std::string x_label;
  int bins = 30;          // equal-width bins over [lo, hi]; REQUIRES >= 1
  bool fractions = true;  // y is each series' fraction of its own values (so groups of
                          // different sizes compare); false: counts
  double lo = kAutoRange;  // range; NaN means the smallest / largest value seen
  double hi = kAutoRange;
  std::vector<HistogramSeries> series;
  PlotFrame frame;
};

/// The charts as standalone SVG documents. They never fail: odd input (no series, no
/// finite value, one distinct value) gives a chart that says so.
std::string render_line_chart(const LineChart& chart);
std::string render_reliability_diagram(const ReliabilityChart& chart);
std::string render_histogram(const HistogramChart& chart);

/// Small multiples: one reliability diagram per series, on identical axes, in a grid of
/// `columns` panels per row, each in the colour the series has in a shared chart, under
/// one title. REQUIRES: columns >= 1.
std::string render_reliability_panels(const ReliabilityChart& chart, int columns);

/// Several line charts as panels of one SVG, `columns` per row, under one title (the
/// panels keep their own titles, axes and sizes). REQUIRES: columns >= 1.
std::string render_line_panels(const std::vector<LineChart>& panels, std::string_view title,
                               int columns);

/// Chain traces for one run as small multiples: one panel per chain, sharing an x range
/// and robust y limits (robust_limits over every chain's values), with the end of
/// burn-in marked when `burn_in` is finite.
struct TraceChart {
  std::string title;
  std::string y_label;
  std::vector<LineSeries> chains;  // x: step, y: the traced value
  double burn_in = kAutoRange;     // step at which burn-in ends; NaN: not marked
  PlotFrame panel{420, 210};       // size of each chain's panel
  int columns = 2;
};
std::string render_trace_chart(const TraceChart& chart);

/// Y limits that the bulk of `values` sets rather than a few extremes: the `tail` and
/// 1 - `tail` quantiles (linear interpolation between order statistics, numpy's default
/// method) widened by `pad` times their span on each side, and never beyond the data's own
/// range. Non-finite values are ignored; {NaN, NaN} when none is finite.
std::pair<double, double> robust_limits(std::vector<double> values, double tail = 0.01,
                                        double pad = 0.08);

// ---------------------------------------------------------------------------------------
// Building blocks, public for tests and for callers that label their own numbers.

/// Tick positions covering [lo, hi] at a step of 1, 2 or 5 times a power of ten, chosen so
/// that about `target` ticks fall inside; the first tick is <= lo and the last >= hi.
/// REQUIRES: lo < hi, both finite; target >= 2.
std::vector<double> nice_ticks(double lo, double hi, int target = 5);

/// Powers of ten covering [lo, hi] (the first <= lo, the last >= hi); when that gives
/// fewer than three, 1-2-5 multiples of each decade instead. REQUIRES: 0 < lo < hi.
std::vector<double> log_ticks(double lo, double hi);

/// A tick's label with no more decimals than the step between ticks needs ("0.25",
/// "1000", "1e-06" for very small or large magnitudes).
std::string tick_label(double value, double step);

/// `text` escaped for XML and HTML text and attribute values: & < > " ' become entities;
/// control characters other than tab and newline are dropped and invalid UTF-8 bytes
/// become U+FFFD, so any label yields a well-formed document.
std::string escape_markup(std::string_view text);

/// Series colours in drawing order (hex "#rrggbb"); series i uses entry i % size().
const std::vector<std::string_view>& plot_palette();

}  // namespace credence
