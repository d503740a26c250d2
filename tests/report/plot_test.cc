// Tests of the SVG charts: well-formed XML, escaping, NaN handling, ticks, log axes, and
// reliability bars that read back as the table they were drawn from.
#include "credence/plot.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <regex>

#include "report/report_testing.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::number;
using testing::svg_elements;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();
const std::string kHostile = "</text><script>alert(1)</script> & \"q\" 'a' <b>";

// Steps of 1, 2 or 5 times a power of ten, evenly spaced, covering the range.
void expect_nice(const std::vector<double>& ticks, double lo, double hi) {
  ASSERT_GE(ticks.size(), 3u);
  EXPECT_LE(ticks.front(), lo);
  EXPECT_GE(ticks.back(), hi);
  double step = ticks[1] - ticks[0];
  double mantissa = step / std::pow(10.0, std::floor(std::log10(step) + 1e-12));
  EXPECT_TRUE(std::fabs(mantissa - 1) < 1e-9 || std::fabs(mantissa - 2) < 1e-9 ||
              std::fabs(mantissa - 5) < 1e-9)
      << "step " << step;
  for (std::size_t i = 1; i < ticks.size(); ++i) {
    EXPECT_NEAR(ticks[i] - ticks[i - 1], step, step * 1e-9);
  }
}

// Worked by hand: the 1-2-5 rule on a few ranges.
TEST(NiceTicks, UnitRangeInFifths) {
  std::vector<double> ticks = nice_ticks(0, 1, 5);
  ASSERT_EQ(ticks.size(), 6u);
  for (int i = 0; i <= 5; ++i) EXPECT_DOUBLE_EQ(ticks[static_cast<std::size_t>(i)], i * 0.2);
}

TEST(NiceTicks, CoverAwkwardRangesWithOneTwoFiveSteps) {
  expect_nice(nice_ticks(0.013, 0.087, 5), 0.013, 0.087);
  expect_nice(nice_ticks(-3.7, 12.2, 5), -3.7, 12.2);
  expect_nice(nice_ticks(1234, 98765, 6), 1234, 98765);
  expect_nice(nice_ticks(0.9990, 0.9995, 5), 0.9990, 0.9995);
  // Zero is exactly zero, not 1e-17.
  std::vector<double> ticks = nice_ticks(-0.3, 0.3, 5);
  EXPECT_NE(std::find(ticks.begin(), ticks.end(), 0.0), ticks.end());
}

// By hand: decades from the one at or below lo to the one at or above hi.
TEST(LogTicks, DecadesAndWithinOneDecade) {
  EXPECT_EQ(log_ticks(0.003, 2), (std::vector<double>{0.001, 0.01, 0.1, 1, 10}));
  EXPECT_EQ(log_ticks(2, 30), (std::vector<double>{1, 10, 100}));
  std::vector<double> narrow = log_ticks(0.2, 0.8);
  ASSERT_EQ(narrow.size(), 3u);
  EXPECT_DOUBLE_EQ(narrow[0], 0.2);
  EXPECT_DOUBLE_EQ(narrow[1], 0.5);
  EXPECT_DOUBLE_EQ(narrow[2], 1.0);
}

TEST(TickLabel, DecimalsFollowTheStep) {
  EXPECT_EQ(tick_label(0.30000000000000004, 0.1), "0.3");
  EXPECT_EQ(tick_label(0.25, 0.05), "0.25");
  EXPECT_EQ(tick_label(1000, 1000), "1000");
  EXPECT_EQ(tick_label(0.001, 0.001), "0.001");
  EXPECT_EQ(tick_label(1e-6, 1e-6), "1e-06");
  EXPECT_EQ(tick_label(-0.0, 0.1), "0.0");  // never "-0.0"
  EXPECT_EQ(tick_label(0, 5), "0");
}

// XML 1.0 (W3C Recommendation, fifth edition 2008): the five predefined entities, and
// which characters may appear at all.
TEST(EscapeMarkup, EntitiesControlsAndBadUtf8) {
  EXPECT_EQ(escape_markup("<a href=\"x\">&'</a>"),
            "&lt;a href=&quot;x&quot;&gt;&amp;&#39;&lt;/a&gt;");
  EXPECT_EQ(escape_markup("a\x01" "b\tc"), "ab\tc");
  EXPECT_EQ(escape_markup("caf\xC3\xA9"), "caf\xC3\xA9");          // valid UTF-8 kept
  EXPECT_EQ(escape_markup("x\xFFy"), "x\xEF\xBF\xBDy");             // stray byte
  EXPECT_EQ(escape_markup("\xC0\xAF"), "\xEF\xBF\xBD\xEF\xBF\xBD");  // overlong '/'
  EXPECT_EQ(escape_markup("\xED\xA0\x80"),                         // a surrogate
            "\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBD");
}

