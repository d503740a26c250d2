// Full-batch hmc and rhmc: exactness by scipy's KS test, acceptance against step size,
// dual averaging, and the stability limit of docs/methods.md section 6.
#include <gtest/gtest.h>

#include <cmath>
#include <vector>

#include "credence/samplers.h"
#include "testing/ks_helper.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

struct HmcRun {
  std::vector<double> first_coordinate;  // kept samples of theta_0, all chains
  double acceptance = 0;                 // mean after warm-up over chains
  RunOutcome outcome;
};

HmcRun run_hmc(const SamplerSettings& s, int d, std::int64_t burn_in, std::int64_t samples,
               std::int64_t thin, std::uint64_t seed, Eigen::MatrixXd cov = {}) {
  if (cov.size() == 0) cov = Eigen::MatrixXd::Identity(d, d);
  ChainSettings c;
  c.chains = 2;
  c.burn_in = burn_in;
  c.thin = thin;
  c.samples = samples;
  c.seed = seed;
  HmcRun out;
  ChainHooks hooks;
  hooks.on_sample = [&](const KeptSample& k) { out.first_coordinate.push_back(k.theta[0]); };
  auto factory = [&](int) {
    return std::make_unique<testing::ReplicatedGaussian>(Eigen::VectorXd::Zero(d), cov, 1);
  };
  Result<RunOutcome> run = run_chains(s, c, d, factory, {}, hooks);
  EXPECT_TRUE(run.ok());
  out.outcome = *run;
  for (const ChainOutcome& o : run->chains) out.acceptance += o.mean_acceptance / 2;
  return out;
}

SamplerSettings hmc_settings(Method method, double eps, int leapfrog, bool adapt) {
  SamplerSettings s;
  s.method = method;
  s.step_size = eps;
  s.hmc.leapfrog_steps = leapfrog;
  s.hmc.adapt_step = adapt;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  return s;
}

TEST(ExactSamplers, SamplesPassScipyKolmogorovSmirnovOnAStandardNormal) {
  // Reference: scipy.stats.kstest against scipy.stats.norm, 1% level, thinned draws.
  for (Method method : {Method::kHmc, Method::kRhmc}) {
    HmcRun r =
        run_hmc(hmc_settings(method, 0.3, 5, false), 1, 100, 1500, 4, testing::test_seed(61));
    testing::KsResult ks = testing::scipy_ks_normal(r.first_coordinate);
    std::printf("%s: %zu samples, acceptance %.3f, KS statistic %.4f, p = %.4f\n",
                std::string(method_name(method)).c_str(), r.first_coordinate.size(), r.acceptance,
                ks.statistic, ks.p_value);
    ASSERT_GE(ks.p_value, 0) << "could not run tests/tools/ks_test.py";
    EXPECT_GT(ks.p_value, 0.01) << method_name(method);
  }
}

TEST(ExactSamplers, KolmogorovSmirnovRejectsAWrongTarget) {
  // The same samples against N(0, 1.3^2) must fail: the check can fail.
  HmcRun r =
      run_hmc(hmc_settings(Method::kHmc, 0.3, 5, false), 1, 100, 1500, 4, testing::test_seed(62));
  testing::KsResult ks = testing::scipy_ks_normal(r.first_coordinate, 0, 1.3);
  EXPECT_LT(ks.p_value, 0.01);
}

TEST(ExactSamplers, AcceptanceFallsAsTheStepGrows) {
  // 10-D standard normal, L = 10: the energy error grows with eps.
  for (Method method : {Method::kHmc, Method::kRhmc}) {
    double previous = 1.01;
    for (double eps : {0.2, 0.6, 1.0, 1.4}) {
      HmcRun r =
          run_hmc(hmc_settings(method, eps, 10, false), 10, 0, 500, 1, testing::test_seed(63));
      std::printf("%s eps %.1f: acceptance %.3f\n", std::string(method_name(method)).c_str(), eps,
                  r.acceptance);
      EXPECT_LT(r.acceptance, previous) << method_name(method) << " eps " << eps;
      previous = r.acceptance;
    }
    EXPECT_LT(previous, 0.6);
  }
}

