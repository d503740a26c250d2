// Tests of AUROC and accuracy-rejection curves (src/metrics/selective.cc), docs/methods.md 9.5.
#include <gtest/gtest.h>

#include <cmath>

#include "credence/metrics.h"
#include "metrics/worked_example.h"

namespace credence {
namespace {

using testing::example_mean;
using testing::kExampleLabels;

TEST(Auroc, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": AUROC(correct vs conf) = AUROC(correct vs -H) = 0.9375.
  const Eigen::MatrixXd p = example_mean();
  const std::vector<std::uint8_t> correct = correct_predictions(p, kExampleLabels);
  EXPECT_EQ(correct, (std::vector<std::uint8_t>{1, 1, 0, 1, 1, 0}));
  const Eigen::VectorXd conf = top_confidence(p);
  const Eigen::VectorXd neg_h = -entropy_from_log(p.array().log().matrix());
  EXPECT_DOUBLE_EQ(*auroc(std::span<const double>(conf.data(), 6), correct), 0.9375);
  EXPECT_DOUBLE_EQ(*auroc(std::span<const double>(neg_h.data(), 6), correct), 0.9375);
}

TEST(Auroc, CountsTiesOneHalfAndMatchesPairCounting) {
  // Source: the Mann-Whitney definition (docs/methods.md 9.5), counted pair by pair here.
  const std::vector<double> s = {0.1, 0.4, 0.4, 0.4, 0.9, 0.2, 0.9, 0.0};
  const std::vector<std::uint8_t> pos = {0, 1, 0, 1, 1, 0, 0, 1};
  double pairs = 0;
  double wins = 0;
  for (std::size_t i = 0; i < s.size(); ++i) {
    for (std::size_t j = 0; j < s.size(); ++j) {
      if (pos[i] == 0 || pos[j] != 0) continue;
      pairs += 1;
      wins += s[i] > s[j] ? 1.0 : (s[i] == s[j] ? 0.5 : 0.0);
    }
  }
  EXPECT_DOUBLE_EQ(*auroc(s, pos), wins / pairs);
  // All scores equal: every pair is a tie.
  EXPECT_DOUBLE_EQ(*auroc(std::vector<double>(4, 0.3), std::vector<std::uint8_t>{1, 0, 1, 0}), 0.5);
}

TEST(Auroc, UndefinedWithoutBothClasses) {
  // Documented behaviour (metrics.h): one-class input has no AUROC; scikit-learn raises.
  EXPECT_FALSE(auroc(std::vector<double>{0.2, 0.7}, std::vector<std::uint8_t>{1, 1}).has_value());
  EXPECT_FALSE(auroc(std::vector<double>{0.5}, std::vector<std::uint8_t>{0}).has_value());
  // A class absent from the labels is left out of the macro average.
  Eigen::MatrixXd p(3, 4);
  p << 0.7, 0.2, 0.6, 0.1,  //
      0.2, 0.7, 0.3, 0.8,   //
      0.1, 0.1, 0.1, 0.1;
  const std::vector<std::int32_t> y = {0, 1, 0, 1};
  const OneVsRestAuroc ovr = auroc_one_vs_rest(p, y);
  EXPECT_EQ(ovr.classes_scored, 2);
  EXPECT_TRUE(std::isnan(ovr.per_class[2]));
  EXPECT_DOUBLE_EQ(ovr.per_class[0], 1.0);
  EXPECT_DOUBLE_EQ(ovr.per_class[1], 1.0);
  EXPECT_DOUBLE_EQ(*ovr.macro, 1.0);
  const OneVsRestAuroc none = auroc_one_vs_rest(p.leftCols(1), std::vector<std::int32_t>{0});
  EXPECT_EQ(none.classes_scored, 0);
  EXPECT_FALSE(none.macro.has_value());
}

TEST(AccuracyRejection, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values": acc_k = 1, 1, 1, 1, 0.8, 0.6667; AURC = 0.0888889.
  const Eigen::MatrixXd p = example_mean();
  const std::vector<std::uint8_t> correct = correct_predictions(p, kExampleLabels);
  const Eigen::VectorXd neg_conf = -top_confidence(p);
  const RejectionCurve c = accuracy_rejection(std::span<const double>(neg_conf.data(), 6), correct);
  const double acc[] = {1, 1, 1, 1, 0.8, 2.0 / 3};
  for (std::size_t k = 0; k < 6; ++k) {
    EXPECT_NEAR(c.accuracy[k], acc[k], 1e-15) << k;
    EXPECT_NEAR(c.coverage[k], static_cast<double>(k + 1) / 6, 1e-15);
  }
  EXPECT_NEAR(c.aurc, (0.2 + 1.0 / 3) / 6, 1e-15);
  EXPECT_NEAR(c.aurc, 0.0888889, 5e-8);
  EXPECT_EQ(c.accuracy_at_50, 1.0);               // k = 3
  EXPECT_EQ(c.accuracy_at_80, 0.8);               // 0.8 * 6 = 4.800000000000001: k = 5
  EXPECT_NEAR(c.accuracy_at_90, 2.0 / 3, 1e-15);  // 0.9 * 6 = 5.4: k = 6
  EXPECT_NEAR(c.accuracy_at_100, 2.0 / 3, 1e-15);
}

TEST(AccuracyRejection, TiesKeepRowOrder) {
  // Source: docs/methods.md 9.5 (stable tie rule is the contract).
  const std::vector<double> u = {0.5, 0.5, 0.5};
  const RejectionCurve a = accuracy_rejection(u, std::vector<std::uint8_t>{0, 1, 1});
  EXPECT_EQ(a.accuracy[0], 0.0);
  const RejectionCurve b = accuracy_rejection(u, std::vector<std::uint8_t>{1, 0, 1});
  EXPECT_EQ(b.accuracy[0], 1.0);
  const RejectionCurve one =
      accuracy_rejection(std::vector<double>{2.0}, std::vector<std::uint8_t>{1});
  EXPECT_EQ(one.accuracy_at_50, 1.0);
  EXPECT_EQ(one.aurc, 0.0);
}

}  // namespace
}  // namespace credence