ReliabilityTable sample_table() {
  ReliabilityTable t;
  t.bins = 5;
  t.ece = 0.0423;
  double acc[5] = {kNaN, 0.35, 0.55, 0.71, 0.93};
  double conf[5] = {kNaN, 0.33, 0.51, 0.74, 0.95};
  std::int64_t counts[5] = {0, 40, 120, 260, 580};
  for (int b = 0; b < 5; ++b) {
    t.rows.push_back({b * 0.2, (b + 1) * 0.2, counts[b], conf[b], acc[b]});
  }
  return t;
}

// The bars read back as the table: height / panel height = accuracy, the tick across
// each bar sits at the mean confidence, bars stay inside their bin's x-range, and the
// count strip is proportional to the rows per bin. Empty bins draw nothing.
TEST(ReliabilityDiagram, BarsReadBackAsTheTable) {
  ReliabilityChart chart;
  chart.title = "Reliability";
  chart.series.push_back({"adam", sample_table()});
  ReliabilityTable second = sample_table();
  second.rows[2].accuracy = 0.40;
  chart.series.push_back({"sghmc", second});
  std::string svg = render_reliability_diagram(chart);

  auto diagonal = svg_elements(svg, "line", "diagonal");
  ASSERT_EQ(diagonal.size(), 1u);
  double x0 = number(diagonal[0], "x1"), y0 = number(diagonal[0], "y1");
  double x1 = number(diagonal[0], "x2"), y1 = number(diagonal[0], "y2");
  auto px_to_x = [&](double px) { return (px - x0) / (x1 - x0); };
  auto py_to_y = [&](double py) { return (y0 - py) / (y0 - y1); };

  auto bars = svg_elements(svg, "rect", "bar");
  auto ticks = svg_elements(svg, "line", "confidence");
  auto counts = svg_elements(svg, "rect", "count");
  ASSERT_EQ(bars.size(), 8u);  // 4 non-empty bins x 2 series
  ASSERT_EQ(ticks.size(), 8u);
  ASSERT_EQ(counts.size(), 8u);
  double count_scale = number(counts[3], "height") / 580.0;  // series 0, last bin
  for (std::size_t i = 0; i < bars.size(); ++i) {
    const ReliabilityTable& table = chart.series[i / 4].table;
    int bin = std::stoi(bars[i]["data-bin"]);
    const ReliabilityBin& row = table.rows[static_cast<std::size_t>(bin)];
    double top = number(bars[i], "y");
    double height = number(bars[i], "height");
    EXPECT_NEAR(top + height, y0, 0.02) << "bar " << i << " stands on the axis";
    EXPECT_NEAR(py_to_y(top), row.accuracy, 2e-4) << "bar " << i;
    EXPECT_NEAR(py_to_y(number(ticks[i], "y1")), row.mean_confidence, 2e-4) << "tick " << i;
    double left = px_to_x(number(bars[i], "x"));
    double right = px_to_x(number(bars[i], "x") + number(bars[i], "width"));
    EXPECT_GE(left, row.lo - 1e-4);
    EXPECT_LE(right, row.hi + 1e-4);
    // Series 0 takes the left half of each bin, series 1 the right half.
    EXPECT_EQ(left < (row.lo + row.hi) / 2, i < 4) << "bar " << i;
    EXPECT_NEAR(number(counts[i], "height"), count_scale * static_cast<double>(row.count), 0.02);
  }
  EXPECT_NE(svg.find("ECE 0.042"), std::string::npos);
}

