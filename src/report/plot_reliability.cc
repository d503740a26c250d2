// Reliability diagrams: accuracy per confidence bin against the diagonal, with row counts.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "credence/plot.h"
#include "report/plot_svg.h"

namespace credence {
namespace {

using report::Area;
using report::coord;
using report::Scale;

bool filled(const ReliabilityBin& bin) {
  return bin.count > 0 && std::isfinite(bin.accuracy) && std::isfinite(bin.mean_confidence) &&
         std::isfinite(bin.lo) && std::isfinite(bin.hi);
}

}  // namespace

std::string render_reliability_diagram(const ReliabilityChart& chart) {
  const int width = std::max(chart.frame.width, 220);
  const int height = std::max(chart.frame.height, 220);
  report::SvgDocument doc(width, height, chart.title);

  std::vector<report::LegendEntry> legend;
  std::int64_t max_count = 0;
  bool any = false;
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    const ReliabilitySeries& series = chart.series[s];
    std::string label = series.name;
    if (std::isfinite(series.table.ece) && !series.table.rows.empty()) {
      label += fmt::format("  ECE {:.3f}", series.table.ece);
    }
    int index = series.colour >= 0 ? series.colour : static_cast<int>(s);
    legend.push_back({label, report::series_colour(index), report::Swatch::kBox, index});
    for (const ReliabilityBin& bin : series.table.rows) {
      if (!filled(bin)) continue;
      any = true;
      max_count = std::max(max_count, bin.count);
    }
  }
  if (!chart.series.empty()) {
    legend.push_back({"mean confidence in bin", report::kInk, report::Swatch::kTick, 0});
  }
  double top = report::draw_header(doc, chart.title, legend, width);

  // Main panel, then a strip of row counts sharing its x axis.
  constexpr double kStrip = 54;
  constexpr double kGap = 10;
  report::AxisTicks ticks = report::linear_axis(0, 1, 0, 1, 5);
  Area main;
  main.top = top + 10;
  main.left = 14 + (chart.y_label.empty() ? 0 : 18) + report::widest_label(ticks) + 10;
  main.right = width - 18;
  double axis_bottom = height - (chart.x_label.empty() ? 26 : 44);
  main.bottom = axis_bottom - kStrip - kGap;
  Area strip = main;
  strip.top = main.bottom + kGap;
  strip.bottom = axis_bottom;
  Scale x{0, 1, main.left, main.right, false};
  Scale y{0, 1, main.bottom, main.top, false};

  report::draw_y_axis(doc, main, y, ticks, chart.y_label, true, 22);
  for (double t : ticks.values) doc.line(x(t), main.top, x(t), main.bottom, report::kGrid);
  doc.line(main.left, main.bottom, main.right, main.bottom, report::kAxis);
  report::draw_x_axis(doc, strip, x, ticks, chart.x_label, false);
  doc.line(strip.left, strip.top, strip.left, strip.bottom, report::kAxis);
  doc.text(strip.left - 7, strip.top + 8, max_count > 0 ? fmt::format("{}", max_count) : "0",
           "end", report::kTickSize, report::kMuted, "class=\"count-max\"");
  doc.text(strip.left - 7, strip.bottom - 2, "rows", "end", report::kTickSize, report::kMuted);

  if (!any) {
    report::draw_no_data(doc, main);
  }
  std::string& b = doc.body();
  const double slices = static_cast<double>(std::max<std::size_t>(chart.series.size(), 1));
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    const int index = chart.series[s].colour >= 0 ? chart.series[s].colour : static_cast<int>(s);
    std::string_view colour = report::series_colour(index);
    b += fmt::format("<g class=\"reliability-series\" data-series=\"{}\">\n", s);
    const auto& rows = chart.series[s].table.rows;
    for (std::size_t m = 0; m < rows.size(); ++m) {
      const ReliabilityBin& bin = rows[m];
      if (!filled(bin)) continue;
      // Series s takes slice s of the bin; at least 1.5 px so a narrow bin still shows.
      double lo = std::clamp(bin.lo, 0.0, 1.0);
      double hi = std::clamp(bin.hi, lo, 1.0);
      double slice = (x(hi) - x(lo)) / slices;
      double x0 = x(lo) + slice * static_cast<double>(s) + (slice > 4 ? 0.6 : 0);
      double w = std::max(slice - (slice > 4 ? 1.2 : 0), 1.5);
      double acc = std::clamp(bin.accuracy, 0.0, 1.0);
      double conf = std::clamp(bin.mean_confidence, 0.0, 1.0);
      b += fmt::format(
          "<rect class=\"bar\" data-bin=\"{}\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\" "
          "fill=\"{}\" fill-opacity=\"0.82\"/>\n",
          m, coord(x0), coord(y(acc)), coord(w), coord(y(0) - y(acc)), colour);
      doc.line(x0, y(conf), x0 + w, y(conf), report::kInk, 1.6,
               fmt::format("class=\"confidence\" data-bin=\"{}\"", m));
      double h = max_count > 0 ? (strip.height() - 4) * static_cast<double>(bin.count) /
                                     static_cast<double>(max_count)
                               : 0;
      b += fmt::format(
          "<rect class=\"count\" data-bin=\"{}\" data-rows=\"{}\" x=\"{}\" y=\"{}\" width=\"{}\" "
          "height=\"{}\" fill=\"{}\" fill-opacity=\"0.7\"/>\n",
          m, bin.count, coord(x0), coord(strip.bottom - h), coord(w), coord(h), colour);
    }
    b += "</g>\n";
  }
  // The diagonal last, so it stays visible over the bars.
  doc.line(x(0), y(0), x(1), y(1), report::kMuted, 1.2,
           "class=\"diagonal\" stroke-dasharray=\"5 4\"");
  return doc.finish();
}

}  // namespace credence
