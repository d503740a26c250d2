// PosteriorScore, the full-data score the kernel Stein discrepancy of a run uses: it must
// be the gradient of the log posterior the run targets. The log posterior is written here
// from docs/methods.md sections 1, 11 and 15 (summed log-likelihood from the network's
// NLL, the Gaussian prior, or the Student-t type marginal of a learned scale), and the
// score is checked against its central finite differences (h = 1e-6, double).
#include <gtest/gtest.h>

#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "credence/run_stein.h"
#include "testing/gradient_check.h"
#include "testing/seed.h"

namespace credence {
namespace {

struct Case {
  std::string name;
  bool learned = false;
  double temperature = 1;
  Tempering tempering = Tempering::kWholePosterior;
};

struct Problem {
  ParamLayout layout;
  PriorSpec prior;
  Eigen::MatrixXd x;  // (D, N)
  std::vector<std::int32_t> labels;
};

// A 3-4-3 tanh net on 30 random rows with a non-default prior.
Problem make_problem(bool learned, std::uint64_t seed) {
  Problem p;
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{4}, "tanh");
  EXPECT_TRUE(spec.ok());
  spec->prior.weight_scale = learned ? 1.0 : 1.3;  // a learned scale starts from s = 1
  spec->prior.bias_scale = 0.8;
  spec->prior.learn_scale = learned;
  spec->prior.hyper_shape = 1.5;
  spec->prior.hyper_rate = 0.7;
  p.prior = spec->prior;
  p.layout = *resolve_layout(*spec, 3, 3);
  std::mt19937_64 engine(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  p.x.resize(3, 30);
  for (Index i = 0; i < p.x.size(); ++i) p.x.data()[i] = normal(engine);
  for (int n = 0; n < 30; ++n) p.labels.push_back(static_cast<std::int32_t>(engine() % 3));
  return p;
}

// log pi(theta) + const, written from docs/methods.md without PosteriorScore.
double log_posterior(const Problem& p, const Case& c, const Eigen::VectorXd& theta) {
  PotentialSettings settings;
  settings.num_train_rows = p.x.cols();
  settings.max_batch_rows = p.x.cols();
  settings.learn_prior_scale = false;
  Potential<double> u = Potential<double>::create(p.layout, p.prior, settings).value();
  EXPECT_TRUE(u.value_full(theta, p.x, p.labels).ok());
  const double log_lik = -u.last_mean_nll() * static_cast<double>(u.last_rows());
  const GaussianPrior& prior = u.prior();
  const bool whole = c.tempering == Tempering::kWholePosterior;
  double log_prior = 0;
  for (Index b = 0; b < prior.num_blocks(); ++b) {
    const double norm2 = theta.segment(prior.block_offset(b), prior.block_size(b)).squaredNorm();
    const double lambda = prior.block_precisions()[static_cast<std::size_t>(b)];
    if (!c.learned) {
      log_prior -= lambda * norm2 / 2 / (whole ? c.temperature : 1.0);
      continue;
    }
    // Integrating lambda out of N(theta_b; 0, I/lambda)^(1/T') Gamma(lambda; a, r)^(1/T')
    // (T' = T when the whole posterior is tempered, else 1).
    const double t = whole ? c.temperature : 1.0;
    const double d = static_cast<double>(prior.block_size(b));
    const double a = p.prior.hyper_shape;
    log_prior -= ((a - 1 + d / 2) / t + 1) * std::log(*p.prior.hyper_rate + norm2 / 2);
  }
  return log_lik / c.temperature + log_prior;
}

class PosteriorScoreCases : public ::testing::TestWithParam<Case> {};

TEST_P(PosteriorScoreCases, MatchesFiniteDifferencesOfTheLogPosterior) {
  const Case& c = GetParam();
  const std::uint64_t seed = testing::test_seed(20);
  const Problem p = make_problem(c.learned, seed);
  Eigen::VectorXd theta(p.layout.num_params);
  std::mt19937_64 engine(seed + 1);
  std::normal_distribution<double> normal(0.0, 0.7);
  for (Index i = 0; i < theta.size(); ++i) theta(i) = normal(engine);

  Result<PosteriorScore> score =
      PosteriorScore::create(p.layout, p.prior, c.temperature, c.tempering, p.x, p.labels);
  ASSERT_TRUE(score.ok()) << score.status().message();
  EXPECT_EQ(score->learned_prior(), c.learned);
  Eigen::VectorXd analytic;
  ASSERT_TRUE(score->score(theta, analytic).ok());
  const Eigen::VectorXd numeric = testing::central_differences(
      [&](const Eigen::VectorXd& t) { return log_posterior(p, c, t); }, theta);
  const testing::GradientComparison cmp = testing::compare_gradients(analytic, numeric);
  EXPECT_LT(cmp.normwise, 1e-7) << cmp.report;

  // log_density agrees with the same log posterior up to its constant.
  Eigen::VectorXd other = theta * 0.5;
  other(0) += 0.3;
  const double ours = score->log_density(theta).value() - score->log_density(other).value();
  const double reference = log_posterior(p, c, theta) - log_posterior(p, c, other);
  EXPECT_NEAR(ours, reference, 1e-9 * std::max(1.0, std::abs(reference)));
}

INSTANTIATE_TEST_SUITE_P(
    PriorsAndTemperings, PosteriorScoreCases,
    ::testing::Values(Case{"fixed_T1", false, 1.0, Tempering::kWholePosterior},
                      Case{"fixed_whole_T05", false, 0.5, Tempering::kWholePosterior},
                      Case{"fixed_likelihood_T05", false, 0.5, Tempering::kLikelihoodOnly},
                      Case{"learned_T1", true, 1.0, Tempering::kWholePosterior},
                      Case{"learned_whole_T05", true, 0.5, Tempering::kWholePosterior},
                      Case{"learned_likelihood_T05", true, 0.5, Tempering::kLikelihoodOnly}),
    [](const ::testing::TestParamInfo<Case>& param_info) { return param_info.param.name; });

TEST(PosteriorScore, LearnedScaleGivesTheStudentTScore) {
  // A block's marginal prior under a learned scale is a multivariate Student t with
  // nu = 2a degrees of freedom and scale^2 = r/a (docs/methods.md sections 11 and 15; the
  // t density's standard form, from memory). A logistic net on one input that is 0 in
  // the only row: the weights do not touch the likelihood, so their score is the prior's.
  Problem p;
  Result<NetSpec> spec = net_spec_from_options(std::vector<Index>{}, "relu");
  ASSERT_TRUE(spec.ok());
  spec->prior.learn_scale = true;
  spec->prior.hyper_shape = 2.0;
  spec->prior.hyper_rate = 3.0;
  p.layout = *resolve_layout(*spec, 1, 2);
  p.x = Eigen::MatrixXd::Zero(1, 1);  // x = 0: the weights do not touch the likelihood
  p.labels = {0};
  Result<PosteriorScore> score =
      PosteriorScore::create(p.layout, spec->prior, 1.0, Tempering::kWholePosterior, p.x, p.labels);
  ASSERT_TRUE(score.ok()) << score.status().message();
  Eigen::VectorXd theta(4);
  theta << 0.8, -1.1, 0.0, 0.0;  // weights (2 x 1), then biases (2) at 0
  Eigen::VectorXd s;
  ASSERT_TRUE(score->score(theta, s).ok());
  // The weight block (d = 2) is a bivariate t with nu = 2a = 4 and scale^2 = r/a = 1.5:
  // log p = -(nu + d)/2 log(1 + ||w||^2 / (nu s^2)), score -(nu + d) w / (nu s^2 + ||w||^2).
  const double nu = 4, s2 = 1.5, d = 2, norm2 = 0.8 * 0.8 + 1.1 * 1.1;
  EXPECT_NEAR(s(0), -(nu + d) * 0.8 / (nu * s2 + norm2), 1e-12);
  EXPECT_NEAR(s(1), -(nu + d) * -1.1 / (nu * s2 + norm2), 1e-12);
}

TEST(PosteriorScore, RefusesTemperatureZero) {
  const Problem p = make_problem(false, 3);
  Result<PosteriorScore> score =
      PosteriorScore::create(p.layout, p.prior, 0.0, Tempering::kWholePosterior, p.x, p.labels);
  ASSERT_FALSE(score.ok());
  EXPECT_NE(score.status().message().find("T > 0"), std::string::npos) << score.status().message();
}

TEST(EvenlySpacedDraws, KeepsEveryDrawUnderTheCapAndSpreadsThemOverIt) {
  EXPECT_EQ(evenly_spaced_draws(3, 500), (std::vector<std::int64_t>{0, 1, 2}));
  EXPECT_EQ(evenly_spaced_draws(10, 4), (std::vector<std::int64_t>{0, 2, 5, 7}));
  EXPECT_TRUE(evenly_spaced_draws(10, 0).empty());
}

}  // namespace
}  // namespace credence
