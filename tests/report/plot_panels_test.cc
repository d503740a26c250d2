// Figures of issue 19, item 4: one text scale for every chart; traces as one panel per
// chain with burn-in marked and robust y limits; sweep axes that cover the swept range,
// with crosses where every chain diverged; reliability as small multiples. Numbers are
// read back from the SVG (tests/report/report_testing.h).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <set>
#include <string>

#include "credence/plot.h"
#include "report/report_testing.h"

namespace credence {
namespace {

using testing::number;
using testing::svg_elements;

std::set<double> font_sizes(const std::string& svg) {
  std::set<double> sizes;
  const std::string key = "font-size=\"";
  for (std::size_t at = svg.find(key); at != std::string::npos; at = svg.find(key, at + 1)) {
    sizes.insert(std::stod(svg.substr(at + key.size())));
  }
  return sizes;
}

ReliabilityTable table_of(double shift) {
  ReliabilityTable t;
  for (int m = 0; m < 5; ++m) {
    ReliabilityBin bin;
    bin.lo = 0.5 + 0.1 * m;
    bin.hi = bin.lo + 0.1;
    bin.count = 10 + m;
    bin.mean_confidence = bin.lo + 0.05;
    bin.accuracy = std::clamp(bin.mean_confidence - shift, 0.0, 1.0);
    t.rows.push_back(bin);
  }
  t.ece = shift;
  return t;
}

TraceChart spiky_traces(int chains) {
  TraceChart chart;
  chart.title = "sghmc: potential during training";
  chart.y_label = "U";
  chart.burn_in = 100;
  for (int c = 0; c < chains; ++c) {
    LineSeries s{"chain " + std::to_string(c), {}, {}};
    for (int step = 0; step <= 400; ++step) {
      s.x.push_back(step);
      // A first spike of 1e6, then values between 40 and 60.
      s.y.push_back(step == 0 ? 1e6 : 50 + 10 * std::sin(0.1 * step + c));
    }
    chart.chains.push_back(std::move(s));
  }
  return chart;
}

TEST(Figures, EveryChartUsesTheOneTextScale) {
  LineChart line;
  line.title = "t";
  line.x_label = "x";
  line.y_label = "y";
  line.series = {{"a", {1, 2, 3}, {1, 4, 9}}};
  line.missing = {{0, 4}};
  line.x_marks = {{2, "mark"}};
  ReliabilityChart reliability;
  reliability.series = {{"a", table_of(0.05)}, {"b", table_of(0.1)}};
  HistogramChart histogram;
  histogram.title = "h";
  histogram.x_label = "x";
  histogram.series = {{"right", {0.1, 0.2, 0.3}}, {"wrong", {0.5}}};
  const std::set<double> scale = {11, 12, 14};
  for (const std::string& svg :
       {render_line_chart(line), render_line_chart(LineChart{}),
        render_reliability_diagram(reliability), render_reliability_panels(reliability, 3),
        render_histogram(histogram), render_trace_chart(spiky_traces(2))}) {
    for (double size : font_sizes(svg)) EXPECT_TRUE(scale.count(size)) << "font-size " << size;
  }
}

TEST(Figures, RobustLimitsFollowNumpysLinearQuantiles) {
  // 0..100 and one spike of 1e6 (102 values). numpy.quantile(v, 0.01) with the default
  // linear method: position 101 * 0.01 = 1.01 -> 1.01; at 0.99: 99.99. Padded by 8% of
  // the span 98.98 (7.9184) and kept within the data: [0, 107.9084].
  std::vector<double> values;
  for (int i = 0; i <= 100; ++i) values.push_back(i);
  values.push_back(1e6);
  values.push_back(std::nan(""));
  const auto [lo, hi] = robust_limits(values);
  EXPECT_NEAR(lo, 0.0, 1e-12);
  EXPECT_NEAR(hi, 107.9084, 1e-9);
  const auto [none_lo, none_hi] = robust_limits({std::nan("")});
  EXPECT_TRUE(std::isnan(none_lo) && std::isnan(none_hi));
}

TEST(Figures, TracesGetOnePanelPerChainBurnInAndRobustLimits) {
  const std::string svg = render_trace_chart(spiky_traces(4));
  EXPECT_EQ(svg_elements(svg, "svg", "panel").size(), 4u);
  // One namespace declaration, on the outer document (HtmlReport::figure drops it, and a
  // report page must hold no URL).
  EXPECT_EQ(svg.find("http://"), svg.rfind("http://"));
  const auto marks = svg_elements(svg, "line", "x-mark");
  ASSERT_EQ(marks.size(), 4u);
  for (const auto& m : marks) EXPECT_EQ(number(m, "data-x"), 100.0);
  // The y range is set by the bulk (40..60), not by the first spike of 1e6.
  double top_tick = -1;
  const std::string key = "class=\"ytick\">";
  for (std::size_t at = svg.find(key); at != std::string::npos; at = svg.find(key, at + 1)) {
    top_tick = std::max(top_tick, std::stod(svg.substr(at + key.size())));
  }
  EXPECT_GT(top_tick, 55.0);
  EXPECT_LT(top_tick, 100.0);
  // Each chain keeps its own palette colour.
  const auto paths = svg_elements(svg, "path", "series");
  ASSERT_EQ(paths.size(), 4u);
  for (std::size_t c = 0; c < 4; ++c) EXPECT_EQ(paths[c].at("stroke"), plot_palette()[c]);
}

TEST(Figures, SweepAxisCoversTheSweptRangeAndMarksDivergence) {
  // Values up to 1; every chain diverged at 3.2 and 10 (series 0) and at 10 (series 1).
  LineChart chart;
  chart.log_x = true;
  chart.markers = true;
  chart.series = {{"sgld", {0.001, 0.01, 0.1, 1}, {0.4, 0.32, 0.31, 0.31}},
                  {"sghmc", {0.001, 0.01, 0.1, 1, 3.2}, {0.33, 0.31, 0.31, 0.31, 0.35}}};
  chart.missing = {{0, 3.2}, {0, 10}, {1, 10}};
  chart.missing_label = "every chain diverged";
  const std::string svg = render_line_chart(chart);
  const std::string last_tick = "class=\"xtick\">10<";
  EXPECT_NE(svg.find(last_tick), std::string::npos) << "the x axis stops short of 10";
  const auto crosses = svg_elements(svg, "path", "missing");
  ASSERT_EQ(crosses.size(), 3u);
  EXPECT_EQ(number(crosses[1], "data-x"), 10.0);
  EXPECT_EQ(crosses[2].at("stroke"), plot_palette()[1]);
  EXPECT_NE(svg.find("every chain diverged"), std::string::npos);
}

TEST(Figures, SeveralMethodsGetOneReliabilityPanelEach) {
  ReliabilityChart chart;
  chart.title = "Accuracy against confidence";
  for (int s = 0; s < 5; ++s) chart.series.push_back({"method " + std::to_string(s), table_of(0.02 * s)});
  const std::string svg = render_reliability_panels(chart, 3);
  EXPECT_EQ(svg_elements(svg, "svg", "panel").size(), 5u);
  const auto groups = svg_elements(svg, "g", "reliability-series");
  ASSERT_EQ(groups.size(), 5u);
  // Every panel has its method's own colour, as it would in a shared chart.
  const auto bars = svg_elements(svg, "rect", "bar");
  ASSERT_EQ(bars.size(), 25u);
  for (std::size_t s = 0; s < 5; ++s) EXPECT_EQ(bars[5 * s].at("fill"), plot_palette()[s]);
}

}  // namespace
}  // namespace credence
