// Single-step and few-step values of every update rule against docs/methods.md's worked
// numbers (sections 2, 4, 5.2, 5.8, 6, 7, 8), plus method names and schedules.
#include <gtest/gtest.h>

#include <cmath>
#include <limits>

#include "credence/samplers.h"
#include "samplers/hamiltonian.h"
#include "samplers/relativistic.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::IndependentGaussian;

// Runs `steps` steps of `settings` on U = sum theta_i^2 / 2 from theta0 (no noise in
// the gradient); returns theta and leaves the sampler for state inspection.
Eigen::VectorXf run_steps(const SamplerSettings& settings, Eigen::VectorXf theta, int steps,
                          std::unique_ptr<Sampler>* keep = nullptr) {
  IndependentGaussian potential(Eigen::VectorXf::Ones(theta.size()));
  auto sampler = Sampler::create(settings, theta.size(), potential.rows(), 1);
  EXPECT_TRUE(sampler.ok()) << sampler.status().to_string();
  for (int t = 0; t < steps; ++t) {
    StepContext context;
    context.step = t;
    context.step_size = (*sampler)->base_step_size();
    StepReport report;
    EXPECT_TRUE((*sampler)->step(theta, potential, context, report).ok());
  }
  if (keep) *keep = std::move(*sampler);
  return theta;
}

TEST(UpdateRules, SgdTenStepsGivePointNineToTheTenth) {
  // docs/methods.md 7: U = theta^2/2, theta_0 = 1, step 0.1 (eps = 0.2): 0.9^10.
  SamplerSettings s;
  s.method = Method::kSgd;
  s.step_size = 0.2;
  Eigen::VectorXf theta = run_steps(s, Eigen::VectorXf::Ones(1), 10);
  EXPECT_NEAR(theta[0], 0.3486784401, 1e-6);
}

TEST(UpdateRules, HeavyBallTenStepsMatchMethodsSection4) {
  // docs/methods.md 4: theta_0 = 1, v_0 = 0, eta = 0.1, alpha = 0.1, ten steps.
  SamplerSettings s;
  s.method = Method::kMomentum;
  s.step_size = 0.1;
  s.sghmc.alpha = 0.1;
  std::unique_ptr<Sampler> sampler;
  Eigen::VectorXf theta = run_steps(s, Eigen::VectorXf::Ones(1), 10, &sampler);
  EXPECT_NEAR(theta[0], -0.5887893888, 1e-6);
  EXPECT_NEAR(sampler->save_state().floats.at("v")[0], 0.0149275872, 1e-6);
}

TEST(UpdateRules, RelativisticSgdTenStepsMatchMethods58AndRespectTheBound) {
  // docs/methods.md 5.8: eps = 0.1, D = 1, m = 1, theta_0 = 1, p_0 = 0.
  for (auto [c, expected] : {std::pair{1.0, 0.6475275931527721}, {0.05, 0.9508872724954301}}) {
    SamplerSettings s;
    s.method = Method::kRsgd;
    s.step_size = 0.1;
    s.relativistic.friction = 1;
    s.relativistic.mass = 1;
    s.relativistic.speed = c;
    Eigen::VectorXf theta = run_steps(s, Eigen::VectorXf::Ones(1), 10);
    EXPECT_NEAR(theta[0], expected, 2e-6) << "c = " << c;
    EXPECT_GE(theta[0], 1 - 10 * 0.1 * c - 1e-6);
  }
}

TEST(UpdateRules, AdamThreeStepsMatchMethodsSection7) {
  // docs/methods.md 7: U = |theta|^2/2 from (1, -2), a = 1e-3, paper defaults, N = 1.
  SamplerSettings s;
  s.method = Method::kAdam;
  s.step_size = 1e-3;
  const double expected[3][2] = {{0.99900000001, -1.999000000005},
                                 {0.9980000262238367, -1.9980000130773594},
                                 {0.9970000960801475, -1.997000047904775}};
  for (int steps = 1; steps <= 3; ++steps) {
    Eigen::VectorXf theta = run_steps(s, Eigen::Vector2f(1, -2), steps);
    EXPECT_NEAR(theta[0], expected[steps - 1][0], 2e-7) << "step " << steps;
    EXPECT_NEAR(theta[1], expected[steps - 1][1], 3e-7) << "step " << steps;
  }
}