TEST(ExactSamplers, DualAveragingReachesTheTargetAcceptance) {
  // docs/methods.md 6: 10-D standard normal, L = 10: mean acceptance after warm-up in
  // delta +- 0.05 (delta = 0.65).
  HmcRun r =
      run_hmc(hmc_settings(Method::kHmc, 1.0, 10, true), 10, 4000, 2000, 1, testing::test_seed(64));
  const SamplerState& state = r.outcome.chains[0].checkpoint.state;
  std::printf("hmc dual averaging: acceptance after warm-up %.3f, eps %.4f (bar %.4f)\n",
              r.acceptance, state.doubles.at("step")[0],
              std::exp(state.doubles.at("dual_averaging")[2]));
  EXPECT_NEAR(r.acceptance, 0.65, 0.05);
}

TEST(ExactSamplers, LeapfrogStabilityLimitOnTheCorrelatedGaussian) {
  // docs/methods.md 6 / 12.2: rho = 0.95, stable for eps < 2 sqrt(0.05) = 0.4472: eps = 0.45
  // must diverge (acceptance collapses), eps = 0.25 must sample the covariance.
  Eigen::MatrixXd cov(2, 2);
  cov << 1, 0.95, 0.95, 1;
  SamplerSettings s = hmc_settings(Method::kHmc, 0.45, 40, false);
  s.hmc.jitter = 0;
  HmcRun unstable = run_hmc(s, 2, 0, 300, 1, testing::test_seed(65), cov);
  s.step_size = 0.25;
  HmcRun stable = run_hmc(s, 2, 100, 4000, 1, testing::test_seed(65), cov);
  double var = 0;
  for (double x : stable.first_coordinate) var += x * x;
  var /= static_cast<double>(stable.first_coordinate.size());
  std::printf("eps 0.45: acceptance %.3f; eps 0.25: acceptance %.3f, Var(theta_0) %.4f\n",
              unstable.acceptance, stable.acceptance, var);
  EXPECT_LT(unstable.acceptance, 0.05);
  EXPECT_GT(stable.acceptance, 0.5);
  // 8000 draws of nearly independent samples: sd of the variance estimate ~0.016.
  EXPECT_NEAR(var, 1.0, 0.07);
}

TEST(ExactSamplers, RhmcSamplesTheBayesianLinearRegressionPosterior) {
  // docs/methods.md 12.1 (Pattern Recognition and Machine Learning, 2006, Section 3.3):
  // mean m_N and covariance S_N.
  for (Method method : {Method::kHmc, Method::kRhmc}) {
    SamplerSettings s = hmc_settings(method, 0.1, 10, true);
    s.relativistic.speed = 0.5;
    ChainSettings c;
    c.chains = 2;
    c.burn_in = 500;
    c.thin = 1;
    c.samples = 5000;
    c.seed = testing::test_seed(66);
    Eigen::Vector2d sum = Eigen::Vector2d::Zero();
    Eigen::Matrix2d outer = Eigen::Matrix2d::Zero();
    double n = 0;
    ChainHooks hooks;
    hooks.on_sample = [&](const KeptSample& k) {
      const Eigen::Vector2d w = k.theta.cast<double>();
      sum += w;
      outer += w * w.transpose();
      ++n;
    };
    auto factory = [](int) { return std::make_unique<testing::LinearRegressionPosterior>(1); };
    Result<RunOutcome> run = run_chains(s, c, 2, factory, {}, hooks);
    ASSERT_TRUE(run.ok() && run->status.ok());
    const Eigen::Vector2d mean = sum / n;
    const Eigen::Matrix2d cov = outer / n - mean * mean.transpose();
    const Eigen::Vector2d m_n = testing::LinearRegressionPosterior::posterior_mean();
    const Eigen::Matrix2d s_n = testing::LinearRegressionPosterior::posterior_covariance();
    std::printf("%s: mean (%.4f, %.4f) vs (%.4f, %.4f); var (%.4f, %.4f) vs (%.4f, %.4f)\n",
                std::string(method_name(method)).c_str(), mean[0], mean[1], m_n[0], m_n[1],
                cov(0, 0), cov(1, 1), s_n(0, 0), s_n(1, 1));
    for (int i = 0; i < 2; ++i) {
      // docs/methods.md 12.1 criterion with ESS >= 2000 assumed (10000 draws).
      EXPECT_NEAR(mean[i], m_n[i], 4 * std::sqrt(s_n(i, i) / 2000)) << method_name(method);
      EXPECT_NEAR(cov(i, i) / s_n(i, i), 1.0, 0.1) << method_name(method);
    }
  }
}

}  // namespace
}  // namespace credence
