// Tests of softmax cross-entropy: docs/methods.md test values, extreme logits, derivatives.
#include "net/loss.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "testing/gradient_check.h"

namespace credence {
namespace {

// Reference: docs/methods.md section 1 "Test values" (computed there with NumPy/SciPy):
// z = (2, 1, 0), y = 0 gives -log p = 0.40760596444438013 and gradient
// (-0.33475904, 0.24472847, 0.09003057).
TEST(SoftmaxCrossEntropy, MatchesMethodsTestValues) {
  MatX<double> z(3, 1);
  z << 2, 1, 0;
  MatX<double> log_probs(3, 1);
  log_softmax_forward<double>(log_probs, z);
  EXPECT_NEAR(-log_probs(0, 0), 0.40760596444438013, 1e-15);
  const std::vector<std::int32_t> labels = {0};
  MatX<double> d_z(3, 1);
  softmax_xent_backward<double>(d_z, log_probs, labels, 1.0);
  EXPECT_NEAR(d_z(0, 0), -0.33475904, 5e-9);
  EXPECT_NEAR(d_z(1, 0), 0.24472847, 5e-9);
  EXPECT_NEAR(d_z(2, 0), 0.09003057, 5e-9);
}

// Reference: the closed form. For z = (1e4, -1e4), log p_0 = -log(1 + e^-2e4) = 0 to
// double precision and log p_1 = -2e4; naive exp(1e4) would overflow to inf.
TEST(SoftmaxCrossEntropy, HugeLogitsGiveFiniteExactValues) {
  MatX<float> z(2, 3);
  z << 1e4f, -1e4f, 1e4f,   //
      -1e4f, 1e4f, 1e4f;
  MatX<float> log_probs(2, 3);
  log_softmax_forward<float>(log_probs, z);
  ASSERT_TRUE(log_probs.allFinite());
  EXPECT_EQ(log_probs(0, 0), 0.0f);
  EXPECT_EQ(log_probs(1, 0), -2e4f);
  EXPECT_EQ(log_probs(1, 1), 0.0f);
  EXPECT_NEAR(log_probs(0, 2), -std::log(2.0f), 1e-7f);  // equal logits: p = 1/2
  const std::vector<std::int32_t> labels = {1, 1, 0};
  MatX<float> d_z(2, 3);
  softmax_xent_backward<float>(d_z, log_probs, labels, 2.0f);
  ASSERT_TRUE(d_z.allFinite());
  // Wrong with certainty: gradient scale * (p - y) = 2 * (1, -1).
  EXPECT_EQ(d_z(0, 0), 2.0f);
  EXPECT_EQ(d_z(1, 0), -2.0f);
  EXPECT_EQ(d_z(0, 1), 0.0f);
  EXPECT_NEAR(d_z(0, 2), -1.0f, 1e-6f);
}

// Reference: central finite differences (h = 1e-6, double) of scale * sum_i -log p(y_i).
TEST(SoftmaxCrossEntropy, BackwardMatchesFiniteDifferences) {
  MatX<double> z(4, 3);
  z << 0.3, -1.2, 2.0, 1.1, 0.0, -0.7, -2.2, 0.4, 0.9, 0.5, 1.5, -0.1;
  const std::vector<std::int32_t> labels = {2, 0, 3};
  const double scale = 3.5;
  MatX<double> log_probs(4, 3), d_z(4, 3);
  log_softmax_forward<double>(log_probs, z);
  softmax_xent_backward<double>(d_z, log_probs, labels, scale);
  auto value = [&](const Eigen::VectorXd& point) {
    MatX<double> zz = Eigen::Map<const MatX<double>>(point.data(), 4, 3);
    MatX<double> lp(4, 3);
    log_softmax_forward<double>(lp, zz);
    double sum = 0;
    for (Index n = 0; n < 3; ++n) sum -= lp(labels[static_cast<std::size_t>(n)], n);
    return scale * sum;
  };
  Eigen::VectorXd flat = Eigen::Map<const Eigen::VectorXd>(z.data(), z.size());
  Eigen::VectorXd analytic = Eigen::Map<const Eigen::VectorXd>(d_z.data(), d_z.size());
  testing::GradientComparison cmp =
      testing::compare_gradients(analytic, testing::central_differences(value, flat));
  EXPECT_LE(cmp.coordinate, 1e-7) << cmp.report;
}

}  // namespace
}  // namespace credence
