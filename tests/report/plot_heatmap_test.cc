// The heat map (plot_heatmap.h): well-formed SVG (Python's xml.etree), one labelled cell
// per grid point, diverged and chosen cells marked, text contrast by the WCAG 2.1
// formula, and a page of heat maps that renders cleanly in headless Chromium
// (tests/tools/render_check.py, as the other report tests use).
#include "credence/plot_heatmap.h"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <limits>

#include "credence/html_report.h"
#include "report/report_testing.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::svg_elements;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

HeatMapChart sample_map() {
  HeatMapChart map;
  map.title = "rsghmc: ESS per 1000 gradients <&>";
  map.x_label = "max move per step";
  map.y_label = "rest mass m";
  map.x_labels = {"0.003", "0.01", "0.03"};
  map.y_labels = {"0.1", "1"};
  map.values = {12.5, 30.25, kNaN, 8, 41, 17};
  map.diverged = {false, false, true, false, false, false};
  map.chosen = 4;
  return map;
}

TEST(HeatMap, EveryCellIsDrawnLabelledAndMarked) {
  const std::string svg = render_heat_map(sample_map());
  const auto cells = svg_elements(svg, "g", "heat-cell");
  ASSERT_EQ(cells.size(), 6u);
  int diverged = 0, chosen = 0;
  for (const auto& c : cells) {
    diverged += c.count("data-diverged") > 0;
    if (c.count("data-chosen") > 0) {
      ++chosen;
      EXPECT_EQ(c.at("data-cell"), "4");
    }
  }
  EXPECT_EQ(diverged, 1);
  EXPECT_EQ(chosen, 1);
  EXPECT_EQ(svg_elements(svg, "rect", "chosen").size(), 1u);
  for (const char* value : {">12.5<", ">30.2<", ">41<", ">diverged<"}) {
    EXPECT_NE(svg.find(value), std::string::npos) << value;
  }
  EXPECT_NE(svg.find("rest mass m 1, max move per step 0.01: 41; the chosen cell"), std::string::npos);
  EXPECT_EQ(svg.find("<&>"), std::string::npos);  // the title is escaped
  EXPECT_NE(svg.find("chosen cell (heavy frame)"), std::string::npos);
  EXPECT_NE(svg.find("a chain diverged"), std::string::npos);

  testing::TempDir dir;
  const std::string path = dir.write("map.svg", svg);
  auto [code, output] = testing::run_python(dir, testing::kSvgCheckScript, "'" + path + "'");
  EXPECT_EQ(code, 0) << output;
}

TEST(HeatMap, EmptyGridSaysNoData) {
  HeatMapChart map;
  map.title = "nothing";
  const std::string svg = render_heat_map(map);
  EXPECT_NE(svg.find("no data"), std::string::npos);
  EXPECT_TRUE(svg_elements(svg, "g", "heat-cell").empty());
}

TEST(HeatColour, RampEndsAndReadableText) {
  EXPECT_EQ(heat_colour(0), "#f3ede0");
  EXPECT_EQ(heat_colour(0.5), "#9cb8e0");
  EXPECT_EQ(heat_colour(1), "#1f3c86");
  EXPECT_EQ(heat_colour(7), heat_colour(1));  // clamped
  // WCAG 2.1's definition: black on white is 21:1, a colour on itself 1:1.
  EXPECT_NEAR(contrast_ratio("#000000", "#ffffff"), 21.0, 1e-12);
  EXPECT_NEAR(contrast_ratio("#3968cd", "#3968cd"), 1.0, 1e-12);
  // Along the whole ramp, and on the no-value grey, the cell text reaches 4.5:1 (WCAG 2.1
  // success criterion 1.4.3, normal text).
  for (int k = 0; k <= 100; ++k) {
    const std::string fill = heat_colour(k / 100.0);
    EXPECT_GE(contrast_ratio(fill, cell_text_colour(fill)), 4.5) << fill;
  }
  EXPECT_GE(contrast_ratio("#ffffff", cell_text_colour("#ffffff")), 4.5);  // no value
  EXPECT_GE(contrast_ratio("#f2e4dc", cell_text_colour("#f2e4dc")), 4.5);  // diverged
  EXPECT_GE(contrast_ratio("#f2e4dc", "#792603"), 4.5);  // its "diverged" label
}

TEST(HeatMap, PageOfHeatMapsRendersInChromium) {
  const char* chromium = "/usr/bin/chromium";
  if (!std::filesystem::exists(chromium)) {
    GTEST_SKIP() << "no " << chromium << ": install Debian's chromium package "
                 << "(scripts/bootstrap does) to run the browser check";
  }
  HtmlReport page("credence sweep: cold-store units");
  page.section("Tuning map of rsghmc");
  HeatMapChart map = sample_map();
  page.figure(render_heat_map(map), "Higher is better.");
  map.title = "rsghmc: mean |v|/c";
  map.values = {0.99, 0.8, kNaN, 0.45, 0.2, kNaN};
  page.figure(render_heat_map(map), "About 0.5 is the usual target.");
  page.cautions();
  testing::TempDir dir;
  const std::string path = dir.write("report.html", page.render());
  auto [code, output] = testing::run_shell(
      std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
      "/tests/tools/render_check.py' '" + path + "' --chromium " + chromium +
      " --expect-svg 2 --expect-sections 2");
  EXPECT_EQ(code, 0) << output;
}

}  // namespace
}  // namespace credence
