// Tests of the ensemble uncertainty split (src/metrics/uncertainty.cc) against docs/methods.md 9.1.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "credence/metrics.h"
#include "metrics/worked_example.h"
#include "testing/seed.h"

namespace credence {
namespace {

using testing::example_member;

TEST(UncertaintySplit, MatchesMethodsWorkedExample) {
  // Source: docs/methods.md 9 "Test values" (derived there with NumPy), six decimals given.
  const Eigen::MatrixXd logs[2] = {example_member(0).array().log(),
                                   example_member(1).array().log()};
  const UncertaintySplit split = split_uncertainty(logs);
  const double h[] = {0.632715, 0.801819, 1.080528, 0.943348, 0.818808, 0.943348};
  const double eh[] = {0.598108, 0.768489, 1.059276, 0.849882, 0.794651, 0.920647};
  const double mi[] = {0.034607, 0.033330, 0.021251, 0.093466, 0.024157, 0.022701};
  for (int i = 0; i < 6; ++i) {
    EXPECT_NEAR(split.total[i], h[i], 6e-7) << "row " << i;
    EXPECT_NEAR(split.expected[i], eh[i], 6e-7) << "row " << i;
    EXPECT_NEAR(split.mutual_info[i], mi[i], 6e-7) << "row " << i;
  }
  EXPECT_TRUE(split.log_mean.array().exp().isApprox(testing::example_mean().array(), 1e-14));
  EXPECT_EQ(split.clamped_rows, 0);
}

TEST(UncertaintySplit, TwoCertainDisagreeingMembersGiveLogTwo) {
  // Source: docs/methods.md 9 "Test values": members (1, 0) and (0, 1): H = MI = log 2, E H = 0.
  const double inf = std::numeric_limits<double>::infinity();
  UncertaintyAccumulator acc(2, 1);
  acc.add_member(Eigen::Vector2d(0.0, -inf));
  acc.add_member(Eigen::Vector2d(-inf, 0.0));
  const UncertaintySplit split = acc.finish();
  EXPECT_NEAR(split.total[0], 0.6931471806, 1e-10);
  EXPECT_EQ(split.expected[0], 0.0);
  EXPECT_NEAR(split.mutual_info[0], std::log(2.0), 1e-15);
}

Eigen::MatrixXd random_log_probs(std::mt19937_64& gen, Eigen::Index k, Eigen::Index n,
                                 double scale) {
  std::normal_distribution<double> normal(0.0, scale);
  Eigen::MatrixXd z(k, n);
  for (Eigen::Index i = 0; i < z.size(); ++i) z(i) = normal(gen);
  for (Eigen::Index i = 0; i < n; ++i) {
    const double top = z.col(i).maxCoeff();
    z.col(i).array() -= top + std::log((z.col(i).array() - top).exp().sum());
  }
  return z;
}

TEST(UncertaintySplit, OneMemberHasZeroMutualInformation) {
  // Source: definition (docs/methods.md 9.1): with S = 1, pbar = p_1 so H[pbar] = E H.
  std::mt19937_64 gen(testing::test_seed(501));
  const Eigen::MatrixXd one = random_log_probs(gen, 5, 200, 3.0);
  UncertaintyAccumulator acc(5, 200);
  acc.add_member(one);
  const UncertaintySplit split = acc.finish();
  EXPECT_EQ(split.mutual_info.maxCoeff(), 0.0);
  EXPECT_TRUE(split.total.isApprox(split.expected, 1e-15));
}

TEST(UncertaintySplit, TotalIsExpectedPlusMutualInformationAndMatchesDirectAverage) {
  // Source: definition H = E H + MI (docs/methods.md 9.1), and pbar computed directly as the
  // plain mean of exp(log p_s) (common practice, no outside source).
  std::mt19937_64 gen(testing::test_seed(502));
  std::vector<Eigen::MatrixXd> members;
  for (int s = 0; s < 7; ++s) members.push_back(random_log_probs(gen, 4, 300, 2.0));
  const UncertaintySplit split = split_uncertainty(members);
  Eigen::MatrixXd mean = Eigen::MatrixXd::Zero(4, 300);
  for (const auto& m : members) mean += m.array().exp().matrix() / 7.0;
  EXPECT_TRUE(split.log_mean.array().exp().isApprox(mean.array(), 1e-13));
  EXPECT_EQ(split.clamped_rows, 0);
  EXPECT_GT(split.mutual_info.minCoeff(), 0.0);
  for (Eigen::Index i = 0; i < 300; ++i) {
    EXPECT_NEAR(split.total[i], split.expected[i] + split.mutual_info[i], 1e-12);
  }
}

TEST(UncertaintySplit, WeightsAreNormalisedByTheirTotal) {
  // Source: definition pbar = sum_s w_s p_s with sum w_s = 1 (docs/methods.md 9.1).
  const Eigen::MatrixXd a = example_member(0).array().log();
  const Eigen::MatrixXd b = example_member(1).array().log();
  UncertaintyAccumulator acc(3, 6);
  acc.add_member(a, 3.0);
  acc.add_member(b, 1.0);
  const UncertaintySplit split = acc.finish();
  const Eigen::MatrixXd want = 0.75 * example_member(0) + 0.25 * example_member(1);
  EXPECT_TRUE(split.log_mean.array().exp().isApprox(want.array(), 1e-14));
}

}  // namespace
}  // namespace credence
