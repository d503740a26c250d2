// santa on Gaussians with known moments, and santa-opt on a convex quadratic (its minimiser).
//
// The stationary checks are docs/methods.md section 16's discriminating test: with the
// preconditioner held fixed (sigma = 1 keeps v at the first gradient's square, so g is
// set by the start), beta = 1, eta = 1e-4 and U = theta^2 / (2 s^2), the Euler scheme with
// noise sqrt(2 eta^(3/2) g T) has Var(theta) = s^2 and the thermostat settles at
// alpha = sqrt(eta) g (the continuous-time analysis of the paper: E u^2 = eta T, with
// u's stationary variance eta^(3/2) g T / alpha). With noise sqrt(2 eta g T) instead (the
// wording of the issue) the chain is far too cold at g = 0.3 and diverges at g = 3.
#include <gtest/gtest.h>

#include <cmath>

#include "credence/samplers.h"
#include "samplers/moments.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::Estimate;
using testing::IndependentGaussian;

// 5,000 one-dimensional chains keep the standard error of Var(theta) near 0.1% of the
// target, well inside the 2% tolerance, at a quarter of the cost of 20,000 (the
// sanitized build ran over its time limit with 20,000).
constexpr Eigen::Index kChains = 5000;

SamplerSettings santa_settings(double eta, double thermostat_gain) {
  SamplerSettings s;
  s.santa.thermostat_gain = thermostat_gain;
  s.method = Method::kSanta;
  s.step_size = eta;
  s.santa.sigma = 1;  // v keeps the first gradient's square: g fixed by the start
  s.santa.lambda = 0;
  return s;
}

struct Moments {
  Estimate var_theta;
  Estimate mean_alpha;
};

// Runs kChains 1-D chains of U = theta^2 / (2 variance) from theta_0 = start, so f_1 =
// start / variance and g = 1 / sqrt(|f_1|).
Moments run_santa(double variance, double start, std::uint64_t seed, int burn_in, int steps,
                  double thermostat_gain = SantaSettings{}.thermostat_gain) {
  SamplerSettings s = santa_settings(1e-4, thermostat_gain);
  IndependentGaussian potential(Eigen::VectorXf::Constant(kChains, static_cast<float>(variance)));
  auto sampler = Sampler::create(s, kChains, potential.rows(), seed);
  EXPECT_TRUE(sampler.ok());
  std::vector<double> alpha;
  auto theta2 = testing::stationary_series(
      **sampler, potential, kChains, burn_in, steps,
      [&](const Eigen::VectorXf& theta, const Sampler& sm) {
        const auto a = sm.save_state().floats.at("alpha");
        double sum = 0;
        for (float x : a) sum += x;
        alpha.push_back(sum / static_cast<double>(a.size()));
        return testing::mean_square(theta);
      },
      Eigen::VectorXf::Constant(kChains, static_cast<float>(start)), 10);
  return {testing::batch_means(theta2), testing::batch_means(alpha)};
}

TEST(SantaStationary, VarianceAndThermostatMatchTheContinuousLimit) {
  // docs/methods.md 16: g = 1, eta = 1e-4: Var(theta) = 1.00 +- 0.01, mean alpha = 0.0100.
  // A second target (s^2 = 2) and g = 3 (docs/methods.md: the eta-form noise diverges there).
  struct Case {
    double variance, start, g;
  };
  const std::uint64_t seed = testing::test_seed(160);
  for (Case c : {Case{1, 1, 1}, Case{2, 2, 1}, Case{1, 1.0 / 9, 3}}) {
    // Time step sqrt(eta) g = 0.01 g per step; position and thermostat relax within a few
    // hundred steps.
    const Moments m = run_santa(c.variance, c.start, seed, 3000, 30000);
    std::printf("santa s^2=%g g=%g: Var(theta) %.4f +- %.4f, mean alpha %.5f +- %.5f\n",
                c.variance, c.g, m.var_theta.value, m.var_theta.standard_error,
                m.mean_alpha.value, m.mean_alpha.standard_error);
    EXPECT_LT(m.var_theta.standard_error / c.variance, 0.005);
    EXPECT_NEAR(m.var_theta.value / c.variance, 1.0, 0.02) << "g = " << c.g;
    EXPECT_NEAR(m.mean_alpha.value / (0.01 * c.g), 1.0, 0.05) << "g = " << c.g;
  }
}

