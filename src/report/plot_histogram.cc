// Histograms of several series on common bins, overlaid translucently.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "credence/plot.h"
#include "report/plot_svg.h"

namespace credence {

using report::Area;
using report::coord;
using report::Scale;

std::string render_histogram(const HistogramChart& chart) {
  const int width = std::max(chart.frame.width, 200);
  const int height = std::max(chart.frame.height, 160);
  const int bins = std::max(chart.bins, 1);
  report::SvgDocument doc(width, height, chart.title);

  double lo = std::numeric_limits<double>::infinity();
  double hi = -lo;
  for (const HistogramSeries& series : chart.series) {
    for (double v : series.values) {
      if (!std::isfinite(v)) continue;
      lo = std::min(lo, v);
      hi = std::max(hi, v);
    }
  }
  if (!std::isnan(chart.lo)) lo = chart.lo;
  if (!std::isnan(chart.hi)) hi = chart.hi;
  bool any = lo <= hi && std::isfinite(lo) && std::isfinite(hi);
  if (!any) lo = hi = 0;
  if (!(lo < hi)) {
    double pad = lo == 0 ? 0.5 : std::fabs(lo) * 0.05;
    lo -= pad;
    hi += pad;
  }
  const double bin_width = (hi - lo) / bins;

  // Heights per series and bin; values outside a fixed range are left out.
  std::vector<std::vector<double>> heights(
      chart.series.size(), std::vector<double>(static_cast<std::size_t>(bins), 0.0));
  std::vector<report::LegendEntry> legend;
  double top_height = 0;
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    std::size_t used = 0;
    for (double v : chart.series[s].values) {
      if (!std::isfinite(v) || v < lo || v > hi) continue;
      int k = std::min(static_cast<int>((v - lo) / bin_width), bins - 1);
      heights[s][static_cast<std::size_t>(k)] += 1;
      ++used;
    }
    if (chart.fractions && used > 0) {
      for (double& h : heights[s]) h /= static_cast<double>(used);
    }
    for (double h : heights[s]) top_height = std::max(top_height, h);
    int index = static_cast<int>(s);
    std::string label = used > 0 ? fmt::format("{} (n = {})", chart.series[s].name, used)
                                 : fmt::format("{} (no values)", chart.series[s].name);
    legend.push_back({label, report::series_colour(index), report::Swatch::kBox, index});
  }
  any = any && top_height > 0;

  double top = report::draw_header(doc, chart.title, legend, width);
  report::AxisTicks x_axis = report::linear_axis(lo, hi, lo, hi, 6);
  report::AxisTicks y_axis =
      report::linear_axis(0, any ? top_height : 1, 0, kAutoRange, 5);
  Area area;
  area.top = top + 10;
  area.left = 14 + 18 + report::widest_label(y_axis) + 10;
  area.right = width - 18;
  area.bottom = height - (chart.x_label.empty() ? 26 : 44);
  Scale x{lo, hi, area.left, area.right, false};
  Scale y{y_axis.lo, y_axis.hi, area.bottom, area.top, false};
  report::draw_x_axis(doc, area, x, x_axis, chart.x_label, false);
  report::draw_y_axis(doc, area, y, y_axis, chart.fractions ? "fraction of rows" : "rows", true,
                      22);
  if (!any) {
    report::draw_no_data(doc, area);
    return doc.finish();
  }

  std::string& b = doc.body();
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    std::string_view colour = report::series_colour(static_cast<int>(s));
    b += fmt::format("<g class=\"histogram-series\" data-series=\"{}\" fill=\"{}\" "
                     "fill-opacity=\"0.34\">\n",
                     s, colour);
    // Bars, then the outline of the whole series as one step path on top.
    std::string outline = fmt::format("M{} {}", coord(x(lo)), coord(y(0)));
    for (int k = 0; k < bins; ++k) {
      double h = heights[s][static_cast<std::size_t>(k)];
      double x0 = x(lo + k * bin_width);
      double x1 = x(k + 1 == bins ? hi : lo + (k + 1) * bin_width);
      outline += fmt::format(" L{} {} L{} {}", coord(x0), coord(y(h)), coord(x1), coord(y(h)));
      if (h <= 0) continue;
      b += fmt::format(
          "<rect class=\"hbar\" data-bin=\"{}\" x=\"{}\" y=\"{}\" width=\"{}\" height=\"{}\"/>\n",
          k, coord(x0), coord(y(h)), coord(x1 - x0), coord(y(0) - y(h)));
    }
    outline += fmt::format(" L{} {}", coord(x(hi)), coord(y(0)));
    b += "</g>\n";
    b += fmt::format("<path class=\"outline\" d=\"{}\" fill=\"none\" stroke=\"{}\" "
                     "stroke-width=\"1.4\" stroke-linejoin=\"round\"/>\n",
                     outline, colour);
  }
  return doc.finish();
}

}  // namespace credence