TEST(LineChart, NonFiniteValuesBreakThePathWithoutNaNText) {
  LineChart chart;
  chart.title = "trace";
  chart.series.push_back({"chain 1", {1, 2, 3, 4, 5, 6}, {0.5, 0.4, kNaN, 0.3, kInf, 0.2}});
  chart.series.push_back({"all missing", {1, 2}, {kNaN, kNaN}});
  chart.series.push_back({"empty", {}, {}});
  std::string svg = render_line_chart(chart);
  auto paths = svg_elements(svg, "path", "series");
  ASSERT_EQ(paths.size(), 1u);  // the all-NaN and empty series draw no line
  const std::string& d = paths[0]["d"];
  EXPECT_EQ(std::count(d.begin(), d.end(), 'M'), 3) << d;  // three pieces
  EXPECT_EQ(std::count(d.begin(), d.end(), 'L'), 1) << d;  // only 1-2 are joined
  for (const char* bad : {"nan", "NaN", "inf"}) EXPECT_EQ(svg.find(bad), std::string::npos) << bad;
  // The legend still names every series.
  EXPECT_NE(svg.find(">all missing<"), std::string::npos);
  EXPECT_NE(svg.find(">empty<"), std::string::npos);
}

TEST(LineChart, NothingToDrawSaysSo) {
  LineChart chart;
  chart.title = "nothing";
  EXPECT_EQ(svg_elements(render_line_chart(chart), "text", "no-data").size(), 1u);
  chart.log_x = true;
  chart.series.push_back({"negative x only", {-1, 0}, {1, 2}});
  EXPECT_EQ(svg_elements(render_line_chart(chart), "text", "no-data").size(), 1u);
}

// On a log axis the decades are evenly spaced in pixels and labelled as numbers.
TEST(LineChart, LogAxisSpacesDecadesEvenly) {
  LineChart chart;
  chart.log_x = true;
  chart.markers = true;
  chart.series.push_back({"sghmc", {1e-4, 3e-4, 1e-3, 3e-3, 1e-2, 0, -1}, {1, 0.8, 0.6, 0.7, 2, 9, 9}});
  std::string svg = render_line_chart(chart);
  std::regex tick_text(R"re(<text x="([-0-9.]+)"[^>]*class="xtick">([^<]*)</text>)re");
  std::vector<double> xs;
  std::vector<std::string> labels;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), tick_text);
       it != std::sregex_iterator(); ++it) {
    xs.push_back(std::stod((*it)[1]));
    labels.push_back((*it)[2]);
  }
  EXPECT_EQ(labels, (std::vector<std::string>{"0.0001", "0.001", "0.01"}));
  ASSERT_EQ(xs.size(), 3u);
  EXPECT_NEAR(xs[1] - xs[0], xs[2] - xs[1], 0.02);
  // x <= 0 is skipped: five marks, not seven; y = 9 never widens the axis.
  std::regex y_text(R"re(class="ytick">([^<]*)</text>)re");
  double top_y = 0;
  for (auto it = std::sregex_iterator(svg.begin(), svg.end(), y_text);
       it != std::sregex_iterator(); ++it) {
    top_y = std::max(top_y, std::stod((*it)[1]));
  }
  EXPECT_LE(top_y, 2.0);
  std::size_t circles = 0;
  for (std::size_t at = svg.find("<circle"); at != std::string::npos; at = svg.find("<circle", at + 1)) ++circles;
  EXPECT_EQ(circles, 5u);
}

// A long trace is thinned per pixel column but keeps its extremes (by hand: a spike of
// one point must still reach the top of the plot).
TEST(LineChart, LongTracesKeepTheirEnvelope) {
  LineChart chart;
  LineSeries trace{"chain 1", {}, {}};
  for (int i = 0; i < 200000; ++i) {
    trace.x.push_back(i);
    trace.y.push_back(i == 123457 ? 5.0 : (i % 7) * 0.1);
  }
  chart.series.push_back(trace);
  chart.y_min = 0;
  chart.y_max = 5;
  std::string svg = render_line_chart(chart);
  auto paths = svg_elements(svg, "path", "series");
  ASSERT_EQ(paths.size(), 1u);
  const std::string& d = paths[0]["d"];
  std::size_t commands = static_cast<std::size_t>(std::count(d.begin(), d.end(), 'L'));
  EXPECT_LT(commands, 4u * 560u);
  EXPECT_GT(commands, 500u);
  double top = 1e9, bottom = -1e9;
  for (auto [px, py] : testing::path_points(d)) {
    top = std::min(top, py);
    bottom = std::max(bottom, py);
  }
  auto grid_y = svg_elements(svg, "text", "ytick");
  ASSERT_FALSE(grid_y.empty());
  // The spike (y = 5, the top of the fixed range) and the floor (y = 0) both survive.
  EXPECT_NEAR(top + 3.5, number(grid_y.back(), "y"), 0.02);
  EXPECT_NEAR(bottom + 3.5, number(grid_y.front(), "y"), 0.02);
}

