// Bayesian linear regression with known noise (docs/methods.md 12.1; Pattern Recognition
// and Machine Learning, 2006, Section 3.3): every stochastic-gradient sampler, fed
// one-row minibatches scaled by N/b = 4, recovers the closed-form posterior.
#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "credence/samplers.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::LinearRegressionPosterior;

constexpr int kReplicas = 2000;

struct Posterior {
  Eigen::Vector2d mean;
  Eigen::Vector2d variance;
};

Posterior sample(const SamplerSettings& s, int burn_in, int steps, std::uint64_t seed) {
  LinearRegressionPosterior potential(kReplicas);
  auto made = Sampler::create(s, 2 * kReplicas, potential.rows(), seed);
  EXPECT_TRUE(made.ok()) << made.status().to_string();
  Eigen::VectorXf theta = Eigen::VectorXf::Zero(2 * kReplicas);
  Eigen::Vector2d sum = Eigen::Vector2d::Zero(), sum2 = Eigen::Vector2d::Zero();
  double n = 0;
  for (int t = 0; t < burn_in + steps; ++t) {
    StepContext context;
    context.step = t;
    context.step_size = (*made)->base_step_size();
    context.burn_in = t < burn_in;
    StepReport report;
    EXPECT_TRUE((*made)->step(theta, potential, context, report).ok());
    if (t >= burn_in && t % 10 == 0) {
      for (int r = 0; r < kReplicas; ++r) {
        for (int i = 0; i < 2; ++i) {
          const double w = theta[2 * r + i];
          sum[i] += w;
          sum2[i] += w * w;
        }
      }
      n += kReplicas;
    }
  }
  Posterior p;
  p.mean = sum / n;
  p.variance = sum2 / n - p.mean.cwiseAbs2();
  return p;
}

TEST(LinearRegression, EveryStochasticGradientSamplerRecoversTheClosedFormPosterior) {
  const Eigen::Vector2d m_n = LinearRegressionPosterior::posterior_mean();
  const Eigen::Matrix2d s_n = LinearRegressionPosterior::posterior_covariance();
  const std::uint64_t seed = testing::test_seed(71);
  for (Method method : {Method::kSgld, Method::kPsgld, Method::kSghmc, Method::kRsghmc}) {
    SamplerSettings s;
    s.method = method;
    s.step_size = 1e-3;
    if (method == Method::kSghmc) s.step_size = 2e-4;
    if (method == Method::kRsghmc) {
      s.step_size = 0.014;  // Newtonian match of sghmc's eta = 2e-4 at m = 1
      s.relativistic.mass = 1;
      s.relativistic.speed = 1;
      s.relativistic.friction = 7;
      s.relativistic.adapt_mass = false;
    }
    Posterior p = sample(s, 2000, 20000, seed);
    std::printf("%-7s mean (%.4f, %.4f) vs (%.4f, %.4f); var (%.5f, %.5f) vs (%.5f, %.5f)\n",
                std::string(method_name(method)).c_str(), p.mean[0], p.mean[1], m_n[0], m_n[1],
                p.variance[0], p.variance[1], s_n(0, 0), s_n(1, 1));
    for (int i = 0; i < 2; ++i) {
      // docs/methods.md 12.1: mean within 4 sqrt(S_ii / ESS) (ESS taken as 2000: replicas
      // share one minibatch sequence, so they are not independent); variances within 10%.
      EXPECT_NEAR(p.mean[i], m_n[i], 4 * std::sqrt(s_n(i, i) / 2000)) << method_name(method);
      EXPECT_NEAR(p.variance[i] / s_n(i, i), 1.0, 0.1) << method_name(method);
    }
  }
}

TEST(LinearRegression, ForgettingTheMinibatchScaleIsDetected) {
  // docs/methods.md 1 failure mode: without N/b the likelihood counts one row per step
  // instead of four, so the posterior comes out far too wide. Emulated with a potential
  // whose data gradient is scaled by 1 instead of N/b; the checks above must reject it.
  class Unscaled : public PotentialFn {
   public:
    std::int64_t rows() const override { return 4; }
    Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
      CREDENCE_RETURN_IF_ERROR(inner_.minibatch(theta, grad, out));
      // Undo 3/4 of the data gradient: grad = prior + (1/4) data term.
      for (Eigen::Index i = 0; i < theta.size(); ++i) grad[i] = 0.25f * grad[i] + 0.75f * theta[i];
      return Status::ok_status();
    }

   private:
    LinearRegressionPosterior inner_{kReplicas};
  } potential;
  SamplerSettings s;
  s.method = Method::kSgld;
  s.step_size = 1e-3;
  auto made = Sampler::create(s, 2 * kReplicas, 4, testing::test_seed(72));
  ASSERT_TRUE(made.ok());
  Eigen::VectorXf theta = Eigen::VectorXf::Zero(2 * kReplicas);
  double sum2 = 0, n = 0;
  for (int t = 0; t < 12000; ++t) {
    StepContext context;
    context.step_size = 1e-3;
    StepReport report;
    ASSERT_TRUE((*made)->step(theta, potential, context, report).ok());
    if (t >= 2000 && t % 10 == 0) {
      for (int r = 0; r < kReplicas; ++r) sum2 += static_cast<double>(theta[2 * r]) * theta[2 * r];
      n += kReplicas;
    }
  }
  const double second_moment = sum2 / n;
  std::printf("unscaled minibatch: E[w0^2] = %.4f vs posterior %.4f\n", second_moment,
              LinearRegressionPosterior::posterior_covariance()(0, 0) +
                  std::pow(LinearRegressionPosterior::posterior_mean()[0], 2));
  EXPECT_GT(second_moment, 1.5 * LinearRegressionPosterior::posterior_covariance()(0, 0));
}

}  // namespace
}  // namespace credence
