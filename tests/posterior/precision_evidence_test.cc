// Evidence updates of block precisions for optimizers (docs/methods.md section 15).
#include "posterior/precision_evidence.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "credence/net.h"
#include "credence/posterior.h"
#include "testing/seed.h"

namespace credence {
namespace {

// Linear regression y = X w + noise (noise precision beta), prior w ~ N(0, I/alpha):
// evidence maximisation ("Pattern Recognition and Machine Learning", 2006, section 3.5.2)
// iterates  m = beta A^-1 X^T y,  A = alpha I + beta X^T X,
//           gamma = sum_i l_i / (alpha + l_i)  (l_i the eigenvalues of beta X^T X),
//           alpha = gamma / m^T m.
// With orthogonal columns X^T X is diagonal, so the Gauss-Newton diagonal h_i = beta s_i
// is the exact Hessian and the diagonal update must reach the same fixed point.
// Reference: numpy 1.24 (Debian), the full-matrix iteration above from alpha = 1 for
// 1000 rounds on X = [diag(2, 3, 1, 4); 0; 0], y = (1, -1, 0.5, 1.5, 0.3, -0.2),
// beta = 2: alpha = 11.561690110268136, gamma = 1.8999234507223477.
TEST(EvidencePrecision, ReachesTheLinearGaussianFixedPoint) {
  const double beta = 2;
  const std::vector<double> s = {4, 9, 1, 16};           // diag(X^T X)
  const std::vector<double> xty = {2, -3, 0.5, 6};       // X^T y
  std::vector<double> h(4);
  for (std::size_t i = 0; i < 4; ++i) h[i] = beta * s[i];
  double alpha = 1;
  for (int round = 0; round < 200; ++round) {
    double norm2 = 0;
    for (std::size_t i = 0; i < 4; ++i) {
      const double m = beta * xty[i] / (alpha + beta * s[i]);
      norm2 += m * m;
    }
    alpha = evidence_precision_step(alpha, evidence_precision_target(h, alpha, norm2));
  }
  EXPECT_NEAR(alpha, 11.561690110268136, 1e-9);
  double gamma = 0;
  for (double hi : h) gamma += hi / (hi + alpha);
  EXPECT_NEAR(gamma, 1.8999234507223477, 1e-9);
}

TEST(EvidencePrecision, StepIsDampedInLogSpaceAndClipped) {
  // Half of the way in log space: from 1 towards 100 lands on 10.
  EXPECT_NEAR(evidence_precision_step(1.0, 100.0), 10.0, 1e-12);
  // A zero block (target +infinity) moves towards the upper clip, never past it.
  const double inf = evidence_precision_target(std::vector<double>{1.0}, 1.0, 0.0);
  EXPECT_TRUE(std::isinf(inf));
  EXPECT_NEAR(evidence_precision_step(1e6, inf), 1e6, 1e-6);
  EXPECT_NEAR(evidence_precision_step(1e-6, 0.0), 1e-6, 1e-18);
  // The cap (an optimizer's fixed-prior precision) bounds the move from above.
  EXPECT_NEAR(evidence_precision_step(2.0, 100.0, 4.0), std::sqrt(8.0), 1e-12);
  EXPECT_NEAR(evidence_precision_step(8.0, 100.0, 4.0), 4.0, 1e-12);
}

// The estimator of h (squared single-row gradients at labels drawn from the model's own
// softmax, scaled by N/m) is unbiased for the Gauss-Newton diagonal. For a softmax
// regression (no hidden layer) weight W_kj feeds logit k only, so the GGN diagonal is
// exactly sum_n p_nk (1 - p_nk) x_nj^2 and the bias's is sum_n p_nk (1 - p_nk)
// (docs/methods.md section 15's formula with J_nki = x_nj for k, 0 elsewhere).
TEST(PrecisionEvidence, DiagonalEstimateIsUnbiasedForTheGaussNewtonDiagonal) {
  NetSpec spec;
  Result<ParamLayout> layout = resolve_layout(spec, 2, 3);
  ASSERT_TRUE(layout.ok()) << layout.status().message();
  ASSERT_EQ(layout->layers.size(), 1u);
  const Index n = 5;
  Eigen::MatrixXf x(2, n);
  x << 0.5f, -1.0f, 1.5f, 0.2f, -0.7f,
       1.0f, 0.3f, -0.4f, -1.2f, 0.8f;
  VecX<float> theta(layout->num_params);
  for (Index i = 0; i < theta.size(); ++i) theta[i] = 0.3f * std::sin(1.7f * static_cast<float>(i) + 0.4f);
  PriorSpec prior;
  PotentialSettings settings;
  settings.num_train_rows = n;
  settings.max_batch_rows = n;
  settings.learn_prior_scale = false;
  Result<Potential<float>> potential = Potential<float>::create(*layout, prior, settings);
  ASSERT_TRUE(potential.ok());

  // Exact GGN diagonal.
  const LayerLayout& out = layout->layers[0];
  std::vector<double> exact(static_cast<std::size_t>(layout->num_params), 0.0);
  for (Index r = 0; r < n; ++r) {
    std::vector<double> z(3);
    for (Index k = 0; k < 3; ++k) {
      z[static_cast<std::size_t>(k)] = theta[out.bias_offset + k];
      for (Index j = 0; j < 2; ++j) {
        z[static_cast<std::size_t>(k)] += theta[out.weight_offset + j * 3 + k] * x(j, r);
      }
    }
    double norm = 0;
    for (double v : z) norm += std::exp(v);
    for (Index k = 0; k < 3; ++k) {
      const double p = std::exp(z[static_cast<std::size_t>(k)]) / norm;
      for (Index j = 0; j < 2; ++j) {
        exact[static_cast<std::size_t>(out.weight_offset + j * 3 + k)] +=
            p * (1 - p) * x(j, r) * x(j, r);
      }
      exact[static_cast<std::size_t>(out.bias_offset + k)] += p * (1 - p);
    }
  }

  PrecisionEvidence evidence(*layout, {}, n, 1, testing::test_seed(17));
  std::vector<double> mean(exact.size(), 0.0);
  const int updates = 4000;
  for (int u = 0; u < updates; ++u) {
    // Each step gives fresh label draws; the precisions change but not h's expectation.
    ASSERT_TRUE(evidence.update(theta, x, u, *potential).ok());
    const std::span<const double> h = evidence.last_diagonal();
    for (std::size_t i = 0; i < mean.size(); ++i) mean[i] += h[i] / updates;
  }
  for (std::size_t i = 0; i < mean.size(); ++i) {
    // Tolerance: 5% (the standard error of 4000 draws is below 2% for every coordinate
    // here; common practice, no published value).
    EXPECT_NEAR(mean[i], exact[i], 0.05 * exact[i]) << "coordinate " << i;
  }
}

}  // namespace
}  // namespace credence
