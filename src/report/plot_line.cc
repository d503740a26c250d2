// Line charts: several named series on shared (optionally log-x) axes.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "credence/plot.h"
#include "report/plot_svg.h"

namespace credence {
namespace {

using report::Area;
using report::AxisTicks;
using report::coord;
using report::Scale;

// The diagonal takes the last dash pattern of the series, so it never looks like a curve.
constexpr int kDiagonalDash = 7;

bool usable(double x, double y, bool log_x) {
  return std::isfinite(x) && std::isfinite(y) && (!log_x || x > 0);
}

}  // namespace

LineSeries rejection_series(std::string name, const RejectionCurve& curve) {
  return LineSeries{std::move(name), curve.coverage, curve.accuracy};
}

std::string render_line_chart(const LineChart& chart) {
  const int width = std::max(chart.frame.width, 200);
  const int height = std::max(chart.frame.height, 160);
  report::SvgDocument doc(width, height, chart.title);

  // Data ranges over every usable point of every series.
  double inf = std::numeric_limits<double>::infinity();
  double x_lo = inf, x_hi = -inf, y_lo = inf, y_hi = -inf;
  std::vector<report::LegendEntry> legend;
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    const LineSeries& series = chart.series[s];
    std::size_t n = std::min(series.x.size(), series.y.size());
    for (std::size_t i = 0; i < n; ++i) {
      if (!usable(series.x[i], series.y[i], chart.log_x)) continue;
      x_lo = std::min(x_lo, series.x[i]);
      x_hi = std::max(x_hi, series.x[i]);
      y_lo = std::min(y_lo, series.y[i]);
      y_hi = std::max(y_hi, series.y[i]);
    }
    int index = chart.first_colour + static_cast<int>(s);
    if (series.name.empty()) continue;  // e.g. a panel whose title names its one series
    legend.push_back({series.name, report::series_colour(index), report::Swatch::kLine, index});
  }
  const bool any_values = x_lo <= x_hi;
  // Missing points and marks belong to the x range even where no series has a value.
  for (const MissingPoint& m : chart.missing) {
    if (usable(m.x, 0, chart.log_x)) x_lo = std::min(x_lo, m.x), x_hi = std::max(x_hi, m.x);
  }
  for (const XMark& m : chart.x_marks) {
    if (usable(m.x, 0, chart.log_x)) x_lo = std::min(x_lo, m.x), x_hi = std::max(x_hi, m.x);
  }
  if (!(x_lo <= x_hi)) x_lo = x_hi = chart.log_x ? 1.0 : 0.0;
  if (!any_values) y_lo = y_hi = 0.0;
  if (!chart.missing.empty()) {
    legend.push_back({chart.missing_label, report::kInk, report::Swatch::kCross, 0});
  }
  if (chart.diagonal && !chart.diagonal_label.empty()) {
    legend.push_back({chart.diagonal_label, report::kMuted, report::Swatch::kLine, kDiagonalDash});
  }

  double top = report::draw_header(doc, chart.title, legend, width);
  AxisTicks x_axis = chart.log_x ? report::log_axis(x_lo, x_hi, chart.x_min, chart.x_max)
                                 : report::linear_axis(x_lo, x_hi, chart.x_min, chart.x_max, 6);
  AxisTicks y_axis = report::linear_axis(y_lo, y_hi, chart.y_min, chart.y_max, 5);

  Area area;
  area.top = top + 10;
  area.left = 14 + (chart.y_label.empty() ? 0 : 18) + report::widest_label(y_axis) + 10;
  area.right = width - 18;
  area.bottom = height - (chart.x_label.empty() ? 26 : 44);
  Scale x{x_axis.lo, x_axis.hi, area.left, area.right, chart.log_x};
  Scale y{y_axis.lo, y_axis.hi, area.bottom, area.top, false};

