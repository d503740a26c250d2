// Kernel Stein discrepancy (IMQ kernel) against docs/methods.md section 11's worked values,
// against an independent numpy implementation (tests/tools/numpy_ksd.py, all pairs as
// (n, n) arrays), and on Gaussians: exact draws score lower as they grow, shifted or
// widened draws score worse.
#include "credence/stein.h"

#include <gtest/gtest.h>

#include <Eigen/LU>

#include <cmath>
#include <fstream>
#include <random>

#include "python_reference.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

// Standard normal target: s(x) = -x.
SteinDiscrepancy ksd_standard_normal(const Eigen::MatrixXd& x) {
  Result<SteinDiscrepancy> r = kernel_stein_discrepancy(x, -x);
  EXPECT_TRUE(r.ok()) << r.status().message();
  return *r;
}

Eigen::MatrixXd normal_draws(int d, int n, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  Eigen::MatrixXd x(d, n);
  for (Eigen::Index i = 0; i < x.size(); ++i) x.data()[i] = normal(rng);
  return x;
}

TEST(KernelStein, MatchesTheWorkedValuesOfMethodsSection11) {
  // docs/methods.md 11 [D] (numpy double precision): 1-D points {0, 1}.
  Eigen::MatrixXd x(1, 2);
  x << 0, 1;
  EXPECT_NEAR(stein_kernel_value(x.col(0), x.col(1), -x.col(0), -x.col(1)), -0.5303300859, 1e-9);
  SteinDiscrepancy one = ksd_standard_normal(x);
  EXPECT_NEAR(one.v_statistic, 0.4848349571, 1e-9);
  EXPECT_NEAR(one.ksd, 0.6963009098, 1e-9);
  EXPECT_NEAR(one.u_statistic, -0.5303300859, 1e-9);
  // 2-D: (0,0), (1,-1), (0.5,2) against N(0, I) and N(0, [[1, .9], [.9, 1]]).
  Eigen::MatrixXd y(2, 3);
  y << 0, 1, 0.5, 0, -1, 2;
  SteinDiscrepancy two = ksd_standard_normal(y);
  EXPECT_NEAR(two.v_statistic, 1.0176038558, 1e-9);
  EXPECT_NEAR(two.u_statistic, -0.5152608830, 1e-9);
  Eigen::Matrix2d cov;
  cov << 1, 0.9, 0.9, 1;
  const Eigen::MatrixXd scores = -cov.inverse() * y;
  Result<SteinDiscrepancy> corr = kernel_stein_discrepancy(y, scores);
  ASSERT_TRUE(corr.ok());
  EXPECT_NEAR(corr->v_statistic, 23.5413287332, 1e-8);
  EXPECT_NEAR(corr->u_statistic, -17.9156153952, 1e-8);
  // One point x in R^d: KSD^2 = d + ||x||^2.
  Eigen::MatrixXd single(3, 1);
  single << 0.5, -1, 2;
  EXPECT_NEAR(ksd_standard_normal(single).v_statistic, 3 + 5.25, 1e-12);
  EXPECT_TRUE(std::isnan(ksd_standard_normal(single).u_statistic));
}