// One trajectory of `steps` leapfrog steps of the hmc / rhmc rule from (q, p).
struct Trajectory {
  double q, p, energy_change;
};
Trajectory leapfrog(Method method, double q0, double p0, double eps, int steps) {
  SamplerSettings s;
  s.method = method;
  s.step_size = eps;
  s.hmc.mass = 1;
  s.relativistic.mass = 1;
  s.relativistic.speed = 1;
  IndependentGaussian potential(Eigen::VectorXf::Ones(1));
  auto made = Sampler::create(s, 1, 1, 1);
  EXPECT_TRUE(made.ok());
  auto& rule = dynamic_cast<samplers::HamiltonianRule&>(**made);
  Eigen::VectorXf theta = Eigen::VectorXf::Constant(1, static_cast<float>(q0));
  rule.momentum()[0] = static_cast<float>(p0);
  Trajectory out{};
  EXPECT_TRUE(
      rule.leapfrog(theta, potential, static_cast<float>(eps), steps, out.energy_change).ok());
  out.q = theta[0];
  out.p = rule.momentum()[0];
  return out;
}

TEST(UpdateRules, HmcLeapfrogMatchesTheHarmonicOscillatorValues) {
  // docs/methods.md 6 (double-precision values; float engine, tolerances ~1e-6).
  Trajectory a = leapfrog(Method::kHmc, 1, 0, 0.1, 1);
  EXPECT_NEAR(a.q, 0.995, 1e-6);
  EXPECT_NEAR(a.p, -0.09975, 1e-6);
  EXPECT_NEAR(a.energy_change, -1.246875e-05, 2e-7);
  Trajectory b = leapfrog(Method::kHmc, 0.7, -0.4, 0.3, 1);
  EXPECT_NEAR(b.q, 0.5485, 1e-6);
  EXPECT_NEAR(b.p, -0.587275, 1e-6);
  EXPECT_NEAR(b.energy_change, -0.0021279121875, 2e-7);
  Trajectory c = leapfrog(Method::kHmc, 1, 0, 0.1, 100);
  EXPECT_NEAR(c.q, -0.8367949271103875, 2e-5);
  EXPECT_NEAR(c.p, 0.5468316142446552, 2e-5);
}

TEST(UpdateRules, RhmcLeapfrogMatchesMethods58) {
  // docs/methods.md 5.8: U = q^2/2, m = c = 1.
  Trajectory a = leapfrog(Method::kRhmc, 1, 0, 0.1, 1);
  EXPECT_NEAR(a.q, 0.9950062383056107, 1e-6);
  EXPECT_NEAR(a.p, -0.09975031191528054, 1e-6);
  EXPECT_NEAR(a.energy_change, -1.8544936e-05, 2e-7);
  Trajectory b = leapfrog(Method::kRhmc, 1, 0, 0.1, 100);
  EXPECT_NEAR(b.q, -0.5604465276538415, 2e-5);
  EXPECT_NEAR(b.p, -0.8952887215952162, 2e-5);
  EXPECT_NEAR(b.energy_change, -7.3455098e-04, 2e-6);
}

TEST(UpdateRules, RhmcLeapfrogIsReversible) {
  // docs/methods.md 5.8: L steps, negate p, L steps, negate p: back to the start
  // (1e-12 in double; float here, so 1e-5).
  Trajectory forward = leapfrog(Method::kRhmc, 0.3, 1.7, 0.07, 50);
  Trajectory back = leapfrog(Method::kRhmc, forward.q, -forward.p, 0.07, 50);
  EXPECT_NEAR(back.q, 0.3, 1e-5);
  EXPECT_NEAR(-back.p, 1.7, 1e-5);
}

