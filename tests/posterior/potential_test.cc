// Tests of the potential U~: finite differences, closed-form logistic regression,
// docs/methods.md identities (b = N, epoch mean), tempering, and bad calls.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <random>
#include <string>
#include <vector>

#include "credence/posterior.h"
#include "testing/gradient_check.h"
#include "testing/seed.h"

namespace credence {
namespace {

struct Problem {
  ParamLayout layout;
  PriorSpec prior;
  MatX<double> x;  // (D, N)
  std::vector<std::int32_t> labels;
};

Problem make_problem(std::vector<Index> widths, const char* activation, Index d, Index k,
                     Index n, std::uint64_t seed) {
  Problem p;
  Result<NetSpec> spec = net_spec_from_options(widths, activation);
  EXPECT_TRUE(spec.ok());
  spec->prior.weight_scale = 1.3;
  spec->prior.bias_scale = 0.8;
  if (!widths.empty()) spec->prior.overrides.push_back({0, 0.9, 1.7});
  p.prior = spec->prior;
  p.layout = *resolve_layout(*spec, d, k);
  std::mt19937_64 engine(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  p.x.resize(d, n);
  for (Index i = 0; i < p.x.size(); ++i) p.x.data()[i] = normal(engine);
  p.labels.resize(static_cast<std::size_t>(n));
  for (auto& y : p.labels) y = static_cast<std::int32_t>(engine() % static_cast<std::uint64_t>(k));
  return p;
}

VecX<double> random_theta(const ParamLayout& layout, std::uint64_t seed) {
  VecX<double> theta(layout.num_params);
  initialize_params<double>(theta, layout, seed);
  std::mt19937_64 engine(seed + 7);
  std::normal_distribution<double> normal(0.0, 0.3);
  for (Index i = 0; i < theta.size(); ++i) theta(i) += normal(engine);  // biases non-zero
  return theta;
}

Potential<double> make_potential(const Problem& p, Index max_batch, double temperature,
                                 Tempering tempering) {
  PotentialSettings settings;
  settings.num_train_rows = p.x.cols();
  settings.max_batch_rows = max_batch;
  settings.temperature = temperature;
  settings.tempering = tempering;
  Result<Potential<double>> potential = Potential<double>::create(p.layout, p.prior, settings);
  EXPECT_TRUE(potential.ok()) << potential.status().to_string();
  return std::move(*potential);
}

// Reference: central finite differences of U~ (h = 1e-6 scaled by max(1, |theta_i|),
// double). Criterion: norm-wise relative error ||a - n|| / max(1e-8, ||a|| + ||n||) <= 1e-6
// (common practice; docs/methods.md section 1 asks < 1e-6 on a 3-4-2 network). Relu: every
// pre-activation at least 1e-4 from the kink at the base point, checked below.
TEST(Potential, GradientMatchesFiniteDifferencesForEveryActivationAndDepth) {
  const std::uint64_t seed = testing::test_seed(51);
  const std::vector<std::vector<Index>> depths = {{}, {5}, {4, 6}, {5, 3, 4}};
  int checked = 0;
  double worst_normwise = 0, worst_coordinate = 0;
  for (const char* activation : {"relu", "tanh", "sigmoid", "softplus", "identity"}) {
    for (const auto& widths : depths) {
      for (Index k : {2, 5}) {
        for (Tempering tempering : {Tempering::kWholePosterior, Tempering::kLikelihoodOnly}) {
          const std::uint64_t case_seed = seed + static_cast<std::uint64_t>(checked) * 13;
          const Problem p = make_problem(widths, activation, 3, k, 40, case_seed);
          Potential<double> potential = make_potential(p, 8, 0.5, tempering);
          const Index b = 6;
          const auto x = p.x.leftCols(b);
          std::span<const std::int32_t> labels(p.labels.data(), static_cast<std::size_t>(b));
          VecX<double> theta = random_theta(p.layout, case_seed + 1);
          VecX<double> grad(p.layout.num_params);
          ASSERT_TRUE(potential.evaluate(theta, x, labels, grad).ok());
          if (std::string(activation) == "relu") {
            // Redraw until no pre-activation is within 1e-4 of the kink.
            Workspace<double> ws(p.layout, b);
            for (std::uint64_t redraw = 2;; ++redraw) {
              ASSERT_TRUE(potential.network().forward(ws, theta, x).ok());
              double nearest = 1.0;
              for (std::size_t l = 0; l + 1 < p.layout.layers.size(); ++l) {
                nearest = std::min(nearest, ws.pre_activation(l).cwiseAbs().minCoeff());
              }
              if (nearest > 1e-4) break;
              ASSERT_LT(redraw, 50u);
              theta = random_theta(p.layout, case_seed + redraw);
            }
            ASSERT_TRUE(potential.evaluate(theta, x, labels, grad).ok());
          }
          VecX<double> scratch(p.layout.num_params);
          auto value = [&](const Eigen::VectorXd& point) {
            return *potential.evaluate(point, x, labels, scratch);
          };
          const testing::GradientComparison cmp =
              testing::compare_gradients(grad, testing::central_differences(value, theta));
          EXPECT_LE(cmp.normwise, 1e-6) << activation << " depth " << widths.size() << " K "
                                        << k << " " << tempering_name(tempering) << ": "
                                        << cmp.report;
          worst_normwise = std::max(worst_normwise, cmp.normwise);
          worst_coordinate = std::max(worst_coordinate, cmp.coordinate);
          ++checked;
        }
      }
    }
  }
  EXPECT_EQ(checked, 80);
  std::printf("[ measured ] worst norm-wise relative error %.3g, worst per-coordinate %.3g\n",
              worst_normwise, worst_coordinate);
}

// Reference: the textbook gradient of multinomial logistic regression,
//   grad_W = (N/b) sum_n (softmax(W x_n + c) - e_{y_n}) x_n^T + W / sigma_w^2,
// computed here with plain loops and std::exp, independent of the engine.
TEST(Potential, NoHiddenLayerMatchesClosedFormLogisticRegression) {
  const std::uint64_t seed = testing::test_seed(52);
  const Index d = 4, k = 3, n = 30, b = 10;
  Problem p = make_problem({}, "relu", d, k, n, seed);
  Potential<double> potential = make_potential(p, b, 1.0, Tempering::kWholePosterior);
  const VecX<double> theta = random_theta(p.layout, seed + 1);
  VecX<double> grad(p.layout.num_params);
  Result<double> u = potential.evaluate(theta, p.x.leftCols(b),
                                        std::span(p.labels.data(), static_cast<std::size_t>(b)),
                                        grad);
  ASSERT_TRUE(u.ok());

  const double sigma_w = 1.3 / std::sqrt(static_cast<double>(d));  // fan-in scaled
  const double sigma_b = 0.8;
  const double scale = static_cast<double>(n) / static_cast<double>(b);
  std::vector<double> expected(static_cast<std::size_t>(p.layout.num_params), 0.0);
  auto w = [&](Index c, Index j) { return theta(c + j * k); };  // documented layout
  auto bias = [&](Index c) { return theta(k * d + c); };
  double nll = 0;
  for (Index row = 0; row < b; ++row) {
    std::vector<double> z(static_cast<std::size_t>(k));
    double top = -1e300;
    for (Index c = 0; c < k; ++c) {
      double s = bias(c);
      for (Index j = 0; j < d; ++j) s += w(c, j) * p.x(j, row);
      z[static_cast<std::size_t>(c)] = s;
      top = std::max(top, s);
    }
    double total = 0;
    for (double v : z) total += std::exp(v - top);
    const std::int32_t y = p.labels[static_cast<std::size_t>(row)];
    nll -= z[static_cast<std::size_t>(y)] - top - std::log(total);
    for (Index c = 0; c < k; ++c) {
      const double residual =
          std::exp(z[static_cast<std::size_t>(c)] - top) / total - (c == y ? 1.0 : 0.0);
      for (Index j = 0; j < d; ++j) {
        expected[static_cast<std::size_t>(c + j * k)] += scale * residual * p.x(j, row);
      }
      expected[static_cast<std::size_t>(k * d + c)] += scale * residual;
    }
  }
  double prior = 0;
  for (Index i = 0; i < p.layout.num_params; ++i) {
    const double sigma = i < k * d ? sigma_w : sigma_b;
    expected[static_cast<std::size_t>(i)] += theta(i) / (sigma * sigma);
    prior += theta(i) * theta(i) / (2 * sigma * sigma) +
             0.5 * std::log(2 * 3.14159265358979323846 * sigma * sigma);
  }
  for (Index i = 0; i < p.layout.num_params; ++i) {
    EXPECT_NEAR(grad(i), expected[static_cast<std::size_t>(i)],
                1e-12 * (1 + std::abs(expected[static_cast<std::size_t>(i)])))
        << "coordinate " << i;
  }
  EXPECT_NEAR(*u, prior + scale * nll, 1e-12 * std::abs(*u));
  EXPECT_NEAR(potential.last_mean_nll(), nll / static_cast<double>(b), 1e-13);
  EXPECT_NEAR(potential.last_neg_log_prior(), prior, 1e-12 * std::abs(prior));
}

// Reference: docs/methods.md section 1 test values: b = N gives U~ = U exactly; for N
// divisible by b the mean of U~ over the N/b batches of one epoch equals U.
TEST(Potential, FullBatchAndEpochMeanEqualTheFullPotential) {
  const std::uint64_t seed = testing::test_seed(53);
  const Index n = 24, b = 6;
  Problem p = make_problem({5, 4}, "tanh", 3, 4, n, seed);
  const VecX<double> theta = random_theta(p.layout, seed + 1);

  Potential<double> whole = make_potential(p, n, 1.0, Tempering::kWholePosterior);
  VecX<double> grad_batch(p.layout.num_params), grad_full(p.layout.num_params);
  const double u_batch = *whole.evaluate(theta, p.x, p.labels, grad_batch);
  const double u_full = *whole.evaluate_full(theta, p.x, p.labels, grad_full);
  EXPECT_NEAR(u_batch, u_full, 1e-12 * std::abs(u_full));
  EXPECT_LE((grad_batch - grad_full).norm(), 1e-12 * grad_full.norm());

  // Chunked full evaluation in a workspace of b rows, and one epoch of shuffled batches.
  Potential<double> small = make_potential(p, b, 1.0, Tempering::kWholePosterior);
  VecX<double> grad_chunked(p.layout.num_params);
  EXPECT_NEAR(*small.evaluate_full(theta, p.x, p.labels, grad_chunked), u_full,
              1e-12 * std::abs(u_full));
  EXPECT_LE((grad_chunked - grad_full).norm(), 1e-12 * grad_full.norm());
  EXPECT_NEAR(*small.value_full(theta, p.x, p.labels), u_full, 1e-12 * std::abs(u_full));
  EXPECT_EQ(small.last_rows(), n);

  std::vector<Index> order(static_cast<std::size_t>(n));
  std::iota(order.begin(), order.end(), Index{0});
  std::mt19937_64 engine(seed + 2);
  std::shuffle(order.begin(), order.end(), engine);
  MatX<double> x_batch(3, b);
  std::vector<std::int32_t> y_batch(static_cast<std::size_t>(b));
  double u_sum = 0;
  VecX<double> grad_sum = VecX<double>::Zero(p.layout.num_params);
  VecX<double> grad(p.layout.num_params);
  for (Index start = 0; start < n; start += b) {
    for (Index i = 0; i < b; ++i) {
      const Index row = order[static_cast<std::size_t>(start + i)];
      x_batch.col(i) = p.x.col(row);
      y_batch[static_cast<std::size_t>(i)] = p.labels[static_cast<std::size_t>(row)];
    }
    u_sum += *small.evaluate(theta, x_batch, y_batch, grad);
    grad_sum += grad;
  }
  const double batches = static_cast<double>(n / b);
  EXPECT_NEAR(u_sum / batches, u_full, 1e-12 * std::abs(u_full));
  EXPECT_LE((grad_sum / batches - grad_full).norm(), 1e-12 * grad_full.norm());
}

// docs/methods.md section 1: with whole-posterior tempering U and its gradient do not change
// with T and the samplers' noise carries T; likelihood tempering divides the likelihood
// term by T and leaves noise temperature 1.
TEST(Potential, TemperingConventions) {
  const std::uint64_t seed = testing::test_seed(54);
  Problem p = make_problem({4}, "softplus", 3, 2, 20, seed);
  const VecX<double> theta = random_theta(p.layout, seed + 1);
  const auto x = p.x.leftCols(5);
  std::span<const std::int32_t> y(p.labels.data(), 5);
  VecX<double> g1(p.layout.num_params), g2(p.layout.num_params), g3(p.layout.num_params);

  Potential<double> bayes = make_potential(p, 5, 1.0, Tempering::kWholePosterior);
  Potential<double> cold = make_potential(p, 5, 0.25, Tempering::kWholePosterior);
  Potential<double> lik = make_potential(p, 5, 0.25, Tempering::kLikelihoodOnly);
  const double u1 = *bayes.evaluate(theta, x, y, g1);
  const double u2 = *cold.evaluate(theta, x, y, g2);
  const double u3 = *lik.evaluate(theta, x, y, g3);
  EXPECT_EQ(u1, u2);
  EXPECT_EQ(g1, g2);
  EXPECT_EQ(cold.noise_temperature(), 0.25);
  EXPECT_EQ(lik.noise_temperature(), 1.0);
  EXPECT_EQ(cold.likelihood_scale(5), 4.0);
  EXPECT_EQ(lik.likelihood_scale(5), 16.0);
  const double prior = bayes.last_neg_log_prior();
  const double nll_sum = 5 * bayes.last_mean_nll();
  EXPECT_NEAR(u1, prior + 4.0 * nll_sum, 1e-12 * std::abs(u1));
  EXPECT_NEAR(u3, prior + 16.0 * nll_sum, 1e-12 * std::abs(u3));
  // Gradients: likelihood part scaled by 1/T, prior part not.
  VecX<double> prior_grad = VecX<double>::Zero(p.layout.num_params);
  bayes.prior().add_gradient<double>(prior_grad, theta);
  EXPECT_LE((g3 - prior_grad - 4.0 * (g1 - prior_grad)).norm(), 1e-12 * g3.norm());

  PotentialSettings frozen;
  frozen.num_train_rows = 20;
  frozen.max_batch_rows = 5;
  frozen.temperature = 0;
  EXPECT_TRUE(Potential<float>::create(p.layout, p.prior, frozen).ok());  // optimizer limit
  frozen.tempering = Tempering::kLikelihoodOnly;
  EXPECT_FALSE(Potential<float>::create(p.layout, p.prior, frozen).ok());
  EXPECT_EQ(*parse_tempering("likelihood"), Tempering::kLikelihoodOnly);
  EXPECT_FALSE(parse_tempering("cold").ok());
}

TEST(Potential, LastEvaluationStatistics) {
  const std::uint64_t seed = testing::test_seed(55);
  Problem p = make_problem({6}, "relu", 3, 3, 12, seed);
  Potential<double> potential = make_potential(p, 12, 1.0, Tempering::kWholePosterior);
  const VecX<double> theta = random_theta(p.layout, seed + 1);
  VecX<double> grad(p.layout.num_params);
  ASSERT_TRUE(potential.evaluate(theta, p.x, p.labels, grad).ok());
  Workspace<double> ws(p.layout, 12);
  ASSERT_TRUE(potential.network().forward(ws, theta, p.x).ok());
  Index correct = 0;
  double nll = 0;
  for (Index n = 0; n < 12; ++n) {
    Index best = 0;
    ws.logits().col(n).maxCoeff(&best);
    const std::int32_t y = p.labels[static_cast<std::size_t>(n)];
    correct += best == y;
    nll -= ws.log_probs()(y, n);
    EXPECT_EQ(potential.last_log_likelihoods()(n), ws.log_probs()(y, n));
  }
  EXPECT_EQ(potential.last_log_likelihoods().size(), 12);
  EXPECT_EQ(potential.last_rows(), 12);
  EXPECT_DOUBLE_EQ(potential.last_accuracy(), static_cast<double>(correct) / 12);
  EXPECT_NEAR(potential.last_mean_nll(), nll / 12, 1e-14);
}

TEST(Potential, BadCallsReturnStatus) {
  Problem p = make_problem({4}, "tanh", 3, 2, 20, 56);
  Potential<double> potential = make_potential(p, 5, 1.0, Tempering::kWholePosterior);
  const VecX<double> theta = random_theta(p.layout, 57);
  VecX<double> grad(p.layout.num_params);
  Result<double> too_big = potential.evaluate(
      theta, p.x.leftCols(6), std::span(p.labels.data(), 6), grad);
  ASSERT_FALSE(too_big.ok());
  EXPECT_NE(too_big.status().message().find("batch of 6 rows does not fit the workspace"),
            std::string::npos);
  std::vector<std::int32_t> bad = {0, 1, 7};
  Result<double> bad_label = potential.evaluate(theta, p.x.leftCols(3), bad, grad);
  ASSERT_FALSE(bad_label.ok());
  EXPECT_NE(bad_label.status().message().find("label 7 of batch row 2"), std::string::npos);
  Result<double> mismatch = potential.evaluate(theta, p.x.leftCols(4), bad, grad);
  EXPECT_FALSE(mismatch.ok());
  Result<double> wrong_n = potential.value_full(theta, p.x.leftCols(10),
                                                std::span(p.labels.data(), 10));
  EXPECT_FALSE(wrong_n.ok());
  PotentialSettings empty;
  EXPECT_FALSE(Potential<double>::create(p.layout, p.prior, empty).ok());
}

// Float (the engine) against double on the same inputs: U~ and gradient to float precision.
TEST(Potential, FloatAgreesWithDouble) {
  const std::uint64_t seed = testing::test_seed(58);
  Problem p = make_problem({16, 8}, "sigmoid", 5, 3, 200, seed);
  const VecX<double> theta = random_theta(p.layout, seed + 1);
  Potential<double> pd = make_potential(p, 32, 1.0, Tempering::kWholePosterior);
  PotentialSettings settings = pd.settings();
  Potential<float> pf = std::move(*Potential<float>::create(p.layout, p.prior, settings));
  VecX<double> gd(p.layout.num_params);
  VecX<float> gf(p.layout.num_params);
  std::span<const std::int32_t> y(p.labels.data(), 32);
  const double ud = *pd.evaluate(theta, p.x.leftCols(32), y, gd);
  const MatX<float> xf = p.x.leftCols(32).cast<float>();
  const double uf = *pf.evaluate(theta.cast<float>(), xf, y, gf);
  EXPECT_NEAR(uf, ud, 1e-5 * std::abs(ud));
  EXPECT_LE((gf.cast<double>() - gd).norm(), 1e-5 * gd.norm());
}

}  // namespace
}  // namespace credence
