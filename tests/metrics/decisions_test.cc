// Threshold rules and decision rates on a worked example computed by hand (below), and
// the refusals of settings out of range.
#include <gtest/gtest.h>

#include <cmath>

#include "credence/metrics.h"

namespace credence {
namespace {

// Eight rows, four positive. Cutting below the k-th highest value gives (TP, FP):
// k=1 (1,0) k=2 (2,0) k=3 (2,1) k=4 (3,1) k=5 (3,2) k=6 (4,2) k=7 (4,3) k=8 (4,4).
const std::vector<double> kQ{0.9, 0.8, 0.7, 0.6, 0.4, 0.3, 0.2, 0.1};
const std::vector<std::uint8_t> kPositive{1, 1, 0, 1, 0, 1, 0, 0};

ThresholdChoice choose(const ThresholdSettings& s) {
  Result<ThresholdChoice> c = choose_threshold(kQ, kPositive, s);
  EXPECT_TRUE(c.ok()) << c.status().message();
  return c.ok() ? *c : ThresholdChoice{};
}

TEST(Decisions, RatesAtAThreshold) {
  // At 0.25: TP 4, FN 0, FP 2, TN 2 (by hand from the table above).
  const DecisionScores d = decide_at(kQ, kPositive, 0.25);
  EXPECT_EQ(d.counts.true_positive, 4);
  EXPECT_EQ(d.counts.false_positive, 2);
  EXPECT_EQ(d.counts.true_negative, 2);
  EXPECT_EQ(d.counts.false_negative, 0);
  EXPECT_DOUBLE_EQ(d.sensitivity, 1.0);
  EXPECT_DOUBLE_EQ(d.specificity, 0.5);
  EXPECT_DOUBLE_EQ(d.ppv, 4.0 / 6.0);
  EXPECT_DOUBLE_EQ(d.npv, 1.0);
  EXPECT_DOUBLE_EQ(d.f1, 0.8);  // 2*4 / (2*4 + 2 + 0)
  // q >= t: a row exactly at the threshold is called positive.
  EXPECT_EQ(decide_at(kQ, kPositive, 0.6).counts.true_positive, 3);
  // Nothing called positive: PPV is undefined, not 0.
  EXPECT_TRUE(std::isnan(decide_at(kQ, kPositive, 0.95).ppv));
}

TEST(Decisions, CostRuleMinimisesTotalCostAndPrefersTheHigherThreshold) {
  ThresholdSettings s;
  s.rule = ThresholdRule::kCost;
  // Equal costs: FP + FN is 2 at k = 2, 4 and 6; the highest threshold wins, halfway
  // between 0.8 and 0.7.
  ThresholdChoice c = choose(s);
  EXPECT_DOUBLE_EQ(c.threshold, 0.75);
  EXPECT_DOUBLE_EQ(c.mean_cost, 2.0 / 8.0);
  // A missed positive costs 5: k=6 costs 2 (FP 2, FN 0), k=4 costs 6, k=2 costs 10.
  s.cost_fn = 5;
  c = choose(s);
  EXPECT_DOUBLE_EQ(c.threshold, 0.25);
  EXPECT_EQ(c.on_choice_rows.counts.false_negative, 0);
}

TEST(Decisions, SensitivityRuleTakesTheHighestThresholdReachingTheTarget) {
  ThresholdSettings s;
  s.rule = ThresholdRule::kSensitivity;
  s.target_sensitivity = 0.75;  // TP >= 3: first at k = 4, between 0.6 and 0.4
  EXPECT_DOUBLE_EQ(choose(s).threshold, 0.5);
  s.target_sensitivity = 1.0;  // TP = 4 first at k = 6, between 0.3 and 0.2
  EXPECT_DOUBLE_EQ(choose(s).threshold, 0.25);
  EXPECT_DOUBLE_EQ(choose(s).on_choice_rows.sensitivity, 1.0);
}

TEST(Decisions, FixedRuleKeepsTheThresholdGiven) {
  ThresholdSettings s;
  s.threshold = 0.65;
  EXPECT_DOUBLE_EQ(choose(s).threshold, 0.65);
  EXPECT_TRUE(choose_threshold({}, {}, s).ok());  // needs no rows
}

TEST(Decisions, SettingsOutOfRangeAreRefused) {
  ThresholdSettings s;
  for (double t : {0.0, 1.0, -0.1, std::nan("")}) {
    s.threshold = t;
    EXPECT_FALSE(choose_threshold(kQ, kPositive, s).ok()) << t;
  }
  s = ThresholdSettings{};
  s.rule = ThresholdRule::kCost;
  s.cost_fp = 0;
  EXPECT_FALSE(choose_threshold(kQ, kPositive, s).ok());
  s.cost_fp = 1;
  EXPECT_FALSE(choose_threshold({}, {}, s).ok());  // nothing to choose on
  s = ThresholdSettings{};
  s.rule = ThresholdRule::kSensitivity;
  s.target_sensitivity = 0;
  EXPECT_FALSE(choose_threshold(kQ, kPositive, s).ok());
  s.target_sensitivity = 0.9;
  const std::vector<std::uint8_t> none(kQ.size(), 0);
  EXPECT_FALSE(choose_threshold(kQ, none, s).ok());
}

TEST(Decisions, CurvesAreUndefinedWithoutBothClasses) {
  const std::vector<std::uint8_t> none(kQ.size(), 0);
  const std::vector<std::uint8_t> all(kQ.size(), 1);
  EXPECT_FALSE(precision_recall_curve(kQ, none).has_value());
  EXPECT_TRUE(precision_recall_curve(kQ, all).has_value());
  EXPECT_FALSE(roc_curve(kQ, none).has_value());
  EXPECT_FALSE(roc_curve(kQ, all).has_value());
}

}  // namespace
}  // namespace credence