// Fractions of each series per common bin, counted by hand.
TEST(Histogram, FractionsOnCommonBins) {
  HistogramChart chart;
  chart.title = "entropy";
  chart.bins = 2;
  chart.series.push_back({"right", {0, 0, 1, 1, 1, 2}});
  chart.series.push_back({"wrong", {2, 2, kNaN, kInf, -kInf, 0}});
  std::string svg = render_histogram(chart);
  auto bars = svg_elements(svg, "rect", "hbar");
  ASSERT_EQ(bars.size(), 4u);
  // right: bin [0,1) holds 2 of 6, bin [1,2] holds 4 of 6; wrong: 1 of 3 and 2 of 3.
  double unit = number(bars[0], "height") * 3;  // pixels for a fraction of 1
  EXPECT_NEAR(number(bars[1], "height"), unit * 4 / 6, 0.03);
  EXPECT_NEAR(number(bars[2], "height"), unit * 1 / 3, 0.03);
  EXPECT_NEAR(number(bars[3], "height"), unit * 2 / 3, 0.03);
  EXPECT_NE(svg.find("wrong (n = 3)"), std::string::npos);
  EXPECT_NEAR(number(bars[1], "x"), number(bars[0], "x") + number(bars[0], "width"), 0.02);
}

TEST(Histogram, EmptyAndConstantSeries) {
  HistogramChart chart;
  chart.series.push_back({"none", {}});
  EXPECT_EQ(svg_elements(render_histogram(chart), "text", "no-data").size(), 1u);
  chart.series.push_back({"constant", {0.5, 0.5, 0.5}});
  std::string svg = render_histogram(chart);
  EXPECT_EQ(svg_elements(svg, "rect", "hbar").size(), 1u);
  EXPECT_NE(svg.find("none (no values)"), std::string::npos);
}

// Every chart, with hostile labels and odd data, parses as XML in Python's standard
// library parser, and the hostile label reads back exactly as text, never as markup.
TEST(Charts, WellFormedXmlWithHostileLabels) {
  testing::TempDir dir;
  LineChart line;
  line.title = kHostile;
  line.x_label = kHostile;
  line.y_label = "y & <z>";
  line.series.push_back({kHostile, {1, 2, kNaN}, {3, kInf, 4}});
  line.series.push_back({"caf\xC3\xA9 \xFF", {1, 2}, {2, 1}});
  ReliabilityChart reliability;
  reliability.title = kHostile;
  reliability.series.push_back({kHostile, sample_table()});
  reliability.series.push_back({"empty", ReliabilityTable{}});
  HistogramChart histogram;
  histogram.title = kHostile;
  histogram.x_label = kHostile;
  histogram.series.push_back({kHostile, {0.1, 0.2, kNaN}});
  std::string hostile_files, empty_files;
  int k = 0;
  for (const std::string& svg :
       {render_line_chart(line), render_reliability_diagram(reliability),
        render_histogram(histogram), render_line_chart(LineChart{}),
        render_histogram(HistogramChart{}), render_reliability_diagram(ReliabilityChart{})}) {
    EXPECT_EQ(svg.find("<script"), std::string::npos);
    (k < 3 ? hostile_files : empty_files) +=
        " '" + dir.write("chart" + std::to_string(k) + ".svg", svg) + "'";
    ++k;
  }
  std::string want = dir.write("want.txt", kHostile);
  auto [code, output] =
      testing::run_python(dir, testing::kSvgCheckScript, "--text '" + want + "'" + hostile_files);
  EXPECT_EQ(code, 0) << output;
  auto [empty_code, empty_output] =
      testing::run_python(dir, testing::kSvgCheckScript, empty_files);
  EXPECT_EQ(empty_code, 0) << empty_output;
}

TEST(Palette, DistinctColours) {
  const auto& palette = plot_palette();
  ASSERT_GE(palette.size(), 6u);
  for (std::size_t i = 0; i < palette.size(); ++i) {
    for (std::size_t j = i + 1; j < palette.size(); ++j) EXPECT_NE(palette[i], palette[j]);
  }
}

}  // namespace
}  // namespace credence
