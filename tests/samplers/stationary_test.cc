// Stationary moments of the discrete recursions on 1-D Gaussians (20000 parallel
// chains in one vector) against docs/methods.md's closed forms (sections 2, 3, 4, 5.8).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "credence/samplers.h"
#include "samplers/moments.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::Estimate;
using testing::IndependentGaussian;

constexpr Eigen::Index kChains = 20000;

// Checks an estimate against a target: within 4 standard errors, and the
// standard error small enough (below `precision` relative) for the check to bite.
void expect_moment(const Estimate& e, double target, double precision, const char* what) {
  std::printf("%-40s %.6f +- %.6f (target %.6f, rel. error %+.4f)\n", what, e.value,
              e.standard_error, target, e.value / target - 1);
  EXPECT_LT(e.standard_error / target, precision) << what;
  EXPECT_NEAR(e.value, target, 4 * e.standard_error) << what;
}

Estimate theta_variance(const SamplerSettings& s, PotentialFn& potential, int burn_in, int steps,
                        std::uint64_t seed) {
  auto sampler = Sampler::create(s, kChains, potential.rows(), seed);
  EXPECT_TRUE(sampler.ok());
  return testing::batch_means(testing::stationary_series(
      **sampler, potential, kChains, burn_in, steps,
      [](const Eigen::VectorXf& theta, const Sampler&) { return testing::mean_square(theta); }));
}

TEST(SgldStationary, VarianceMatchesTheDiscreteFormula) {
  // docs/methods.md 2 [D]: Var = T sigma^2 / (1 - eps / (4 sigma^2)).
  const std::uint64_t seed = testing::test_seed(31);
  struct Case {
    double var, eps, expected;
  };
  for (Case c :
       {Case{1, 0.1, 1.0256410256}, Case{1, 0.5, 1.1428571429}, Case{2, 0.4, 2.1052631579}}) {
    SamplerSettings s;
    s.method = Method::kSgld;
    s.step_size = c.eps;
    IndependentGaussian potential(Eigen::VectorXf::Constant(kChains, static_cast<float>(c.var)));
    const int relax = static_cast<int>(20 * c.var / c.eps);
    expect_moment(theta_variance(s, potential, relax, 40 * relax, seed), c.expected, 0.004,
                  "sgld Var(theta)");
  }
}

TEST(SgldStationary, GradientNoiseAddsEpsVOverFour) {
  // docs/methods.md 2 [D]: sigma^2 (T + eps V / 4) / (1 - eps / (4 sigma^2)); sigma^2 = 1,
  // eps = 0.1, V = 2: 1.0769230769.
  SamplerSettings s;
  s.method = Method::kSgld;
  s.step_size = 0.1;
  IndependentGaussian potential(Eigen::VectorXf::Ones(kChains), 2.0, 5);
  expect_moment(theta_variance(s, potential, 200, 8000, testing::test_seed(32)),
                (1 + 0.1 * 2 / 4) / (1 - 0.1 / 4), 0.004, "sgld Var(theta), noisy gradient");
}

TEST(SghmcStationary, MomentsMatchTheTableOfMethodsSection4) {
  // docs/methods.md 4 [D]: Var(theta) and Var(v) of the discrete recursion, sigma^2 = T = 1.
  struct Row {
    double eta, alpha, var_theta, var_v;
  };
  const std::uint64_t seed = testing::test_seed(33);
  for (Row r :
       {Row{0.01, 0.1, 1.0026385224, 0.0105540897}, Row{0.1, 0.5, 1.0344827586, 0.1379310345}}) {
    SamplerSettings s;
    s.method = Method::kSghmc;
    s.step_size = r.eta;
    s.sghmc.alpha = r.alpha;
    IndependentGaussian potential(Eigen::VectorXf::Ones(kChains));
    auto sampler = Sampler::create(s, kChains, 1, seed);
    ASSERT_TRUE(sampler.ok());
    std::vector<double> v2;
    // Relaxation: position ~ alpha / eta steps, energy ~ 1 / alpha steps.
    const int relax = static_cast<int>(std::max(5 / r.alpha, 4 * r.alpha / r.eta) * 4);
    auto theta2 = testing::stationary_series(
        **sampler, potential, kChains, relax, 40 * relax,
        [&](const Eigen::VectorXf& theta, const Sampler& sm) {
          const auto v = sm.save_state().floats.at("v");
          double sum = 0;
          for (float x : v) sum += static_cast<double>(x) * x;
          v2.push_back(sum / static_cast<double>(v.size()));
          return testing::mean_square(theta);
        },
        {}, 4);
    expect_moment(testing::batch_means(theta2), r.var_theta, 0.004, "sghmc Var(theta)");
    expect_moment(testing::batch_means(v2), r.var_v, 0.004, "sghmc Var(v)");
  }
}

