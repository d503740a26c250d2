// Tests of accuracy, NLL and Brier scores (src/metrics/scores.cc) against docs/methods.md 9.2.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "credence/metrics.h"
#include "metrics/worked_example.h"

namespace credence {
namespace {

using testing::example_mean;
using testing::kExampleLabels;

TEST(Scores, MatchMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values"; NLL there equals scikit-learn's log_loss.
  const Eigen::MatrixXd p = example_mean();
  const std::vector<std::int32_t> want_pred = {0, 1, 1, 1, 2, 1};
  EXPECT_EQ(predicted_classes(p), want_pred);
  const double conf[] = {0.8, 0.7, 0.4, 0.5, 0.7, 0.5};
  const Eigen::VectorXd got_conf = top_confidence(p);
  for (int i = 0; i < 6; ++i) EXPECT_DOUBLE_EQ(got_conf[i], conf[i]);
  EXPECT_DOUBLE_EQ(accuracy_score(p, kExampleLabels), 2.0 / 3.0);
  EXPECT_NEAR(negative_log_likelihood(p.array().log().matrix(), kExampleLabels), 0.5992922460,
              1e-10);
  EXPECT_NEAR(brier_score(p, kExampleLabels), 0.336875, 1e-15);
}

TEST(Scores, TiesGoToTheLowestClassIndex) {
  // Source: docs/methods.md 9.2 tie rule.
  Eigen::MatrixXd p(3, 2);
  p << 0.4, 0.2, 0.4, 0.4, 0.2, 0.4;
  EXPECT_EQ(predicted_classes(p), (std::vector<std::int32_t>{0, 1}));
  EXPECT_DOUBLE_EQ(accuracy_score(p, std::vector<std::int32_t>{1, 1}), 0.5);
}

TEST(Scores, BinaryBrierMatchesScikitLearnValuesAndHalvesMultiClass) {
  // Source: docs/methods.md 9 "Test values" (scikit-learn 1.2.1 brier_score_loss, run there).
  const std::vector<std::int32_t> y = {0, 0, 0, 0, 1, 1, 1, 1, 1, 0, 1, 0};
  const std::vector<double> q = {0.0, 0.1, 0.2, 0.2, 0.3, 0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 0.4};
  EXPECT_NEAR(binary_brier_score(q, y), 0.17416666667, 1e-11);
  const std::vector<std::int32_t> y2 = {0, 1, 1, 0};
  const std::vector<double> q2 = {.1, .9, .8, .3};
  EXPECT_NEAR(binary_brier_score(q2, y2), 0.0375, 1e-15);
  // Source: docs/methods.md 9.2: for K = 2 the multi-class value is twice the binary one.
  Eigen::MatrixXd p(2, 4);
  for (int i = 0; i < 4; ++i) {
    p(1, i) = q2[static_cast<std::size_t>(i)];
    p(0, i) = 1 - p(1, i);
  }
  EXPECT_NEAR(binary_brier_score(p, y2), 0.0375, 1e-15);
  EXPECT_NEAR(brier_score(p, y2), 2 * 0.0375, 1e-15);
}

TEST(Scores, OneRowAndZeroProbabilityLabel) {
  // Source: definitions (docs/methods.md 9.2) evaluated by hand.
  Eigen::MatrixXd p(2, 1);
  p << 0.25, 0.75;
  const std::vector<std::int32_t> y = {0};
  EXPECT_EQ(accuracy_score(p, y), 0.0);
  EXPECT_DOUBLE_EQ(negative_log_likelihood(p.array().log().matrix(), y), -std::log(0.25));
  EXPECT_DOUBLE_EQ(brier_score(p, y), 0.75 * 0.75 * 2);
  Eigen::MatrixXd logp(2, 1);
  logp << -std::numeric_limits<double>::infinity(), 0.0;
  EXPECT_EQ(negative_log_likelihood(logp, y), std::numeric_limits<double>::infinity());
}

TEST(InputChecks, NameTheRowAndWhatIsWrong) {
  // Source: STYLE.md rule 17 (message says what failed, where, what to do).
  Eigen::MatrixXd p(2, 3);
  p << 0.5, 0.2, 1.2, 0.5, 0.8, -0.2;
  const std::vector<std::int32_t> y = {0, 1, 0};
  Status s = check_probabilities(p, y);
  EXPECT_EQ(s.code(), StatusCode::kInvalidInput);
  EXPECT_NE(s.message().find("row 2"), std::string::npos) << s.message();
  EXPECT_NE(s.message().find("outside [0, 1]"), std::string::npos) << s.message();
  p(0, 2) = 0.3;
  p(1, 2) = 0.3;
  s = check_probabilities(p, y);
  EXPECT_NE(s.message().find("row 2 sums to"), std::string::npos) << s.message();
  p(1, 2) = 0.7;
  EXPECT_TRUE(check_probabilities(p, y).ok());
  s = check_probabilities(p, std::vector<std::int32_t>{0, 2, 0});
  EXPECT_NE(s.message().find("row 1 has label 2"), std::string::npos) << s.message();
  s = check_probabilities(p, std::vector<std::int32_t>{0, 1});
  EXPECT_NE(s.message().find("3 rows of probabilities but 2 labels"), std::string::npos);
  s = check_log_probabilities(p, y);  // probabilities passed where logs are expected
  EXPECT_EQ(s.code(), StatusCode::kInvalidInput);
  EXPECT_NE(s.message().find("row 0"), std::string::npos) << s.message();
  EXPECT_TRUE(check_log_probabilities(p.array().log().matrix(), y).ok());
}

}  // namespace
}  // namespace credence