TEST(SantaStationary, ThePublishedThermostatAloneMatchesTheContinuousLimit) {
  // --thermostat-gain 0 runs the method's own thermostat update, with no relative gain:
  // the discriminating case of docs/methods.md 16 (g = 1, eta = 1e-4: Var(theta) = 1.00 +-
  // 0.01, mean alpha = 0.0100) must hold for it as it does with the default gain.
  const Moments m = run_santa(1, 1, testing::test_seed(162), 3000, 30000, 0.0);
  std::printf("santa gain 0: Var(theta) %.4f +- %.4f, mean alpha %.5f +- %.5f\n",
              m.var_theta.value, m.var_theta.standard_error, m.mean_alpha.value,
              m.mean_alpha.standard_error);
  EXPECT_NEAR(m.var_theta.value, 1.0, 0.02);
  EXPECT_NEAR(m.mean_alpha.value / 0.01, 1.0, 0.05);
}

TEST(SantaStationary, TemperatureScalesTheVariance) {
  // At T = 0.25 the same recursion samples exp(-U / T): Var(theta) = T s^2.
  SamplerSettings s = santa_settings(1e-4, SantaSettings{}.thermostat_gain);
  s.temperature = 0.25;
  IndependentGaussian potential(Eigen::VectorXf::Ones(kChains));
  auto sampler = Sampler::create(s, kChains, 1, testing::test_seed(161));
  ASSERT_TRUE(sampler.ok());
  Estimate e = testing::batch_means(testing::stationary_series(
      **sampler, potential, kChains, 3000, 30000,
      [](const Eigen::VectorXf& theta, const Sampler&) { return testing::mean_square(theta); },
      Eigen::VectorXf::Ones(kChains), 10));
  std::printf("santa T=0.25: Var(theta) %.4f +- %.4f (target 0.25)\n", e.value, e.standard_error);
  EXPECT_NEAR(e.value / 0.25, 1.0, 0.02);
}

TEST(SantaOptimizer, ReachesTheMinimiserOfAConvexQuadraticAndRefines) {
  // A 10-D quadratic with correlation 0.9 and scales 0.3..1 (as the other optimizers'
  // test in chain_test.cc): the last iterate must sit at the mean.
  const int d = 10;
  Eigen::VectorXd mean = Eigen::VectorXd::LinSpaced(d, -1, 2);
  Eigen::MatrixXd cov = testing::correlated_covariance(d, 0.9, 0.3);
  SamplerSettings s;
  s.method = Method::kSantaOpt;
  s.step_size = 1e-4;
  ChainSettings c;
  c.chains = 1;
  c.burn_in = 0;
  c.thin = 20000;
  c.samples = 1;
  Eigen::VectorXf last;
  SamplerState state;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) { last = k.theta; };
  hooks.on_checkpoint = [&](const ChainCheckpoint& k) { state = k.state; };
  auto factory = [&](int) { return std::make_unique<testing::ReplicatedGaussian>(mean, cov, 1); };
  Result<RunOutcome> outcome = run_chains(s, c, d, factory, {}, hooks);
  ASSERT_TRUE(outcome.ok());
  ASSERT_EQ(outcome->chains[0].end, ChainEnd::kCompleted);
  const double error = (last.cast<double>() - mean).cwiseAbs().maxCoeff();
  std::printf("santa-opt max |theta - argmin| = %.2e\n", error);
  EXPECT_LT(error, 1e-3);
  EXPECT_EQ(state.words.at("santa_refining")[0], 1u) << "the second half must refine";
}

TEST(SantaSettings, AreValidated) {
  SamplerSettings s;
  s.method = Method::kSanta;
  s.santa.sigma = 0;
  EXPECT_NE(validate(s).message().find("santa.sigma"), std::string::npos);
  s.santa.sigma = 0.999;
  s.santa.exploration_fraction = 1.5;
  EXPECT_NE(validate(s).message().find("santa.exploration_fraction"), std::string::npos);
  s.santa.exploration_fraction = 0.5;
  s.schedule.kind = ScheduleKind::kCyclical;
  EXPECT_NE(validate(s).message().find("anneal their temperature"), std::string::npos);
  s.schedule.kind = ScheduleKind::kConstant;
  s.santa.thermostat_gain = -0.1;
  EXPECT_NE(validate(s).message().find("santa.thermostat_gain"), std::string::npos);
  s.santa.thermostat_gain = 0.05;
  s.santa.max_friction = 2;
  EXPECT_NE(validate(s).message().find("santa.max_friction"), std::string::npos);
  s.santa.max_friction = 0.5;
  s.santa.optimizer_start_friction = 0;
  EXPECT_NE(validate(s).message().find("santa.optimizer_start_friction"), std::string::npos);
  s.santa.optimizer_start_friction = 0.1;
  EXPECT_TRUE(validate(s).ok());
  EXPECT_TRUE(is_sampler(Method::kSanta));
  EXPECT_FALSE(is_sampler(Method::kSantaOpt));
  EXPECT_EQ(*parse_method("santa-opt"), Method::kSantaOpt);
}

}  // namespace
}  // namespace credence
