// Constants that burn-in adapts, checked against the formulas they must keep
// (docs/methods.md sections 3, 5.3, 5.4 and 6): rsghmc's friction under mass
// adaptation, pSGLD's Gamma term under the bias-corrected average, and rhmc's move
// bound under dual averaging.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "credence/samplers.h"
#include "samplers/hamiltonian.h"
#include "samplers/moments.h"
#include "samplers/relativistic.h"
#include "testing/seed.h"
#include "testing/targets.h"

namespace credence {
namespace {

using testing::Estimate;
using testing::IndependentGaussian;

TEST(AdaptedConstants, RsghmcFrictionFollowsTheAdaptedMass) {
  // Newtonian match of "Relativistic Monte Carlo" (AISTATS 2017) with SGHMC (ICML 2014),
  // docs/methods.md 5.4: alpha = eps D / m, so the derived D = alpha m / eps gives a
  // friction factor of alpha per step. Mass adaptation (5.6) moves m from 0.05 (E|v|/c
  // ~ 0.96 at c = 1) to about the u* = 1.8285 of the 5.2 table; D must move with it.
  // The moments are the analytic ones of exp(-(U + K)/T) on U = theta^2/2, T = 1:
  // Var(theta) = 1 and Var(p) = m T K_2(u)/K_1(u), u = m c^2 / T (docs/methods.md 5.2,
  // Bessel functions from the C++ standard library), tolerances of 5.8 (3%, 15%).
  constexpr Eigen::Index kChains = 20000;
  constexpr double kEps = 0.05, kAlpha = 0.1;
  SamplerSettings s;
  s.method = Method::kRsghmc;
  s.step_size = kEps;
  s.relativistic.speed = 1;
  s.relativistic.mass = 0.05;
  s.relativistic.alpha = kAlpha;  // friction derived: D = alpha m / eps
  s.relativistic.adapt_window = 50;
  IndependentGaussian potential(Eigen::VectorXf::Ones(kChains));
  auto sampler = Sampler::create(s, kChains, 1, testing::test_seed(91));
  ASSERT_TRUE(sampler.ok());
  const auto series =
      testing::position_momentum_series(**sampler, potential, kChains, 3000, 2400, 4);
  const SamplerState state = (*sampler)->save_state();
  const double mass = state.floats.at("mass")[0];
  const double friction = state.floats.at("friction")[0];
  const double factor = kEps * friction / mass;
  const double u = mass;  // m c^2 / T with c = T = 1
  const double var_p_target = mass * std::cyl_bessel_k(2.0, u) / std::cyl_bessel_k(1.0, u);
  const Estimate var_theta = testing::batch_means(series.theta2);
  const Estimate var_p = testing::batch_means(series.p2);
  std::printf(
      "adapted m %.4f, D %.4f, eps D / m %.5f (alpha %.2f); Var(theta) %.4f, Var(p) %.4f "
      "(target %.4f)\n",
      mass, friction, factor, kAlpha, var_theta.value, var_p.value, var_p_target);
  EXPECT_GT(mass, 0.5) << "the mass did not adapt, so the test checks nothing";
  EXPECT_NEAR(factor / kAlpha, 1.0, 1e-5);
  EXPECT_NEAR(var_theta.value, 1.0, 0.03);
  EXPECT_NEAR(var_p.value / var_p_target, 1.0, 0.15);
}

TEST(AdaptedConstants, RsghmcGivenFrictionStaysAsGiven) {
  // A friction the user sets is a setting, not a derived value: adaptation leaves it.
  SamplerSettings s;
  s.method = Method::kRsghmc;
  s.step_size = 0.05;
  s.relativistic.speed = 1;
  s.relativistic.mass = 0.05;
  s.relativistic.friction = 1;
  s.relativistic.adapt_window = 50;
  IndependentGaussian potential(Eigen::VectorXf::Ones(1000));
  auto sampler = Sampler::create(s, 1000, 1, testing::test_seed(92));
  ASSERT_TRUE(sampler.ok());
  testing::stationary_series(**sampler, potential, 1000, 2000, 1,
                             [](const Eigen::VectorXf&, const Sampler&) { return 0.0; });
  const SamplerState state = (*sampler)->save_state();
  EXPECT_GT(state.floats.at("mass")[0], 0.5f);
  EXPECT_EQ(state.floats.at("friction")[0], 1.0f);
}

// Runs `steps` burn-in steps of the sampler's own step size from theta; returns
// theta[0] before each step, where that step's gradient is taken.
std::vector<double> burn_in_steps(Sampler& sampler, PotentialFn& potential, Eigen::VectorXf& theta,
                                  int steps) {
  std::vector<double> at;
  for (int t = 0; t < steps; ++t) {
    at.push_back(theta[0]);
    StepContext context;
    context.step = t;
    context.step_size = sampler.base_step_size();
    context.burn_in = true;
    StepReport report;
    EXPECT_TRUE(sampler.step(theta, potential, context, report).ok());
  }
  return at;
}

// pSGLD's preconditioner at step t as a function of the newest theta, in double, as
// the AAAI 2016 paper defines it with the bias-corrected average of docs/methods.md 3:
// G_t(x) = 1 / (lambda + sqrt((rho V_{t-1} + (1 - rho) gbar(x)^2) / (1 - rho^t))),
// here with gbar(x) = x (U = x^2 / 2, N = 1).
double preconditioner_at(double x, double v_previous, double rho, double lambda, int t) {
  const double v = rho * v_previous + (1 - rho) * x * x;
  return 1 / (lambda + std::sqrt(v / (1 - std::pow(rho, t))));
}

TEST(AdaptedConstants, PsgldGammaIsTheDerivativeOfTheBiasCorrectedPreconditioner) {
  // Gamma_i = d G_ii / d theta_i (AAAI 2016; docs/methods.md 3) at t = 2, where
  // 1 / (1 - rho^2) = 50.25 at rho = 0.99, against a central finite difference of G_2.
  // On U = theta^2/2 the secant Hessian of the code is exact (1), so the two agree.
  constexpr double kRho = 0.99, kLambda = 1e-5;
  SamplerSettings s;
  s.method = Method::kPsgld;
  s.step_size = 0.02;
  s.psgld.rho = kRho;
  s.psgld.lambda = kLambda;
  s.psgld.gamma_correction = true;
  IndependentGaussian potential(Eigen::VectorXf::Ones(1));
  auto sampler = Sampler::create(s, 1, potential.rows(), testing::test_seed(93));
  ASSERT_TRUE(sampler.ok());
  Eigen::VectorXf theta = Eigen::VectorXf::Constant(1, 1.5f);
  const std::vector<double> at = burn_in_steps(**sampler, potential, theta, 2);
  const double v1 = (1 - kRho) * at[0] * at[0];
  const double h = 1e-6 * std::max(1.0, std::abs(at[1]));
  const double expected = (preconditioner_at(at[1] + h, v1, kRho, kLambda, 2) -
                           preconditioner_at(at[1] - h, v1, kRho, kLambda, 2)) /
                          (2 * h);
  const double gamma = (*sampler)->save_state().floats.at("gamma")[0];
  std::printf("theta_1 %.6f: Gamma_2 %.6g, finite difference %.6g\n", at[1], gamma, expected);
  EXPECT_NEAR(gamma / expected, 1.0, 1e-4);
}

TEST(AdaptedConstants, PsgldGammaIsZeroWhereThePreconditionerIsCapped) {
  // Where the cap G_i <= 1e3 median(G) binds (docs/methods.md 3), G_i is the cap, which
  // does not move with theta_i: d G_ii / d theta_i = 0 (up to the median's O(1/P) share).
  // Coordinate 2 has a nearly flat potential (variance 1e12): uncapped G would be
  // 1 / (lambda + |gbar|) ~ 1e5, so it is capped; coordinates 0 and 1 are not.
  SamplerSettings s;
  s.method = Method::kPsgld;
  s.step_size = 0.02;
  s.psgld.gamma_correction = true;
  IndependentGaussian potential(Eigen::Vector3f(1.0f, 1.0f, 1e12f));
  auto sampler = Sampler::create(s, 3, potential.rows(), testing::test_seed(95));
  ASSERT_TRUE(sampler.ok());
  Eigen::VectorXf theta = Eigen::Vector3f(1.5f, -0.8f, 1.0f);
  burn_in_steps(**sampler, potential, theta, 2);
  const SamplerState state = (*sampler)->save_state();
  const auto& g = state.floats.at("preconditioner");
  const auto& gamma = state.floats.at("gamma");
  std::printf("G (%.4g, %.4g, %.4g), Gamma (%.4g, %.4g, %.4g)\n", g[0], g[1], g[2], gamma[0],
              gamma[1], gamma[2]);
  ASSERT_LT(g[2], 2e3f) << "coordinate 2 is not capped, so the test checks nothing";
  EXPECT_NE(gamma[0], 0.0f);
  EXPECT_NE(gamma[1], 0.0f);
  EXPECT_EQ(gamma[2], 0.0f);
}

// U = sum_i (c_i theta_i^2 / 2 + d_i theta_i) over N = 10 rows: a Gaussian prior of
// precision c, which the potential reports when `report_prior`, and a likelihood whose
// gradient d is constant.
class PriorPlusLinear final : public PotentialFn {
 public:
  PriorPlusLinear(Eigen::VectorXf c, Eigen::VectorXf d, bool report_prior)
      : c_(std::move(c)), d_(std::move(d)), report_prior_(report_prior) {}
  std::int64_t rows() const override { return 10; }
  Status minibatch(ConstThetaRef theta, ThetaRef grad, MinibatchValue& out) override {
    grad = c_.cwiseProduct(theta) + d_;
    out.potential = static_cast<double>(0.5f * theta.cwiseAbs2().dot(c_) + theta.dot(d_));
    return Status::ok_status();
  }
  bool prior_precision(ThetaRef precision) const override {
    if (report_prior_) precision = c_;
    return report_prior_;
  }