  report::draw_x_axis(doc, area, x, x_axis, chart.x_label, true);
  report::draw_y_axis(doc, area, y, y_axis, chart.y_label, true, 22);
  std::string& b = doc.body();
  if (chart.diagonal && !chart.log_x) {
    const double lo = std::max(x_axis.lo, y_axis.lo);
    const double hi = std::min(x_axis.hi, y_axis.hi);
    if (lo < hi) {
      doc.line(x(lo), y(lo), x(hi), y(hi), report::kMuted, 1.2,
               fmt::format("class=\"diagonal\" stroke-dasharray=\"{}\"",
                           report::series_dash(kDiagonalDash)));
    }
  }
  for (const XMark& m : chart.x_marks) {
    if (!usable(m.x, 0, chart.log_x)) continue;
    const double px = x(m.x);
    doc.line(px, area.top, px, area.bottom, report::kMuted, 1.2,
             fmt::format("class=\"x-mark\" data-x=\"{}\" stroke-dasharray=\"4 3\"", m.x));
    doc.text(px + 4, area.top + report::kTickSize, m.label, "start", report::kTickSize,
             report::kMuted, "class=\"x-mark-label\"");
  }
  for (const MissingPoint& m : chart.missing) {
    if (!usable(m.x, 0, chart.log_x)) continue;
    const double px = x(m.x);
    const double py = area.top + 6 + 9 * static_cast<double>(m.series % 4);
    b += fmt::format(
        "<path class=\"missing\" data-series=\"{}\" data-x=\"{}\" d=\"M{} {} L{} {} M{} {} "
        "L{} {}\" stroke=\"{}\" stroke-width=\"2\" fill=\"none\"/>\n",
        m.series, m.x, coord(px - 4), coord(py - 4), coord(px + 4), coord(py + 4), coord(px - 4),
        coord(py + 4), coord(px + 4), coord(py - 4),
        report::series_colour(chart.first_colour + static_cast<int>(m.series)));
  }
  if (!any_values) {
    report::draw_no_data(doc, area);
    return doc.finish();
  }

  b += fmt::format(
      "<clipPath id=\"@CLIP@\"><rect x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/></clipPath>\n"
      "<g clip-path=\"url(#@CLIP@)\" fill=\"none\" stroke-linejoin=\"round\" "
      "stroke-linecap=\"round\">\n",
      coord(area.left - 4), coord(area.top - 4), coord(area.width() + 8),
      coord(area.height() + 8));
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    const LineSeries& series = chart.series[s];
    int index = chart.first_colour + static_cast<int>(s);
    std::string_view colour = report::series_colour(index);
    std::size_t n = std::min(series.x.size(), series.y.size());
    // A skipped point ends the current piece; the next usable point starts a new one.
    // Long traces without markers keep, per pixel column, only the first, lowest, highest
    // and last point of each piece: the same picture in a bounded number of bytes.
    const bool thin = !chart.markers && n > static_cast<std::size_t>(4 * area.width());
    std::string path;
    std::string marks;
    bool pen_down = false;
    auto emit = [&](double px, double py) {
      path += fmt::format("{}{} {}", pen_down ? " L" : (path.empty() ? "M" : " M"), coord(px),
                          coord(py));
      pen_down = true;
    };
    struct Column {
      double px = 0, first = 0, low = 0, high = 0, last = 0;
      bool low_first = true;  // the lowest point came before the highest
      bool open = false;
    } column;
    auto flush = [&] {
      if (!column.open) return;
      emit(column.px, column.first);
      double first_extreme = column.low_first ? column.low : column.high;
      double second_extreme = column.low_first ? column.high : column.low;
      if (first_extreme != column.first) emit(column.px, first_extreme);
      if (second_extreme != first_extreme) emit(column.px, second_extreme);
      if (column.last != second_extreme) emit(column.px, column.last);
      column.open = false;
    };
    for (std::size_t i = 0; i < n; ++i) {
      if (!usable(series.x[i], series.y[i], chart.log_x)) {
        flush();
        pen_down = false;
        continue;
      }
      double px = x(series.x[i]);
      double py = y(series.y[i]);
      if (!thin) {
        emit(px, py);
        if (chart.markers) {
          marks += fmt::format("<circle cx=\"{}\" cy=\"{}\" r=\"2.6\"/>", coord(px), coord(py));
        }
        continue;
      }
      double cell = std::floor(px);
      if (column.open && cell != column.px) flush();
      if (!column.open) {
        column = Column{cell, py, py, py, py, true, true};
        continue;
      }
      if (py < column.low) {
        column.low = py;
        column.low_first = false;
      }
      if (py > column.high) {
        column.high = py;
        column.low_first = true;
      }
      column.last = py;
    }
    flush();
    if (path.empty()) continue;
    std::string_view dash = report::series_dash(index);
    b += fmt::format("<path class=\"series\" data-series=\"{}\" d=\"{}\" stroke=\"{}\" "
                     "stroke-width=\"1.8\"{}/>\n",
                     s, path, colour,
                     dash.empty() ? "" : fmt::format(" stroke-dasharray=\"{}\"", dash));
    if (!marks.empty()) {
      b += fmt::format("<g class=\"markers\" fill=\"{}\" stroke=\"{}\">{}</g>\n", colour,
                       report::kGround, marks);
    }
  }
  b += "</g>\n";
  return doc.finish();
}

}  // namespace credence
