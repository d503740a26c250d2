// Tests of assess_predictions (src/metrics/assess.cc): the worked example end to end.
#include <gtest/gtest.h>

#include <cmath>

#include "credence/metrics.h"
#include "metrics/worked_example.h"

namespace credence {
namespace {

using testing::example_member;
using testing::kExampleLabels;

TEST(AssessPredictions, GathersTheMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values" (every number below is listed there).
  const Eigen::MatrixXd logs[2] = {example_member(0).array().log(),
                                   example_member(1).array().log()};
  const UncertaintySplit split = split_uncertainty(logs);
  AssessSettings settings;
  settings.bins = 5;
  settings.classwise_bins = 10;
  settings.bootstrap.resamples = 50;
  // log of the exact pbar: the example's tied confidences (0.5, 0.5 and 0.7, 0.7) must stay
  // tied, and split.log_mean, summed in log space, may differ from them in the last bit.
  const Eigen::MatrixXd log_pbar = testing::example_mean().array().log();
  const Result<Assessment> a = assess_predictions(log_pbar, kExampleLabels, settings, &split);
  ASSERT_TRUE(a.ok()) << a.status().to_string();
  EXPECT_EQ(a->rows, 6);
  EXPECT_EQ(a->classes, 3);
  EXPECT_NEAR(a->accuracy, 2.0 / 3, 1e-15);
  EXPECT_NEAR(a->nll, 0.5992922460, 1e-10);
  EXPECT_NEAR(a->brier, 0.336875, 1e-14);
  EXPECT_FALSE(a->brier_binary.has_value());
  EXPECT_NEAR(a->width_bins.ece, 0.2, 1e-14);
  EXPECT_NEAR(a->width_bins.mce, 0.4, 1e-14);
  EXPECT_NEAR(a->classwise_ece, 0.1833333, 5e-8);
  EXPECT_NEAR(*a->misclassification_auroc, 0.9375, 1e-15);
  EXPECT_NEAR(a->rejection_by_confidence.aurc, 0.0888889, 5e-8);
  ASSERT_TRUE(a->rejection_by_mutual_info.has_value());
  EXPECT_EQ(a->rejection_by_mutual_info->accuracy.size(), 6u);
  ASSERT_TRUE(a->intervals.has_value());
  EXPECT_LE(a->intervals->nll.lo, a->intervals->nll.hi);
  EXPECT_FALSE(a->curve_width.has_value());
}

TEST(AssessPredictions, RejectsBadInputWithAClearMessage) {
  // Source: STYLE.md rules 16-17 (expected failures are values with a useful message).
  Eigen::MatrixXd log_p = example_member(0).array().log();
  std::vector<std::int32_t> y = kExampleLabels;
  y[4] = 7;
  Result<Assessment> a = assess_predictions(log_p, y, AssessSettings{});
  ASSERT_FALSE(a.ok());
  EXPECT_NE(a.status().message().find("row 4 has label 7"), std::string::npos);
  AssessSettings bad;
  bad.bins = 0;
  a = assess_predictions(log_p, kExampleLabels, bad);
  ASSERT_FALSE(a.ok());
  EXPECT_NE(a.status().message().find("bin counts"), std::string::npos);
}

TEST(AssessPredictions, BinaryTaskAddsPositiveClassQuantities) {
  // Source: docs/methods.md 9 "Test values" binary example (brier_score_loss = 0.0375).
  Eigen::MatrixXd p(2, 4);
  p << .9, .1, .2, .7, .1, .9, .8, .3;
  const std::vector<std::int32_t> y = {0, 1, 1, 0};
  AssessSettings settings;
  settings.bootstrap.resamples = 0;
  const Result<Assessment> a = assess_predictions(p.array().log().matrix(), y, settings);
  ASSERT_TRUE(a.ok());
  EXPECT_NEAR(*a->brier_binary, 0.0375, 1e-15);
  EXPECT_NEAR(a->brier, 0.075, 1e-15);
  ASSERT_TRUE(a->curve_width.has_value());
  EXPECT_EQ(a->curve_width->observed.size(), 4u);
  EXPECT_FALSE(a->intervals.has_value());
  EXPECT_DOUBLE_EQ(*a->class_auroc.macro, 1.0);
}

}  // namespace
}  // namespace credence