TEST(SghmcStationary, NoiseCorrectionRestoresTheNoiseFreeMoments) {
  // docs/methods.md 4: with gradient noise V and beta_hat = eta V / 2 the moments equal the
  // noise-free row (eta = 0.1, alpha = 0.5: 30/29). Without the correction they are
  // inflated (effective T about 1 + beta_hat / alpha).
  SamplerSettings s;
  s.method = Method::kSghmc;
  s.step_size = 0.1;
  s.sghmc.alpha = 0.5;
  s.sghmc.correct_gradient_noise = true;
  IndependentGaussian potential(Eigen::VectorXf::Ones(kChains), 4.0, 7);  // beta_hat = 0.2
  Estimate corrected = theta_variance(s, potential, 200, 4000, testing::test_seed(34));
  expect_moment(corrected, 30.0 / 29, 0.004, "sghmc Var(theta), corrected noise");
  s.sghmc.correct_gradient_noise = false;
  Estimate raw = theta_variance(s, potential, 200, 4000, 35);
  std::printf("uncorrected: %.5f\n", raw.value);
  EXPECT_GT(raw.value, 30.0 / 29 * 1.2);
}

TEST(RsghmcStationary, VarianceWithinThreePercentOfTheTarget) {
  // docs/methods.md 5.8: 60 time units at eps = 0.05; tolerance 3% on Var(theta), 15% on Var(p).
  struct Case {
    double m, c, t, d, var_p;
  };
  for (Case k : {Case{1, 1, 1, 1, 2.69948394}, Case{0.5, 2, 0.5, 2, 0.3485}}) {
    SamplerSettings s;
    s.method = Method::kRsghmc;
    s.step_size = 0.05;
    s.temperature = k.t;
    s.relativistic.mass = k.m;
    s.relativistic.speed = k.c;
    s.relativistic.friction = k.d;
    s.relativistic.adapt_mass = false;
    IndependentGaussian potential(Eigen::VectorXf::Ones(kChains));
    auto sampler = Sampler::create(s, kChains, 1, testing::test_seed(36));
    ASSERT_TRUE(sampler.ok());
    const auto series =
        testing::position_momentum_series(**sampler, potential, kChains, 1200, 2400, 4);
    Estimate var_theta = testing::batch_means(series.theta2);
    Estimate var_p = testing::batch_means(series.p2);
    std::printf(
        "rsghmc m=%g c=%g T=%g D=%g: Var(theta) %.4f (target %g), Var(p) %.4f (target %g)\n", k.m,
        k.c, k.t, k.d, var_theta.value, k.t, var_p.value, k.var_p);
    EXPECT_NEAR(var_theta.value / k.t, 1.0, 0.03);
    EXPECT_NEAR(var_p.value / k.var_p, 1.0, 0.15);
  }
}

TEST(RsghmcStationary, JointFormSamplesAnIsotropicGaussian) {
  // Joint kinetic energy (docs/methods.md 5.1) on a 20-D standard normal, m = 1, c = 3:
  // Var(theta) = 1 in the continuous limit; eps = 0.05 over 1500 time units.
  SamplerSettings s;
  s.method = Method::kRsghmc;
  s.step_size = 0.05;
  s.relativistic.joint = true;
  s.relativistic.mass = 1;
  s.relativistic.speed = 3;
  s.relativistic.friction = 1;
  s.relativistic.adapt_mass = false;
  IndependentGaussian potential(Eigen::VectorXf::Ones(20));
  auto sampler = Sampler::create(s, 20, 1, testing::test_seed(38));
  ASSERT_TRUE(sampler.ok());
  Estimate e = testing::batch_means(testing::stationary_series(
      **sampler, potential, 20, 2000, 30000,
      [](const Eigen::VectorXf& theta, const Sampler&) { return testing::mean_square(theta); }));
  std::printf("joint rsghmc Var(theta) %.4f +- %.4f (target 1)\n", e.value, e.standard_error);
  EXPECT_LT(e.standard_error, 0.02);
  EXPECT_NEAR(e.value, 1.0, std::max(0.03, 4 * e.standard_error));
}

TEST(PsgldStationary, FrozenPreconditionerGivesSgldWithPerCoordinateSteps) {
  // docs/methods.md 3: with G frozen, Var_i = T sigma^2 / (1 - eps G_i / (4 sigma^2)).
  SamplerSettings s;
  s.method = Method::kPsgld;
  s.step_size = 0.05;
  s.psgld.rho = 0.99;
  IndependentGaussian potential(Eigen::VectorXf::Ones(kChains));
  const std::uint64_t seed = testing::test_seed(37);
  auto sampler = Sampler::create(s, kChains, 1, seed);
  ASSERT_TRUE(sampler.ok());
  // Start from the target: at theta = 0 every gradient is 0, V = 0 and G = 1/lambda,
  // the "dead unit" failure of docs/methods.md 3.
  Eigen::VectorXf start(kChains);
  Rng rng(seed + 1);
  rng.fill_normal({start.data(), static_cast<std::size_t>(kChains)});
  Eigen::VectorXd expected;
  auto ratio = testing::stationary_series(
      **sampler, potential, kChains, 1000, 10000,
      [&](const Eigen::VectorXf& theta, const Sampler& sm) {
        if (expected.size() == 0) {
          const auto g = sm.save_state().floats.at("preconditioner");
          expected.resize(theta.size());
          for (Eigen::Index i = 0; i < theta.size(); ++i) {
            expected[i] = 1.0 / (1.0 - 0.05 * g[static_cast<std::size_t>(i)] / 4);
          }
        }
        return (theta.cast<double>().cwiseAbs2().array() / expected.array()).mean();
      },
      start);
  expect_moment(testing::batch_means(ratio), 1.0, 0.004, "psgld Var(theta) / formula");
}

}  // namespace
}  // namespace credence
