// Tests of binning, ECE, MCE and reliability curves (src/metrics/calibration.cc), docs/methods.md 9.3.
#include <gtest/gtest.h>

#include <cmath>

#include "credence/metrics.h"
#include "metrics/worked_example.h"

namespace credence {
namespace {

using testing::example_mean;
using testing::kExampleLabels;

TEST(TopLabelEce, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": ECE 0.2 and MCE 0.4 for M = 5, 10 and 15.
  for (int m : {5, 10, 15}) {
    const ReliabilityTable t = top_label_reliability(example_mean(), kExampleLabels, m);
    EXPECT_NEAR(t.ece, 0.2, 1e-15) << "M = " << m;
    EXPECT_NEAR(t.mce, 0.4, 1e-15) << "M = " << m;
    EXPECT_EQ(t.rows.size(), static_cast<std::size_t>(m));
  }
  // M = 5: bins 1, 2, 3 hold 1, 2, 3 rows with (acc, conf) = (0, 0.4), (0.5, 0.5), (1, 0.7333).
  const ReliabilityTable t = top_label_reliability(example_mean(), kExampleLabels, 5);
  const std::int64_t counts[] = {0, 1, 2, 3, 0};
  for (int b = 0; b < 5; ++b) EXPECT_EQ(t.rows[static_cast<std::size_t>(b)].count, counts[b]);
  EXPECT_DOUBLE_EQ(t.rows[1].accuracy, 0.0);
  EXPECT_DOUBLE_EQ(t.rows[1].mean_confidence, 0.4);
  EXPECT_DOUBLE_EQ(t.rows[2].accuracy, 0.5);
  EXPECT_DOUBLE_EQ(t.rows[2].mean_confidence, 0.5);
  EXPECT_DOUBLE_EQ(t.rows[3].accuracy, 1.0);
  EXPECT_NEAR(t.rows[3].mean_confidence, 2.2 / 3, 1e-15);
  EXPECT_DOUBLE_EQ(t.rows[3].lo, 0.6000000000000001);  // NumPy: 3 * 0.2
  EXPECT_DOUBLE_EQ(t.rows[3].hi, 0.8);
  // Empty bins: count 0, NaN means (not a made-up value).
  EXPECT_TRUE(std::isnan(t.rows[0].accuracy));
  EXPECT_TRUE(std::isnan(t.rows[4].mean_confidence));
}

TEST(TopLabelEce, EqualMassMatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": equal-mass ECE 0.2 (M = 2) and 0.1333333 (M = 3).
  const ReliabilityTable t2 =
      top_label_reliability(example_mean(), kExampleLabels, 2, Binning::kEqualMass);
  EXPECT_NEAR(t2.ece, 0.2, 1e-15);
  const ReliabilityTable t3 =
      top_label_reliability(example_mean(), kExampleLabels, 3, Binning::kEqualMass);
  EXPECT_NEAR(t3.ece, 0.4 / 3, 1e-15);
  EXPECT_EQ(t3.rows[0].count, 2);
  EXPECT_DOUBLE_EQ(t3.rows[0].lo, 0.4);
  EXPECT_DOUBLE_EQ(t3.rows[2].hi, 0.8);
  // More bins than rows: floor(b n / M) leaves some bins empty, the rest hold one row.
  const ReliabilityTable t9 =
      top_label_reliability(example_mean(), kExampleLabels, 9, Binning::kEqualMass);
  std::int64_t total = 0;
  for (const ReliabilityBin& b : t9.rows) total += b.count;
  EXPECT_EQ(total, 6);
  EXPECT_EQ(t9.rows[0].count, 0);
  EXPECT_TRUE(std::isnan(t9.rows[0].lo));
}

TEST(ClasswiseEce, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": 0.1611111 (M = 5), 0.1833333 (M = 10).
  EXPECT_NEAR(classwise_ece(example_mean(), kExampleLabels, 5), 0.1611111, 5e-8);
  EXPECT_NEAR(classwise_ece(example_mean(), kExampleLabels, 10), 0.1833333, 5e-8);
}

TEST(EqualWidthBins, EdgesAreNumpyLinspaceAndRightClosed) {
  // Source: docs/methods.md 9.3 (NumPy's linspace edges; searchsorted side='left').
  const std::vector<double> e = equal_width_edges(10);
  EXPECT_EQ(e[3], 0.30000000000000004);  // 3 * 0.1 in double, as NumPy computes it
  EXPECT_EQ(e[10], 1.0);
  EXPECT_EQ(equal_width_bin(0.30000000000000004, 10), 2);  // at the edge: the lower bin
  EXPECT_EQ(equal_width_bin(0.3, 10), 2);                  // below that edge
  EXPECT_EQ(equal_width_bin(std::nextafter(0.30000000000000004, 1.0), 10), 3);
  EXPECT_EQ(equal_width_bin(0.0, 10), 0);
  EXPECT_EQ(equal_width_bin(1.0, 10), 9);
  EXPECT_EQ(equal_width_bin(0.1, 10), 0);  // 0.1 is edge 1 exactly: right-closed
  EXPECT_EQ(equal_width_bin(0.7, 10), 6);  // edge 7 is 0.7000000000000001 > 0.7
  EXPECT_EQ(equal_width_bin(0.5, 1), 0);
  // ceil(p M) - 1 disagrees at 0.30000000000000004 (it gives 3), which is why the edges.
  EXPECT_EQ(static_cast<int>(std::ceil(0.30000000000000004 * 10)) - 1, 3);
}

TEST(PositiveClassCurve, MatchesScikitLearnWorkedExample) {
  // Source: docs/methods.md 9 "Test values" (scikit-learn 1.2.1 calibration_curve, M = 5).
  const std::vector<std::int32_t> y = {0, 0, 0, 0, 1, 1, 1, 1, 1, 0, 1, 0};
  const std::vector<double> q = {0.0, 0.1, 0.2, 0.2, 0.3, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 0.4};
  const int want_ids[] = {0, 0, 0, 0, 1, 2, 2, 3, 3, 4, 4, 1};
  for (std::size_t i = 0; i < q.size(); ++i) EXPECT_EQ(equal_width_bin(q[i], 5), want_ids[i]);

  const PositiveClassCurve u = positive_class_curve(q, y, 5, CurveEdges::kWidth);
  const std::vector<double> u_true = {0, 0.5, 1, 1, 0.5};
  const std::vector<double> u_pred = {0.125, 0.35, 0.55, 0.75, 0.95};
  ASSERT_EQ(u.observed.size(), 5u);
  for (std::size_t b = 0; b < 5; ++b) {
    EXPECT_NEAR(u.observed[b], u_true[b], 1e-15) << b;
    EXPECT_NEAR(u.mean_probability[b], u_pred[b], 1e-15) << b;
  }

  const PositiveClassCurve qc = positive_class_curve(q, y, 5, CurveEdges::kMass);
  const std::vector<double> edges = {0, 0.2, 0.34, 0.56, 0.78, 1};
  for (std::size_t b = 0; b < 6; ++b) EXPECT_NEAR(qc.edges[b], edges[b], 1e-15) << b;
  const std::vector<double> q_true = {0, 1, 0.5, 1, 2.0 / 3};
  const std::vector<double> q_pred = {0.125, 0.3, 0.45, 0.65, 0.9};
  ASSERT_EQ(qc.observed.size(), 5u);
  for (std::size_t b = 0; b < 5; ++b) {
    EXPECT_NEAR(qc.observed[b], q_true[b], 1e-15) << b;
    EXPECT_NEAR(qc.mean_probability[b], q_pred[b], 1e-15) << b;
  }
}

TEST(PositiveClassCurve, DropsEmptyBinsAndHandlesOneRow) {
  // Source: scikit-learn 1.2 calibration_curve drops bins with no rows (docs/methods.md 9.3).
  const std::vector<std::int32_t> y = {1};
  const std::vector<double> q = {0.42};
  const PositiveClassCurve u = positive_class_curve(q, y, 10, CurveEdges::kWidth);
  ASSERT_EQ(u.observed.size(), 1u);
  EXPECT_EQ(u.observed[0], 1.0);
  EXPECT_EQ(u.mean_probability[0], 0.42);
  EXPECT_EQ(u.counts[0], 1);
  // Quantile edges of one value collapse to it; the row lands in the first bin.
  const PositiveClassCurve qc = positive_class_curve(q, y, 10, CurveEdges::kMass);
  ASSERT_EQ(qc.observed.size(), 1u);
  EXPECT_EQ(qc.mean_probability[0], 0.42);
  // Top-label table with one row: ECE = |acc - conf|.
  Eigen::MatrixXd p(2, 1);
  p << 0.42, 0.58;
  const ReliabilityTable t = top_label_reliability(p, y, 10);
  EXPECT_NEAR(t.ece, 0.42, 1e-15);
  EXPECT_NEAR(t.mce, 0.42, 1e-15);
  const ReliabilityTable m = top_label_reliability(p, y, 3, Binning::kEqualMass);
  EXPECT_NEAR(m.ece, 0.42, 1e-15);
}

TEST(Percentile, FollowsNumpyLinearInterpolation) {
  // Source: NumPy percentile, method 'linear' (values worked by hand from its definition:
  // position (n - 1) q / 100 in the sorted data).
  const std::vector<double> v = {3, 1, 4, 1, 5};
  EXPECT_EQ(percentile_linear(v, 0), 1.0);
  EXPECT_EQ(percentile_linear(v, 100), 5.0);
  EXPECT_DOUBLE_EQ(percentile_linear(v, 50), 3.0);
  EXPECT_DOUBLE_EQ(percentile_linear(v, 60), 3.4);  // position 2.4: 3 + 0.4 * (4 - 3)
  EXPECT_DOUBLE_EQ(percentile_linear(v, 90), 4.6);  // position 3.6: 5 - 0.4 * (5 - 4)
}

}  // namespace
}  // namespace credence
