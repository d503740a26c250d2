// The Gibbs update of a prior that learns its scale (docs/methods.md section 15): the
// conditional's parameters against the section's test values, Gamma draws against the
// analytic moments, and the per-chain state (schedule, precisions, stream, resume).
#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

#include "credence/posterior.h"
#include "posterior/precision_gibbs.h"
#include "testing/seed.h"
#include "util/gamma.h"

namespace credence {
namespace {

// Mean, sd and third standardised moment of n Gamma(shape, rate) draws against
// shape/rate, sqrt(shape)/rate and 2/sqrt(shape) (the Gamma law's moments), within
// 4.5 standard errors (the sd's and skewness's errors from their large-n forms).
// `quantiles`: scipy.stats.gamma.ppf([0.05, 0.5, 0.95], shape, scale=1/rate) (scipy 1.10.1,
// Debian's python3-scipy), when given: the share of draws below each matches within 4.5
// binomial standard errors.
void expect_gamma_moments(double shape, double rate, std::uint64_t seed,
                          std::vector<double> quantiles = {}) {
  Rng rng(seed);
  constexpr int kDraws = 200000;
  double sum = 0, sum2 = 0, sum3 = 0;
  std::vector<double> x(kDraws);
  for (double& v : x) {
    v = gamma_draw(rng, shape, rate);
    ASSERT_GT(v, 0);
    sum += v;
  }
  const double mean = sum / kDraws;
  for (double v : x) {
    sum2 += (v - mean) * (v - mean);
    sum3 += (v - mean) * (v - mean) * (v - mean);
  }
  const double sd = std::sqrt(sum2 / kDraws);
  const double levels[3] = {0.05, 0.5, 0.95};
  for (std::size_t q = 0; q < quantiles.size(); ++q) {
    double below = 0;
    for (double v : x) below += v < quantiles[q] ? 1.0 / kDraws : 0.0;
    EXPECT_NEAR(below, levels[q], 4.5 * std::sqrt(levels[q] * (1 - levels[q]) / kDraws))
        << "Gamma(" << shape << ", " << rate << ") quantile " << levels[q];
  }
  const double skew = sum3 / kDraws / (sd * sd * sd);
  const double true_mean = shape / rate, true_sd = std::sqrt(shape) / rate;
  const double true_skew = 2 / std::sqrt(shape);
  std::printf("Gamma(%g, %g): mean %.5f (%.5f) sd %.5f (%.5f) skew %.4f (%.4f)\n", shape, rate,
              mean, true_mean, sd, true_sd, skew, true_skew);
  const double n = kDraws;
  EXPECT_NEAR(mean, true_mean, 4.5 * true_sd / std::sqrt(n));
  // Var of the sample sd ~ sd^2 (kurtosis_excess + 2) / (4 n), excess kurtosis 6/shape.
  EXPECT_NEAR(sd, true_sd, 4.5 * true_sd * std::sqrt((6 / shape + 2) / (4 * n)));
  // Loose for small shapes, where the skewness estimate has heavy tails.
  EXPECT_NEAR(skew, true_skew, 4.5 * std::sqrt(6 / n) * (1 + 3 * true_skew));
}

// docs/methods.md section 15 test values [D]: d = 1000, ||theta||^2 = 250, a = r = 1 gives
// Gamma(501, 126), mean 3.97619, sd 0.17764; whole-posterior tempering at T = 0.5 gives
// Gamma(1001, 252), mean 3.97222, sd 0.12555.
TEST(PrecisionConditional, MatchesMethodsTestValues) {
  const GammaShapeRate plain =
      precision_conditional(1, 1, 1000, 250, 1.0, Tempering::kWholePosterior);
  EXPECT_DOUBLE_EQ(plain.shape, 501);
  EXPECT_DOUBLE_EQ(plain.rate, 126);
  EXPECT_NEAR(plain.shape / plain.rate, 3.97619, 5e-6);
  EXPECT_NEAR(std::sqrt(plain.shape) / plain.rate, 0.17764, 5e-6);
  const GammaShapeRate cold =
      precision_conditional(1, 1, 1000, 250, 0.5, Tempering::kWholePosterior);
  EXPECT_DOUBLE_EQ(cold.shape, 1001);
  EXPECT_DOUBLE_EQ(cold.rate, 252);
  EXPECT_NEAR(cold.shape / cold.rate, 3.97222, 5e-6);
  EXPECT_NEAR(std::sqrt(cold.shape) / cold.rate, 0.12555, 5e-6);
  // Likelihood-only tempering leaves the prior, hence this conditional, untempered.
  const GammaShapeRate likelihood =
      precision_conditional(1, 1, 1000, 250, 0.5, Tempering::kLikelihoodOnly);
  EXPECT_DOUBLE_EQ(likelihood.shape, 501);
  EXPECT_DOUBLE_EQ(likelihood.rate, 126);
}

// The same block built from d = 1000 draws of N(0, 0.25) (so ||theta||^2 is near 250, not
// exactly): Monte Carlo draws of the conditional match its analytic moments.
TEST(GammaDraw, MomentsOfTheMethodsConditionalsAndSmallShapes) {
  const std::uint64_t seed = testing::test_seed(1701);
  Rng theta_rng(seed);
  double norm2 = 0;
  for (int i = 0; i < 1000; ++i) {
    const double v = 0.5 * theta_rng.normal();
    norm2 += v * v;
  }
  EXPECT_NEAR(norm2, 250, 4 * 0.25 * std::sqrt(2000.0));  // chi-square: sd 0.25 sqrt(2d)
  const GammaShapeRate plain =
      precision_conditional(1, 1, 1000, norm2, 1.0, Tempering::kWholePosterior);
  expect_gamma_moments(plain.shape, plain.rate, seed + 1);
  const GammaShapeRate cold =
      precision_conditional(1, 1, 1000, norm2, 0.5, Tempering::kWholePosterior);
  expect_gamma_moments(cold.shape, cold.rate, seed + 2);
  expect_gamma_moments(501, 126, seed + 3, {3.68857469, 3.97354529, 4.27282933});
  expect_gamma_moments(1001, 252, seed + 6, {3.76799145, 3.97089955, 4.18096477});
  expect_gamma_moments(1.5, 2.0, seed + 4);
  expect_gamma_moments(0.5, 2.0, seed + 5, {0.00098304, 0.11373411, 0.96036471});  // boosted
}

Result<ParamLayout> two_layer_layout() {
  NetSpec spec;
  spec.hidden = {{4, Activation::kTanh}};
  return resolve_layout(spec, 3, 2);
}

TEST(PrecisionGibbs, StartsAtTheFixedPriorAndDrawsEveryKSteps) {
  Result<ParamLayout> layout = two_layer_layout();
  ASSERT_TRUE(layout.ok());
  PriorSpec spec;
  spec.learn_scale = true;
  PotentialSettings settings{.num_train_rows = 10, .max_batch_rows = 10};
  Result<Potential<double>> potential = Potential<double>::create(*layout, spec, settings);
  ASSERT_TRUE(potential.ok());
  const GaussianPrior& prior = potential->prior();
  ASSERT_EQ(prior.num_blocks(), 4);
  // fan_in / s^2 for weights, 1 for biases (docs/methods.md section 15's starting values).
  EXPECT_DOUBLE_EQ(prior.block_precisions()[0], 3.0);
  EXPECT_DOUBLE_EQ(prior.block_precisions()[1], 1.0);
  EXPECT_DOUBLE_EQ(prior.block_precisions()[2], 4.0);
  EXPECT_DOUBLE_EQ(prior.block_precisions()[3], 1.0);

  PrecisionGibbs gibbs(spec, prior, 5, 1.0, Tempering::kWholePosterior, 7);
  EXPECT_FALSE(gibbs.due(0));
  EXPECT_TRUE(gibbs.due(5));
  EXPECT_FALSE(gibbs.due(6));
  VecX<double> theta = VecX<double>::Constant(layout->num_params, 0.3);
  NamedArrays saved;
  gibbs.save_state(prior, saved);
  gibbs.draw<double>(theta, *potential);
  const std::vector<double> first(prior.block_precisions().begin(),
                                  prior.block_precisions().end());
  EXPECT_NE(first[0], 3.0);
  // The gradient uses the drawn precisions: lambda_b theta_i.
  VecX<double> grad = VecX<double>::Zero(layout->num_params);
  prior.add_gradient<double>(grad, theta);
  EXPECT_DOUBLE_EQ(grad(prior.block_offset(2)), first[2] * 0.3);

  // Restoring the saved state brings back the precisions and the stream: the same draw.
  ASSERT_TRUE(gibbs.restore_state<double>(saved, *potential).ok());
  EXPECT_DOUBLE_EQ(prior.block_precisions()[0], 3.0);
  gibbs.draw<double>(theta, *potential);
  for (std::size_t b = 0; b < first.size(); ++b) {
    EXPECT_EQ(prior.block_precisions()[b], first[b]);
  }
  NamedArrays broken = saved;
  broken.doubles["prior_precision"] = {1.0, -1.0, 1.0, 1.0};
  EXPECT_EQ(gibbs.restore_state<double>(broken, *potential).code(), StatusCode::kCorrupt);
  broken.doubles.erase("prior_precision");
  EXPECT_EQ(gibbs.restore_state<double>(broken, *potential).code(), StatusCode::kCorrupt);
}

// A chain that diverged reaches the Gibbs update with non-finite weights: the update must
// leave the precisions as they were (the sampler then reports the divergence), not stop
// the process. Found by santa at --lr 0.003 on breast cancer: an assertion in gamma_draw
// aborted train (exit 134).
TEST(PrecisionGibbs, DivergedWeightsKeepThePrecisions) {
  Result<ParamLayout> layout = two_layer_layout();
  ASSERT_TRUE(layout.ok());
  PriorSpec spec;
  spec.learn_scale = true;
  PotentialSettings settings{.num_train_rows = 10, .max_batch_rows = 10};
  Result<Potential<double>> potential = Potential<double>::create(*layout, spec, settings);
  ASSERT_TRUE(potential.ok());
  const GaussianPrior& prior = potential->prior();
  const std::vector<double> before(prior.block_precisions().begin(),
                                   prior.block_precisions().end());
  PrecisionGibbs gibbs(spec, prior, 1, 1.0, Tempering::kWholePosterior, 7);
  for (double bad : {std::numeric_limits<double>::infinity(),
                     std::numeric_limits<double>::quiet_NaN(), 1e300}) {
    VecX<double> theta = VecX<double>::Constant(layout->num_params, 0.3);
    theta(0) = bad;  // in block 0; 1e300 squared overflows to infinity
    gibbs.draw<double>(theta, *potential);
    EXPECT_EQ(prior.block_precisions()[0], before[0]) << bad;
  }
}

TEST(PrecisionGibbs, MatchedRateCentresTheHyperpriorOnTheFixedPrecision) {
  Result<ParamLayout> layout = two_layer_layout();
  ASSERT_TRUE(layout.ok());
  PriorSpec spec;
  spec.learn_scale = true;
  spec.hyper_rate.reset();
  Result<GaussianPrior> prior = GaussianPrior::create(spec, *layout);
  ASSERT_TRUE(prior.ok());
  PotentialSettings settings{.num_train_rows = 10, .max_batch_rows = 10};
  Result<Potential<double>> potential = Potential<double>::create(*layout, spec, settings);
  ASSERT_TRUE(potential.ok());
  // theta = 0: the conditional is Gamma(a + d/2, r_b) with r_b = a / lambda_b(fixed);
  // many draws of the 12-weight first block average (1 + 6) / (1 / 3) = 21.
  PrecisionGibbs gibbs(spec, *prior, 1, 1.0, Tempering::kWholePosterior, testing::test_seed(5));
  const VecX<double> theta = VecX<double>::Zero(layout->num_params);
  double sum = 0;
  constexpr int kDraws = 20000;
  for (int i = 0; i < kDraws; ++i) {
    gibbs.draw<double>(theta, *potential);
    sum += potential->prior().block_precisions()[0];
  }
  // sd of one draw sqrt(7) * 3; 4.5 standard errors.
  EXPECT_NEAR(sum / kDraws, 21.0, 4.5 * std::sqrt(7.0) * 3 / std::sqrt(kDraws));
}

}  // namespace
}  // namespace credence