TEST(UpdateRules, RelativisticVelocityIsBoundedAndNewtonianForLargeC) {
  // docs/methods.md 5.8: |v| < c for huge p (float's largest here); v -> p/m for c = 1e8.
  const float huge = std::numeric_limits<float>::max();
  EXPECT_LE(std::abs(samplers::relativistic_velocity(huge, 1, 0.5f)), 0.5f);
  EXPECT_LE(std::abs(samplers::relativistic_velocity(-huge, 1e-30f, 0.5f)), 0.5f);
  EXPECT_NEAR(samplers::relativistic_velocity(3, 2, 1e8f), 1.5, 1e-6);
}

TEST(UpdateRules, MeanSpeedRatioMatchesTheTableOfMethods52) {
  // docs/methods.md 5.2 table (E|v|/c as a function of u) and its inverse values.
  const double u[] = {0.1, 0.25, 0.5, 1, 2, 4, 10, 100};
  const double ratio[] = {0.918258, 0.831380, 0.732330, 0.611190,
                          0.483804, 0.366797, 0.243447, 0.079491};
  for (int i = 0; i < 8; ++i) EXPECT_NEAR(samplers::mean_speed_ratio(u[i]), ratio[i], 2e-6);
  EXPECT_NEAR(samplers::u_for_speed_ratio(0.3), 6.3360, 1e-3);
  EXPECT_NEAR(samplers::u_for_speed_ratio(0.5), 1.8285, 1e-3);
  EXPECT_NEAR(samplers::u_for_speed_ratio(0.7), 0.60736, 1e-4);
}

TEST(UpdateRules, MomentumSliceSamplerReachesTheHyperbolicVariance) {
  // docs/methods.md 5.2: Var(p) = m T K_2(u) / K_1(u); table values for m = T = 1, c = sqrt(u).
  Rng rng(testing::test_seed(21));
  const int n = 20000;
  for (auto [u, expected] : {std::pair{0.1, 20.2463068}, {1.0, 2.69948394}, {10.0, 1.15341725}}) {
    Eigen::VectorXf p = Eigen::VectorXf::Zero(n);
    const Eigen::VectorXf mass = Eigen::VectorXf::Ones(n);
    const Eigen::VectorXf speed = Eigen::VectorXf::Constant(n, static_cast<float>(std::sqrt(u)));
    for (int s = 0; s < 30; ++s) samplers::refresh_relativistic_momentum(p, mass, speed, 1, rng);
    double sum = 0;
    const int sweeps = 100;
    for (int s = 0; s < sweeps; ++s) {
      samplers::refresh_relativistic_momentum(p, mass, speed, 1, rng);
      sum += p.cast<double>().squaredNorm() / n;
    }
    const double variance = sum / sweeps;
    std::printf("u = %g: Var(p) = %.5f, table %.5f\n", u, variance, expected);
    // 2 million correlated draws (lag-1 correlation <= 0.47): standard error of the
    // variance below 0.5% even for the heavy tails at u = 0.1; tolerance 2%.
    EXPECT_NEAR(variance / expected, 1.0, 0.02) << "u = " << u;
  }
}

TEST(MethodNames, EveryNameParsesAndPrintsBack) {
  for (const char* name :
       {"sgld", "psgld", "sghmc", "rsghmc", "sgd", "momentum", "rsgd", "adam", "hmc", "rhmc",
        "santa", "santa-opt"}) {
    Result<Method> method = parse_method(name);
    ASSERT_TRUE(method.ok()) << name;
    EXPECT_EQ(method_name(*method), name);
  }
}