TEST(KernelStein, AgreesWithAnIndependentNumpyImplementation) {
  testing::TempDir dir;
  // A 4-D correlated target, draws that are neither exact nor far off, and a kernel other
  // than the default so every constant is exercised.
  Eigen::MatrixXd x = normal_draws(4, 120, testing::test_seed(170));
  x.row(1) *= 1.7;
  x.row(2).array() += 0.4;
  Eigen::Matrix4d precision = Eigen::Matrix4d::Identity() * 1.5;
  precision(0, 3) = precision(3, 0) = 0.6;
  const Eigen::MatrixXd scores = -precision * x;
  for (SteinKernel kernel : {SteinKernel{}, SteinKernel{0.7, -0.3}}) {
    std::ofstream xs(dir.path() / "x.txt"), ss(dir.path() / "s.txt");
    xs.precision(17);
    ss.precision(17);
    for (Eigen::Index n = 0; n < x.cols(); ++n) {
      for (Eigen::Index j = 0; j < x.rows(); ++j) {
        xs << x(j, n) << ' ';
        ss << scores(j, n) << ' ';
      }
      xs << '\n';
      ss << '\n';
    }
    xs.close();
    ss.close();
    const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                                "/tests/tools/numpy_ksd.py' '" + (dir.path() / "x.txt").string() +
                                "' '" + (dir.path() / "s.txt").string() + "' " +
                                std::to_string(kernel.c) + " " + std::to_string(kernel.beta);
    const testing::PythonLines ref = testing::run_python_lines(command);
    ASSERT_TRUE(ref.ok) << ref.output;
    Result<SteinDiscrepancy> mine = kernel_stein_discrepancy(x, scores, kernel);
    ASSERT_TRUE(mine.ok());
    std::printf("c=%g beta=%g: V %.10g (numpy %.10g), U %.10g (numpy %.10g)\n", kernel.c,
                kernel.beta, mine->v_statistic, ref.values.at("v")[0], mine->u_statistic,
                ref.values.at("u")[0]);
    EXPECT_NEAR(mine->v_statistic, ref.values.at("v")[0], 1e-6 * std::abs(ref.values.at("v")[0]));
    EXPECT_NEAR(mine->u_statistic, ref.values.at("u")[0], 1e-6 * std::abs(ref.values.at("u")[0]));
    EXPECT_NEAR(mine->ksd, ref.values.at("ksd")[0], 1e-6 * ref.values.at("ksd")[0]);
  }
}

TEST(KernelStein, FallsWithExactDrawsAndFlagsShiftedOrWideOnes) {
  // 2-D standard normal. docs/methods.md 11 [D]: 500 exact draws give V ~ 0.0074 (V ~ 1/n
  // for exact draws: the diagonal k0(x, x) = d + ||x||^2 averages 2d over n).
  const Eigen::MatrixXd all = normal_draws(2, 1600, testing::test_seed(171));
  double previous = INFINITY;
  for (int n : {50, 200, 800, 1600}) {
    const double v = ksd_standard_normal(all.leftCols(n)).v_statistic;
    std::printf("exact draws n=%d: V %.5f\n", n, v);
    EXPECT_LT(v, previous) << n;
    previous = v;
  }
  const Eigen::MatrixXd exact = all.leftCols(500);
  const SteinDiscrepancy base = ksd_standard_normal(exact);
  EXPECT_NEAR(base.u_statistic, 0, 0.01);  // sd ~0.002 (docs/methods.md 11)
  Eigen::MatrixXd shifted = exact;
  shifted.row(0).array() += 0.5;
  const SteinDiscrepancy moved = ksd_standard_normal(shifted);
  const SteinDiscrepancy wide = ksd_standard_normal(1.5 * exact);
  std::printf("exact V %.4f U %.4f; shifted by 0.5 V %.4f U %.4f; x1.5 V %.4f U %.4f\n",
              base.v_statistic, base.u_statistic, moved.v_statistic, moved.u_statistic,
              wide.v_statistic, wide.u_statistic);
  EXPECT_GT(moved.v_statistic, 3 * base.v_statistic);
  EXPECT_GT(moved.u_statistic, 0.02);
  EXPECT_GT(wide.u_statistic, 0.05);  // docs/methods.md 11: ~0.083 for these sizes
}

TEST(KernelStein, RefusesMismatchedOrNonFiniteInput) {
  Eigen::MatrixXd x = Eigen::MatrixXd::Zero(2, 3);
  EXPECT_NE(kernel_stein_discrepancy(x, Eigen::MatrixXd::Zero(2, 2)).status().message().find(
                "one score per draw"),
            std::string::npos);
  Eigen::MatrixXd bad = x;
  bad(1, 1) = NAN;
  EXPECT_FALSE(kernel_stein_discrepancy(bad, x).ok());
  EXPECT_FALSE(kernel_stein_discrepancy(x, x, SteinKernel{1, -1}).ok());
}

}  // namespace
}  // namespace credence