 private:
  Eigen::VectorXf c_, d_;
  bool report_prior_;
};

TEST(AdaptedConstants, PsgldAdaptsToTheLikelihoodAndThePriorsExpectedTerm) {
  // docs/methods.md 3: with the prior's precisions c reported, G = 1 / (lambda +
  // sqrt(Vhat + c / N^2)), Vhat averaging (d / N)^2 alone, so G does not move with theta;
  // at t = 1 the bias-corrected Vhat is (d / N)^2 exactly. Coordinate 1 has no likelihood
  // gradient (a weight the data do not touch): G = N / sqrt(c). Without the report, or
  // with adapt_without_prior off, G follows the whole gradient (the AAAI 2016 rule).
  const Eigen::Vector2f c(4.0f, 0.25f), d(3.0f, 0.0f);
  const Eigen::Vector2f start(1.5f, -2.0f);
  constexpr double kLambda = 1e-5, kN = 10;
  auto g_after_one_step = [&](bool report, bool adapt_without_prior) {
    SamplerSettings s;
    s.method = Method::kPsgld;
    s.step_size = 1e-4;
    s.psgld.max_preconditioner_ratio = 0;  // the formula alone
    s.psgld.adapt_without_prior = adapt_without_prior;
    PriorPlusLinear potential(c, d, report);
    auto sampler = Sampler::create(s, 2, potential.rows(), testing::test_seed(97));
    EXPECT_TRUE(sampler.ok());
    Eigen::VectorXf theta = start;
    burn_in_steps(**sampler, potential, theta, 1);
    return (*sampler)->save_state().floats.at("preconditioner");
  };
  const std::vector<float> now = g_after_one_step(true, true);
  for (int i = 0; i < 2; ++i) {
    const double expected = 1 / (kLambda + std::sqrt((d[i] / kN) * (d[i] / kN) + c[i] / (kN * kN)));
    EXPECT_NEAR(now[static_cast<std::size_t>(i)] / expected, 1.0, 1e-5) << i;
  }
  EXPECT_NEAR(now[1], kN / std::sqrt(0.25), 0.005);  // 20, less lambda's share (0.004)
  for (const bool report : {false, true}) {
    const std::vector<float> whole = g_after_one_step(report, !report);
    for (int i = 0; i < 2; ++i) {
      const double gbar = (c[i] * start[i] + d[i]) / kN;
      EXPECT_NEAR(whole[static_cast<std::size_t>(i)] / (1 / (kLambda + std::abs(gbar))), 1.0, 1e-5)
          << i;
    }
  }
}

// rhmc with c and m derived from its step (c = max_move / eps, m = u* T / c^2).
SamplerSettings rhmc_derived(double eps, double max_move, int leapfrog) {
  SamplerSettings s;
  s.method = Method::kRhmc;
  s.step_size = eps;
  s.relativistic.max_move = max_move;
  s.hmc.leapfrog_steps = leapfrog;
  return s;
}

struct Trajectory {
  Eigen::VectorXf theta;
  double energy_change = 0;
};

Trajectory rhmc_trajectory(double eps, const Eigen::VectorXf& k) {
  IndependentGaussian potential(Eigen::Vector3f(1.0f, 0.25f, 4.0f));
  auto made = Sampler::create(rhmc_derived(eps, 0.05, 40), 3, 1, 1);
  EXPECT_TRUE(made.ok());
  auto& rule = dynamic_cast<samplers::HamiltonianRule&>(**made);
  rule.momentum() = static_cast<float>(eps) * k;
  Trajectory out;
  out.theta = Eigen::Vector3f(0.5f, -1.0f, 2.0f);
  EXPECT_TRUE(
      rule.leapfrog(out.theta, potential, static_cast<float>(eps), 40, out.energy_change).ok());
  return out;
}

TEST(AdaptedConstants, RhmcWithConstantsFromItsStepDependsOnlyOnTheBound) {
  // Why rhmc keeps c and m from the starting step (src/samplers/rhmc.cc): with
  // c = max_move / eps and m = u* T / c^2 re-derived from eps, the leapfrog of
  // "Relativistic Monte Carlo" (AISTATS 2017, docs/methods.md 5.3) in k = p / eps is
  // free of eps, so a step adapted by dual averaging (JMLR 2014) would change nothing.
  // Analytic fact [derived in rhmc.cc]; two steps a factor 4 apart give one trajectory.
  const Eigen::Vector3f k(1.0f, -2.0f, 0.5f);
  const Trajectory a = rhmc_trajectory(0.01, k);
  const Trajectory b = rhmc_trajectory(0.04, k);
  for (int i = 0; i < 3; ++i) EXPECT_NEAR(a.theta[i], b.theta[i], 2e-5) << i;
  EXPECT_NEAR(a.energy_change, b.energy_change, 1e-4 * std::max(1.0, std::abs(a.energy_change)));
  EXPECT_GT((a.theta - Eigen::Vector3f(0.5f, -1.0f, 2.0f)).cwiseAbs().maxCoeff(), 0.1f);
}

// Records the largest coordinate move between successive full-data evaluations of a
// trajectory, i.e. per leapfrog step; `start` is set to theta before each iteration.
class MoveRecorder : public IndependentGaussian {
 public:
  using IndependentGaussian::IndependentGaussian;
  Status full(ConstThetaRef theta, ThetaRef grad, double& potential) override {
    largest = std::max(largest, static_cast<double>((theta - start).cwiseAbs().maxCoeff()));
    start = theta;
    return IndependentGaussian::full(theta, grad, potential);
  }
  Eigen::VectorXf start;
  double largest = 0;
};

TEST(AdaptedConstants, RhmcMovesAtMostTheAdaptedStepTimesCAndSamplesTheTarget) {
  // After burn-in every leapfrog step moves each coordinate by at most eps c, with eps
  // the jittered adapted step that iteration used (|v_i| < c_i, docs/methods.md 5.1);
  // that is max_move only at the starting step. From a small start (max_move 0.05 on
  // a 10-D standard normal) dual averaging grows the bound. Moments: Var = 1 per
  // coordinate (the target), within 4 batch-means standard errors.
  constexpr int kDim = 10, kBurnIn = 1000, kIterations = 6000;
  constexpr double kMaxMove = 0.05, kEps0 = 0.05;
  const SamplerSettings s = rhmc_derived(kEps0, kMaxMove, 10);
  MoveRecorder potential(Eigen::VectorXf::Ones(kDim));
  auto sampler = Sampler::create(s, kDim, 1, testing::test_seed(94));
  ASSERT_TRUE(sampler.ok());
  const double c = kMaxMove / kEps0;
  Eigen::VectorXf theta = Eigen::VectorXf::Zero(kDim);
  std::vector<double> square;
  double worst_ratio = 0, largest_bound = 0, acceptance = 0;
  for (int t = 0; t < kBurnIn + kIterations; ++t) {
    StepContext context;
    context.step = t;
    context.step_size = kEps0;
    context.burn_in = t < kBurnIn;
    StepReport report;
    potential.start = theta;
    potential.largest = 0;
    ASSERT_TRUE((*sampler)->step(theta, potential, context, report).ok());
    if (context.burn_in) continue;
    const double bound = report.step_size * c;
    worst_ratio = std::max(worst_ratio, potential.largest / bound);
    largest_bound = std::max(largest_bound, bound);
    acceptance += *report.acceptance / kIterations;
    square.push_back(testing::mean_square(theta));
  }
  const Estimate var = testing::batch_means(square);
  std::printf(
      "rhmc after burn-in: largest move / (eps c) %.4f, largest eps c %.4f (max_move %.3f), "
      "acceptance %.3f, Var %.4f +- %.4f\n",
      worst_ratio, largest_bound, kMaxMove, acceptance, var.value, var.standard_error);
  EXPECT_LE(worst_ratio, 1.0 + 1e-5);
  EXPECT_GT(largest_bound, kMaxMove) << "dual averaging did not grow the step; nothing shown";
  EXPECT_NEAR(acceptance, s.hmc.target_acceptance, 0.1);
  EXPECT_LT(var.standard_error, 0.05);
  EXPECT_NEAR(var.value, 1.0, 4 * var.standard_error);
}

}  // namespace
}  // namespace credence