TEST(MethodNames, UnknownNameListsTheValidOnes) {
  Result<Method> method = parse_method("langevin");
  ASSERT_FALSE(method.ok());
  EXPECT_EQ(method.status().code(), StatusCode::kInvalidInput);
  EXPECT_EQ(method.status().message(),
            "unknown method 'langevin'; valid methods are: sgld, psgld, sghmc, rsghmc, sgd, "
            "momentum, rsgd, adam, hmc, rhmc, santa, santa-opt");
}

TEST(Schedules, PolynomialDecayValuesAndFit) {
  // docs/methods.md 2: a = 0.01, b = 1, gamma = 0.55; fit 1e-2 -> 1e-4 over 10000 steps.
  double a = 0, b = 0;
  fit_polynomial_decay(1e-2, 1e-4, 0.55, 10000, a, b);
  EXPECT_NEAR(a, 0.0158509, 1e-6);
  EXPECT_NEAR(b, 2.310663, 1e-5);
  ScheduleSettings settings;
  settings.kind = ScheduleKind::kPolynomial;
  settings.gamma = 0.55;
  settings.end_ratio = std::pow(100.0, -0.55);  // makes b = 1 over 99 steps
  StepSchedule schedule(settings, 0.01, 99);
  EXPECT_NEAR(schedule.b(), 1.0, 1e-9);
  EXPECT_NEAR(schedule.step_size(0), 0.01, 1e-12);
  EXPECT_NEAR(schedule.step_size(9), 0.002818382931, 1e-11);
  EXPECT_NEAR(schedule.step_size(99), 7.943282347e-4, 1e-12);
}

TEST(Schedules, CyclicalCosineValuesAndStages) {
  // docs/methods.md 8: K = 12, M = 3, alpha_0 = 1, beta = 0.5.
  ScheduleSettings settings;
  settings.kind = ScheduleKind::kCyclical;
  settings.cycles = 3;
  settings.exploration_fraction = 0.5;
  StepSchedule schedule(settings, 1.0, 12);
  const double alpha[4] = {1, 0.853553, 0.5, 0.146447};
  for (int t = 0; t < 12; ++t) {
    EXPECT_NEAR(schedule.step_size(t), alpha[t % 4], 1e-6) << "t = " << t;
    EXPECT_EQ(schedule.exploring(t), t % 4 < 2) << "t = " << t;
    EXPECT_GT(schedule.step_size(t), 0);
  }
}

TEST(Settings, BadValuesNameTheField) {
  SamplerSettings s;
  s.sghmc.alpha = 0;
  Status status = validate(s);
  EXPECT_EQ(status.code(), StatusCode::kInvalidInput);
  EXPECT_EQ(status.message(), "sampler setting 'sghmc.alpha' must lie in (0, 1]");
  SamplerSettings r;
  r.method = Method::kRsghmc;
  r.relativistic.slices = {{0, 5, 1, 1}, {3, 4, 1, 1}};
  auto made = Sampler::create(r, 10, 1, 1);
  ASSERT_FALSE(made.ok());
  EXPECT_NE(made.status().message().find("overlaps"), std::string::npos);
}

TEST(Settings, LearningRatesConvertToPotentialUnits) {
  // docs/methods.md 0, 2, 4: eps = 2 lr / N, eta = lr / N; time steps sqrt(lr / N).
  SamplerSettings s;
  s.learning_rate = 0.01;
  s.method = Method::kSgld;
  EXPECT_DOUBLE_EQ(base_step_size(s, 1000), 2e-5);
  s.method = Method::kSghmc;
  EXPECT_DOUBLE_EQ(base_step_size(s, 1000), 1e-5);
  s.method = Method::kRsghmc;
  EXPECT_DOUBLE_EQ(base_step_size(s, 100), 0.01);
  s.method = Method::kAdam;
  EXPECT_DOUBLE_EQ(base_step_size(s, 100), 0.01);
}

}  // namespace
}  // namespace credence
