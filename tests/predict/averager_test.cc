// EnsembleAverager against the worked values of docs/methods.md section 9.1 / "Test values"
// (two members, three classes, six rows; derived there with numpy in double precision).
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "credence/predict.h"

namespace credence {
namespace {

Eigen::MatrixXd log_of(std::initializer_list<std::initializer_list<double>> rows_by_class) {
  // Input is written one data row per line, as in docs/methods.md; the averager takes (K, B).
  const auto b = static_cast<Index>(rows_by_class.size());
  const auto k = static_cast<Index>(rows_by_class.begin()->size());
  Eigen::MatrixXd out(k, b);
  Index j = 0;
  for (const auto& row : rows_by_class) {
    Index i = 0;
    for (double p : row) out(i++, j) = std::log(p);
    ++j;
  }
  return out;
}

TEST(EnsembleAverager, MatchesMethodsWorkedExample) {
  const Eigen::MatrixXd p1 =
      log_of({{.7, .2, .1}, {.1, .8, .1}, {.3, .3, .4}, {.6, .3, .1}, {.2, .2, .6}, {.5, .4, .1}});
  const Eigen::MatrixXd p2 = log_of(
      {{.9, .05, .05}, {.3, .6, .1}, {.2, .5, .3}, {.2, .7, .1}, {.1, .1, .8}, {.3, .6, .1}});
  EnsembleAverager averager;
  averager.reset(3, 6);
  averager.add_member(p1);
  averager.add_member(p2);
  Prediction out;
  averager.finish(out);

  const double pbar[6][3] = {{.8, .125, .075}, {.2, .7, .1},   {.25, .4, .35},
                             {.4, .5, .1},     {.15, .15, .7}, {.4, .5, .1}};
  const double h[6] = {0.632715, 0.801819, 1.080528, 0.943348, 0.818808, 0.943348};
  const double eh[6] = {0.598108, 0.768489, 1.059276, 0.849882, 0.794651, 0.920647};
  const double mi[6] = {0.034607, 0.033330, 0.021251, 0.093466, 0.024157, 0.022701};
  const int predicted[6] = {0, 1, 1, 1, 2, 1};
  const double confidence[6] = {0.8, 0.7, 0.4, 0.5, 0.7, 0.5};
  for (Index b = 0; b < 6; ++b) {
    for (Index k = 0; k < 3; ++k) EXPECT_NEAR(out.probabilities(k, b), pbar[b][k], 1e-12) << b;
    // docs/methods.md prints six decimals.
    EXPECT_NEAR(out.entropy(b), h[b], 1e-6) << "row " << b;
    EXPECT_NEAR(out.expected_entropy(b), eh[b], 1e-6) << "row " << b;
    EXPECT_NEAR(out.mutual_information(b), mi[b], 1e-6) << "row " << b;
    EXPECT_EQ(out.predicted[static_cast<std::size_t>(b)], predicted[b]) << "row " << b;
    EXPECT_NEAR(out.confidence(b), confidence[b], 1e-12) << "row " << b;
  }
  EXPECT_EQ(out.clamped, 0);
}

// docs/methods.md 9.1: members (1, 0) and (0, 1) give H = log 2, E H = 0, MI = log 2; this
// also checks 0 log 0 = 0 with log-probabilities of -infinity.
TEST(EnsembleAverager, DisagreeingCertainMembersGiveLog2) {
  const double inf = std::numeric_limits<double>::infinity();
  Eigen::MatrixXd a(2, 1), b(2, 1);
  a << 0.0, -inf;
  b << -inf, 0.0;
  EnsembleAverager averager;
  averager.reset(2, 1);
  averager.add_member(a);
  averager.add_member(b);
  Prediction out;
  averager.finish(out);
  EXPECT_NEAR(out.entropy(0), 0.6931471806, 1e-10);
  EXPECT_NEAR(out.expected_entropy(0), 0.0, 1e-15);
  EXPECT_NEAR(out.mutual_information(0), 0.6931471806, 1e-10);
  EXPECT_EQ(out.predicted[0], 0);  // tie: lowest index
  EXPECT_DOUBLE_EQ(out.confidence(0), 0.5);
}

// One member: H = E H exactly in exact arithmetic, so MI is 0 (or clamped from rounding).
TEST(EnsembleAverager, OneMemberHasNoEpistemicDoubt) {
  Eigen::MatrixXf l(3, 2);
  l << std::log(0.2f), std::log(0.5f), std::log(0.3f), std::log(0.25f), std::log(0.5f),
      std::log(0.25f);
  EnsembleAverager averager;
  averager.reset(3, 2);
  averager.add_member(l);
  Prediction out;
  averager.finish(out);
  for (Index b = 0; b < 2; ++b) {
    EXPECT_NEAR(out.mutual_information(b), 0.0, 1e-15);
    EXPECT_GE(out.mutual_information(b), 0.0);
  }
}

// Very negative log-probabilities (far below exp's double range) must not turn the
// average into 0/0: the running log-sum-exp keeps them.
TEST(EnsembleAverager, TinyProbabilitiesDoNotUnderflowTheAverage) {
  Eigen::MatrixXd a(2, 1), b(2, 1);
  a << -1000.0, 0.0;
  b << -1001.0, 0.0;
  EnsembleAverager averager;
  averager.reset(2, 1);
  averager.add_member(a);
  averager.add_member(b);
  Prediction out;
  averager.finish(out);
  EXPECT_EQ(out.predicted[0], 1);
  EXPECT_DOUBLE_EQ(out.probabilities(1, 0), 1.0);
  EXPECT_TRUE(std::isfinite(out.entropy(0)));
}

TEST(SpreadSamples, EvenlySpreadAndAllByDefault) {
  EXPECT_EQ(spread_samples(10, 5), (std::vector<Index>{0, 2, 4, 6, 8}));
  EXPECT_EQ(spread_samples(10, 3), (std::vector<Index>{0, 3, 6}));
  EXPECT_EQ(spread_samples(4, 0), (std::vector<Index>{0, 1, 2, 3}));
  EXPECT_EQ(spread_samples(4, 9), (std::vector<Index>{0, 1, 2, 3}));
  EXPECT_EQ(spread_samples(7, 1), (std::vector<Index>{0}));
}

}  // namespace
}  // namespace credence
