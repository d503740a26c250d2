// The report's two-class section: precision-recall, ROC and positive-class reliability
// figures drawn from the decisions assess computed (issue 19).
#include <gtest/gtest.h>

#include <string>

#include "credence/html_report.h"
#include "report/decision_figures.h"
#include "report/report_testing.h"

namespace credence {
namespace {

// scikit-learn's documented examples (the docstrings of average_precision_score and
// roc_curve, scikit-learn 1.2): y = [0, 0, 1, 1], scores [0.1, 0.4, 0.35, 0.8] give
// average precision 0.83 (5/6), ROC points fpr [0, 0, 0.5, 0.5, 1], tpr [0, 0.5, 0.5, 1, 1]
// and area 0.75.
MethodRun worked_example(const std::string& label) {
  MethodRun run;
  run.label = label;
  const std::vector<double> q = {0.1, 0.4, 0.35, 0.8};
  const std::vector<std::uint8_t> positive = {0, 0, 1, 1};
  DecisionReport d;
  d.precision_recall = precision_recall_curve(q, positive);
  d.roc = roc_curve(q, positive, false);
  d.at_threshold = decide_at(q, positive, 0.5);
  run.assessment.decisions = d;
  run.assessment.positive = PositiveClass{1, "fault", "--positive-class"};
  PositiveClassCurve curve;
  curve.mean_probability = {0.2, 0.6};
  curve.observed = {0.25, 0.7};
  curve.counts = {2, 2};
  run.assessment.scored.metrics.curve_width = curve;
  return run;
}

TEST(DecisionFigures, ChartsCarryTheCurvesAndTheirAreas) {
  const std::vector<MethodRun> runs = {worked_example("adam")};
  const LineChart pr = report::precision_recall_chart(runs);
  ASSERT_EQ(pr.series.size(), 1u);
  EXPECT_EQ(pr.series[0].name, "adam  AP 0.833");  // 5/6, scikit-learn's docstring
  EXPECT_EQ(pr.x_label, "recall");
  const LineChart roc = report::roc_chart(runs);
  ASSERT_EQ(roc.series.size(), 1u);
  EXPECT_EQ(roc.series[0].name, "adam  area 0.750");  // scikit-learn's docstring
  EXPECT_EQ(roc.series[0].x, (std::vector<double>{0, 0, 0.5, 0.5, 1}));
  EXPECT_EQ(roc.series[0].y, (std::vector<double>{0, 0.5, 0.5, 1, 1}));
  EXPECT_TRUE(roc.diagonal);
  const LineChart rel = report::positive_reliability_chart(runs);
  ASSERT_EQ(rel.series.size(), 1u);
  EXPECT_EQ(rel.series[0].x, (std::vector<double>{0.2, 0.6}));
  EXPECT_EQ(rel.series[0].y, (std::vector<double>{0.25, 0.7}));
  EXPECT_TRUE(rel.diagonal);
}

// The diagonal is drawn from (0, 0) to (1, 1) of the plot area and named in the legend.
TEST(DecisionFigures, RocChartDrawsTheChanceDiagonal) {
  const std::string svg = render_line_chart(report::roc_chart({worked_example("adam")}));
  const auto diagonal = testing::svg_elements(svg, "line", "diagonal");
  ASSERT_EQ(diagonal.size(), 1u) << svg;
  EXPECT_LT(testing::number(diagonal[0], "x1"), testing::number(diagonal[0], "x2"));
  EXPECT_GT(testing::number(diagonal[0], "y1"), testing::number(diagonal[0], "y2"));
  EXPECT_NE(svg.find(">chance</text>"), std::string::npos) << svg;
  EXPECT_EQ(testing::svg_elements(render_line_chart(LineChart{}), "line", "diagonal").size(), 0u);
}

TEST(DecisionFigures, SectionShowsTableFiguresAndNumbersInWords) {
  HtmlReport page("t");
  report::decisions_section(page, {worked_example("adam"), worked_example("sgld")});
  const std::string html = page.render();
  EXPECT_NE(html.find("Positive class: fault (chosen by --positive-class)"), std::string::npos);
  EXPECT_NE(html.find("aria-label=\"Precision against recall (fault)\""), std::string::npos);
  EXPECT_NE(html.find("aria-label=\"ROC curve (fault)\""), std::string::npos);
  // Two methods: the positive-class curve as one panel per method (1 + 2 <svg>).
  EXPECT_NE(html.find("class=\"panel\" data-panel=\"1\""), std::string::npos);
  EXPECT_NE(html.find("Average precision (the step-wise area under the curve): adam 0.833, "
                      "sgld 0.833"),
            std::string::npos) << html;
  EXPECT_NE(html.find("precision 0.500 (the share of fault rows)"), std::string::npos);
  EXPECT_NE(html.find("<th class=\"num\">ROC area</th>"), std::string::npos);

  HtmlReport none("t");  // more than two classes: no decisions, no section
  MethodRun many;
  report::decisions_section(none, {many});
  EXPECT_EQ(none.render().find("Decisions"), std::string::npos);
}

}  // namespace
}  // namespace credence
