// Tests of the seeded bootstrap intervals (src/metrics/bootstrap.cc).
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "credence/metrics.h"
#include "testing/seed.h"

namespace credence {
namespace {

struct Rows {
  Eigen::MatrixXd log_p;  // (K, n)
  std::vector<std::int32_t> labels;
};

Rows random_rows(std::uint64_t seed, Eigen::Index n) {
  std::mt19937_64 gen(seed);
  std::normal_distribution<double> normal(0.0, 1.5);
  Rows r{Eigen::MatrixXd(3, n), std::vector<std::int32_t>(static_cast<std::size_t>(n))};
  for (Eigen::Index i = 0; i < n; ++i) {
    for (Eigen::Index k = 0; k < 3; ++k) r.log_p(k, i) = normal(gen);
    const double top = r.log_p.col(i).maxCoeff();
    r.log_p.col(i).array() -= top + std::log((r.log_p.col(i).array() - top).exp().sum());
    r.labels[static_cast<std::size_t>(i)] = static_cast<std::int32_t>(gen() % 3);
  }
  return r;
}

TEST(Bootstrap, IsDeterministicForASeedAndCoversThePointEstimate) {
  // Common practice (percentile bootstrap), no outside reference: same seed, same numbers;
  // the interval brackets the full-sample value and has a plausible width.
  const Rows r = random_rows(testing::test_seed(71), 2000);
  BootstrapSettings s;
  s.resamples = 300;
  s.seed = 5;
  const BootstrapIntervals a = bootstrap_intervals(r.log_p, r.labels, s);
  const BootstrapIntervals b = bootstrap_intervals(r.log_p, r.labels, s);
  EXPECT_EQ(a.nll.lo, b.nll.lo);
  EXPECT_EQ(a.nll.hi, b.nll.hi);
  EXPECT_EQ(a.ece.lo, b.ece.lo);
  EXPECT_EQ(a.brier.hi, b.brier.hi);
  EXPECT_EQ(a.resamples, 300);
  s.seed = 6;
  const BootstrapIntervals c = bootstrap_intervals(r.log_p, r.labels, s);
  EXPECT_NE(a.nll.lo, c.nll.lo);

  const double nll = negative_log_likelihood(r.log_p, r.labels);
  const Eigen::MatrixXd p = r.log_p.array().exp();
  const double brier = brier_score(p, r.labels);
  EXPECT_LT(a.nll.lo, nll);
  EXPECT_GT(a.nll.hi, nll);
  EXPECT_LT(a.brier.lo, brier);
  EXPECT_GT(a.brier.hi, brier);
  EXPECT_LT(a.ece.lo, a.ece.hi);
  // Width of a 95% interval of a mean: about 2 * 1.96 * sd / sqrt(n); check within 25%.
  Eigen::VectorXd row_nll(2000);
  for (Eigen::Index i = 0; i < 2000; ++i)
    row_nll[i] = -r.log_p(r.labels[static_cast<std::size_t>(i)], i);
  const double sd = std::sqrt((row_nll.array() - nll).square().mean());
  const double want_width = 2 * 1.959964 * sd / std::sqrt(2000.0);
  EXPECT_NEAR(a.nll.hi - a.nll.lo, want_width, 0.25 * want_width);
}

TEST(Bootstrap, OneRowGivesAPointInterval) {
  // Edge case: n = 1, every resample is the row itself.
  Eigen::MatrixXd log_p(2, 1);
  log_p << std::log(0.3), std::log(0.7);
  BootstrapSettings s;
  s.resamples = 10;
  const BootstrapIntervals a = bootstrap_intervals(log_p, std::vector<std::int32_t>{1}, s);
  EXPECT_DOUBLE_EQ(a.nll.lo, -std::log(0.7));
  EXPECT_DOUBLE_EQ(a.nll.hi, -std::log(0.7));
  EXPECT_NEAR(a.ece.lo, 0.3, 1e-15);
}

}  // namespace
}  // namespace credence
