// Tests of the Gaussian prior: docs/methods.md values, scales per layer, finite differences.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>
#include <random>

#include "credence/posterior.h"
#include "testing/gradient_check.h"
#include "testing/seed.h"

namespace credence {
namespace {

// Reference: docs/methods.md section 1 test values: theta = (1, -2), sigma = 2 gives
// -log p = 5/8 + log(8 pi) = 3.849171427529236 and gradient (0.25, -0.5).
TEST(GaussianPrior, MatchesMethodsTestValues) {
  VecX<double> theta(2);
  theta << 1, -2;
  EXPECT_NEAR(gaussian_neg_log_density(theta, 2.0), 3.849171427529236, 1e-14);

  // The same block as the weights of a 1-input, 2-class layer, without fan-in scaling;
  // the zero biases (sigma 2) add only their normaliser (2/2) log(2 pi 4) = log(8 pi).
  Result<ParamLayout> layout = resolve_layout(NetSpec{}, 1, 2);
  ASSERT_TRUE(layout.ok());
  PriorSpec spec;
  spec.weight_scale = 2;
  spec.bias_scale = 2;
  spec.fan_in_scaling = false;
  Result<GaussianPrior> prior = GaussianPrior::create(spec, *layout);
  ASSERT_TRUE(prior.ok());
  VecX<double> flat(4);
  flat << 1, -2, 0, 0;  // W (2x1), then b (2)
  EXPECT_NEAR(prior->neg_log_density<double>(flat),
              3.849171427529236 + std::log(8 * std::numbers::pi), 1e-13);
  VecX<double> grad = VecX<double>::Constant(4, 1.0);  // add_gradient accumulates
  prior->add_gradient<double>(grad, flat);
  EXPECT_DOUBLE_EQ(grad(0), 1.25);
  EXPECT_DOUBLE_EQ(grad(1), 0.5);
  EXPECT_DOUBLE_EQ(grad(2), 1.0);
  EXPECT_DOUBLE_EQ(grad(3), 1.0);
}

// Scales of nets/wide.net (docs/methods.md section 1 defaults: weights s / sqrt(fan_in)).
TEST(GaussianPrior, FanInScalingAndLayerOverrides) {
  Result<NetSpec> spec = read_net_file(std::string(CREDENCE_SOURCE_DIR) + "/nets/wide.net");
  ASSERT_TRUE(spec.ok());
  Result<ParamLayout> layout = resolve_layout(*spec, 100, 3);
  ASSERT_TRUE(layout.ok());
  Result<GaussianPrior> prior = GaussianPrior::create(spec->prior, *layout);
  ASSERT_TRUE(prior.ok());
  ASSERT_EQ(prior->sigmas().size(), 3u);
  EXPECT_DOUBLE_EQ(prior->sigmas()[0].weight_sigma, 1.5 / 10);
  EXPECT_DOUBLE_EQ(prior->sigmas()[1].weight_sigma, 1.5 / 16);
  EXPECT_DOUBLE_EQ(prior->sigmas()[2].weight_sigma, 0.5 / 16);
  EXPECT_DOUBLE_EQ(prior->sigmas()[0].bias_sigma, 1.0);
  EXPECT_DOUBLE_EQ(prior->sigmas()[2].bias_sigma, 2.0);
  const VecX<double> sigma = prior->coordinate_sigmas();
  const LayerLayout& out = layout->layers[2];
  EXPECT_DOUBLE_EQ(sigma(out.weight_offset), 0.5 / 16);
  EXPECT_DOUBLE_EQ(sigma(out.bias_offset + 2), 2.0);
  EXPECT_DOUBLE_EQ(sigma(layout->layers[1].bias_offset - 1), 1.5 / 16);

  PriorSpec bad = spec->prior;
  bad.overrides[0].layer = 5;
  Result<GaussianPrior> missing_layer = GaussianPrior::create(bad, *layout);
  ASSERT_FALSE(missing_layer.ok());
  EXPECT_NE(missing_layer.status().message().find("layer 6 does not exist"), std::string::npos)
      << missing_layer.status().message();
}

// Reference: central finite differences (h = 1e-6, double); the value also equals the sum
// of the per-block closed forms.
TEST(GaussianPrior, GradientMatchesFiniteDifferencesAndBlocksAddUp) {
  std::mt19937_64 engine(testing::test_seed(41));
  std::normal_distribution<double> normal(0.0, 1.0);
  Result<NetSpec> spec = parse_net_text(
      "credence-net 1\nhidden 5 relu\nprior gaussian scale=0.7 bias_scale=0.3\n"
      "layer_prior 1 bias_scale=2\n",
      "t.net");
  ASSERT_TRUE(spec.ok());
  Result<ParamLayout> layout = resolve_layout(*spec, 4, 3);
  Result<GaussianPrior> prior = GaussianPrior::create(spec->prior, *layout);
  ASSERT_TRUE(prior.ok());
  VecX<double> theta(layout->num_params);
  for (Index i = 0; i < theta.size(); ++i) theta(i) = normal(engine);
  double blocks = 0;
  for (std::size_t l = 0; l < layout->layers.size(); ++l) {
    const LayerLayout& layer = layout->layers[l];
    blocks += gaussian_neg_log_density(theta.segment(layer.weight_offset, layer.out * layer.in),
                                       prior->sigmas()[l].weight_sigma);
    blocks += gaussian_neg_log_density(theta.segment(layer.bias_offset, layer.out),
                                       prior->sigmas()[l].bias_sigma);
  }
  EXPECT_NEAR(prior->neg_log_density<double>(theta), blocks, 1e-12 * std::abs(blocks));
  VecX<double> grad = VecX<double>::Zero(theta.size());
  prior->add_gradient<double>(grad, theta);
  auto value = [&](const Eigen::VectorXd& point) {
    return prior->neg_log_density<double>(point);
  };
  testing::GradientComparison cmp =
      testing::compare_gradients(grad, testing::central_differences(value, theta));
  EXPECT_LE(cmp.normwise, 1e-6) << cmp.report;
  // The float path accumulates in double: same value to float precision of theta.
  const VecX<float> theta_f = theta.cast<float>();
  EXPECT_NEAR(prior->neg_log_density<float>(theta_f),
              prior->neg_log_density<double>(theta_f.cast<double>()), 1e-9);
}

}  // namespace
}  // namespace credence
