// Small multiples: reliability diagrams per method, chain traces per chain, robust limits.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>
#include <vector>

#include "credence/plot.h"
#include "report/plot_svg.h"

namespace credence {

std::pair<double, double> robust_limits(std::vector<double> values, double tail, double pad) {
  std::erase_if(values, [](double v) { return !std::isfinite(v); });
  const double nan = std::numeric_limits<double>::quiet_NaN();
  if (values.empty()) return {nan, nan};
  std::sort(values.begin(), values.end());
  // Quantile q by linear interpolation between the order statistics at (n - 1) q.
  const auto quantile = [&](double q) {
    const double at = static_cast<double>(values.size() - 1) * q;
    const auto below = static_cast<std::size_t>(std::floor(at));
    const std::size_t above = std::min(below + 1, values.size() - 1);
    return values[below] + (values[above] - values[below]) * (at - static_cast<double>(below));
  };
  const double lo = quantile(tail);
  const double hi = quantile(1 - tail);
  const double margin = (hi - lo) * pad;
  return {std::max(values.front(), lo - margin), std::min(values.back(), hi + margin)};
}

std::string render_line_panels(const std::vector<LineChart>& panels, std::string_view title,
                               int columns) {
  std::vector<std::string> svgs;
  std::vector<std::pair<int, int>> sizes;
  for (const LineChart& panel : panels) {
    svgs.push_back(render_line_chart(panel));
    sizes.emplace_back(std::max(panel.frame.width, 200), std::max(panel.frame.height, 160));
  }
  return report::compose_panels(svgs, sizes, title, columns);
}

std::string render_reliability_panels(const ReliabilityChart& chart, int columns) {
  std::vector<std::string> svgs;
  std::vector<std::pair<int, int>> sizes;
  for (std::size_t s = 0; s < chart.series.size(); ++s) {
    ReliabilityChart panel;
    panel.title = chart.series[s].name;
    panel.x_label = chart.x_label;
    panel.y_label = chart.y_label;
    panel.series = {chart.series[s]};
    if (panel.series[0].colour < 0) panel.series[0].colour = static_cast<int>(s);
    panel.frame = {320, 380};
    svgs.push_back(render_reliability_diagram(panel));
    sizes.emplace_back(panel.frame.width, panel.frame.height);
  }
  return report::compose_panels(svgs, sizes, chart.title, columns);
}

std::string render_trace_chart(const TraceChart& chart) {
  std::vector<double> all;
  double x_lo = std::numeric_limits<double>::infinity();
  double x_hi = -x_lo;
  for (const LineSeries& chain : chart.chains) {
    all.insert(all.end(), chain.y.begin(), chain.y.end());
    for (double x : chain.x) {
      if (!std::isfinite(x)) continue;
      x_lo = std::min(x_lo, x);
      x_hi = std::max(x_hi, x);
    }
  }
  const auto [y_lo, y_hi] = robust_limits(std::move(all));
  std::vector<LineChart> panels;
  for (std::size_t c = 0; c < chart.chains.size(); ++c) {
    LineChart panel;
    panel.title = chart.chains[c].name;
    panel.x_label = "step";
    panel.y_label = chart.y_label;
    panel.series = {chart.chains[c]};
    panel.series[0].name.clear();  // the panel's title names the chain
    panel.first_colour = static_cast<int>(c);
    if (x_lo < x_hi) {
      panel.x_min = x_lo;
      panel.x_max = x_hi;
    }
    if (y_lo < y_hi) {
      panel.y_min = y_lo;
      panel.y_max = y_hi;
    }
    if (std::isfinite(chart.burn_in)) panel.x_marks.push_back({chart.burn_in, "end of burn-in"});
    panel.frame = chart.panel;
    panels.push_back(std::move(panel));
  }
  return render_line_panels(panels, chart.title, chart.columns);
}

}  // namespace credence
