// Tests of Network and Workspace: numpy reference forward pass, float against double,
// workspace limits, backprop by finite differences, and initialisation.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <random>
#include <string>
#include <utility>
#include <vector>

#include "credence/net.h"
#include "testing/gradient_check.h"
#include "testing/net_layout.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::make_layout;

MatX<float> random_inputs(Index d, Index batch, std::uint64_t seed) {
  std::mt19937_64 engine(seed);
  std::normal_distribution<double> normal(0.0, 1.0);
  MatX<float> x(d, batch);
  for (Index i = 0; i < x.size(); ++i) x.data()[i] = static_cast<float>(normal(engine));
  return x;
}

template <typename T>
void write_binary(const std::filesystem::path& path, const T* data, Index count) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(count * sizeof(T)));
}

// Reference: numpy/scipy (tests/tools/numpy_forward.py) rebuilding the network from the
// flat vector with only the layout documented in nets/README.md. Tolerance 1e-5 relative
// (float32 compute against float64; common practice).
TEST(Network, ForwardMatchesNumpy) {
  const std::uint64_t seed = testing::test_seed(31);
  const Index d = 6, k = 4, batch = 11;
  struct Case {
    std::string name;
    std::filesystem::path dir;
    MatX<double> log_probs;  // credence's float result, (K, B)
  };
  testing::TempDir root;
  std::vector<Case> cases;
  std::string command = std::string(CREDENCE_PYTHON) + " " + CREDENCE_SOURCE_DIR +
                        "/tests/tools/numpy_forward.py";
  std::uint64_t case_seed = seed;
  for (const char* activation : {"relu", "tanh", "sigmoid", "softplus", "identity"}) {
    for (const auto& [widths, linear] :
         {std::pair{std::vector<Index>{}, false}, std::pair{std::vector<Index>{7}, false},
          std::pair{std::vector<Index>{9, 5}, false}, std::pair{std::vector<Index>{7}, true},
          std::pair{std::vector<Index>{9, 5}, true}}) {
      const ParamLayout layout = make_layout(widths, activation, d, k, linear);
      ASSERT_EQ(layout.linear_path, linear);
      VecX<float> theta(layout.num_params);
      initialize_params<float>(theta, layout, ++case_seed);
      // Non-zero biases so the bias offsets are exercised too, and a non-zero linear path
      // (it starts at zero).
      for (const LayerLayout& layer : layout.layers) {
        for (Index i = 0; i < layer.out; ++i) {
          theta(layer.bias_offset + i) = 0.1f * static_cast<float>(i + 1);
        }
      }
      if (linear) {
        const LayerLayout& path = layout.layers.back();
        for (Index i = 0; i < path.out * path.in; ++i) {
          theta(path.weight_offset + i) = 0.05f * static_cast<float>((i % 7) - 3);
        }
      }
      const MatX<float> x = random_inputs(d, batch, ++case_seed);
      Network<float> network(layout);
      Workspace<float> ws(layout, 16);
      ASSERT_TRUE(network.forward(ws, theta, x).ok());

      Case c{std::string(activation) + " depth " + std::to_string(widths.size()) +
                 (linear ? " with the linear path" : ""),
             root.path() / std::to_string(cases.size()), ws.log_probs().cast<double>()};
      std::filesystem::create_directories(c.dir);
      std::ofstream layout_file(c.dir / "layout.txt");
      for (std::size_t l = 0; l < layout.layers.size(); ++l) {
        const LayerLayout& layer = layout.layers[l];
        layout_file << layer.in << ' ' << layer.out << ' ' << activation_name(layer.activation)
                    << ' ' << layer.weight_offset << ' ' << layer.bias_offset
                    << (l >= layout.chain_size() ? " linear" : "") << '\n';
      }
      write_binary(c.dir / "theta.f32", theta.data(), theta.size());
      write_binary(c.dir / "x.f32", x.data(), x.size());  // column-major = row by row
      command += " " + c.dir.string();
      cases.push_back(std::move(c));
    }
  }
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  for (const Case& c : cases) {
    MatX<double> expected(k, batch);  // the file holds B rows of K: column-major (K, B)
    std::ifstream in(c.dir / "log_probs.f64", std::ios::binary);
    in.read(reinterpret_cast<char*>(expected.data()),
            static_cast<std::streamsize>(expected.size() * sizeof(double)));
    ASSERT_TRUE(in.good()) << c.name;
    const double worst = ((c.log_probs - expected).array().abs() /
                          expected.array().abs().max(1.0)).maxCoeff();
    EXPECT_LE(worst, 1e-5) << c.name << "\ncredence:\n" << c.log_probs.leftCols(3)
                           << "\nnumpy:\n" << expected.leftCols(3);
  }
}

// The float engine against the double path on the same parameters: float precision.
TEST(Network, FloatAgreesWithDouble) {
  const std::uint64_t seed = testing::test_seed(32);
  for (const char* activation : {"relu", "tanh", "sigmoid", "softplus", "identity"}) {
    const ParamLayout layout = make_layout({32, 16}, activation, 20, 5);
    VecX<float> theta(layout.num_params);
    initialize_params<float>(theta, layout, seed);
    const MatX<float> x = random_inputs(20, 64, seed + 1);
    std::vector<std::int32_t> labels(64);
    for (std::size_t i = 0; i < labels.size(); ++i) labels[i] = static_cast<std::int32_t>(i % 5);

    Network<float> net_f(layout);
    Workspace<float> ws_f(layout, 64);
    ASSERT_TRUE(net_f.forward(ws_f, theta, x).ok());
    VecX<float> log_lik_f(64);
    const double sum_f = *net_f.log_likelihood(log_lik_f, ws_f, labels);
    VecX<float> grad_f = VecX<float>::Zero(layout.num_params);
    net_f.backward(grad_f, ws_f, theta, x, labels, 1.0f);

    const VecX<double> theta_d = theta.cast<double>();
    const MatX<double> x_d = x.cast<double>();
    Network<double> net_d(layout);
    Workspace<double> ws_d(layout, 64);
    ASSERT_TRUE(net_d.forward(ws_d, theta_d, x_d).ok());
    VecX<double> log_lik_d(64);
    const double sum_d = *net_d.log_likelihood(log_lik_d, ws_d, labels);
    VecX<double> grad_d = VecX<double>::Zero(layout.num_params);
    net_d.backward(grad_d, ws_d, theta_d, x_d, labels, 1.0);

    // A few float ulps per operation over depth 3 and sums of <= 64 terms.
    EXPECT_NEAR(sum_f, sum_d, 1e-5 * std::abs(sum_d)) << activation;
    EXPECT_LE((log_lik_f.cast<double>() - log_lik_d).cwiseAbs().maxCoeff(), 1e-5) << activation;
    EXPECT_LE((grad_f.cast<double>() - grad_d).norm() / grad_d.norm(), 1e-5) << activation;
  }
}

TEST(Workspace, BatchLargerThanTheWorkspaceIsAnError) {
  const ParamLayout layout = make_layout({8}, "relu", 3, 2);
  Network<float> network(layout);
  Workspace<float> ws(layout, 10);
  VecX<float> theta = VecX<float>::Zero(layout.num_params);
  EXPECT_TRUE(network.forward(ws, theta, random_inputs(3, 10, 1)).ok());
  const Status too_big = network.forward(ws, theta, random_inputs(3, 11, 1));
  ASSERT_FALSE(too_big.ok());
  EXPECT_EQ(too_big.code(), StatusCode::kInvalidInput);
  EXPECT_EQ(too_big.message(),
            "network forward: batch of 11 rows does not fit the workspace (1 to 10); make the "
            "workspace larger or the batch smaller");
  EXPECT_EQ(ws.max_batch(), 10);  // not reallocated
  EXPECT_FALSE(network.forward(ws, theta, random_inputs(4, 5, 1)).ok());  // wrong D
  EXPECT_FALSE(network.forward(ws, VecX<float>::Zero(3), random_inputs(3, 5, 1)).ok());
  ASSERT_TRUE(network.forward(ws, theta, random_inputs(3, 2, 1)).ok());
  VecX<float> log_lik(10);
  const std::vector<std::int32_t> bad_label = {0, 2};
  Result<double> sum = network.log_likelihood(log_lik, ws, bad_label);
  ASSERT_FALSE(sum.ok());
  EXPECT_EQ(sum.status().message(),
            "network log-likelihood: label 2 of batch row 1 is outside 0..1");
}

// Reference: central finite differences (h = 1e-6, double) of scale * sum -log p(y|x).
// Norm-wise relative error <= 1e-6 (docs/methods.md section 1 test values).
class NetworkBackward : public ::testing::TestWithParam<bool> {};

TEST_P(NetworkBackward, MatchesFiniteDifferencesOnA342Network) {
  const std::uint64_t seed = testing::test_seed(33);
  const bool linear = GetParam();
  const ParamLayout layout = make_layout({4}, "tanh", 3, 2, linear);
  ASSERT_EQ(layout.num_params, 4 * 3 + 4 + 2 * 4 + 2 + (linear ? 2 * 3 + 2 : 0));
  VecX<double> theta(layout.num_params);
  initialize_params<double>(theta, layout, seed);
  theta.segment(layout.layers[0].bias_offset, 4).setConstant(0.2);
  if (linear) {  // the linear path starts at zero; move it off so every product counts
    const LayerLayout& path = layout.layers.back();
    theta.segment(path.weight_offset, 6) << 0.3, -0.2, 0.1, 0.4, -0.5, 0.25;
    theta.segment(path.bias_offset, 2) << 0.1, -0.1;
  }
  const MatX<double> x = random_inputs(3, 5, seed + 1).cast<double>();
  const std::vector<std::int32_t> labels = {0, 1, 1, 0, 1};
  Network<double> network(layout);
  Workspace<double> ws(layout, 5);
  VecX<double> log_lik(5);
  auto value = [&](const Eigen::VectorXd& point) {
    EXPECT_TRUE(network.forward(ws, point, x).ok());
    return -2.5 * *network.log_likelihood(log_lik, ws, labels);
  };
  Eigen::VectorXd numeric = testing::central_differences(value, theta);
  ASSERT_TRUE(network.forward(ws, theta, x).ok());
  VecX<double> grad = VecX<double>::Zero(layout.num_params);
  network.backward(grad, ws, theta, x, labels, 2.5);
  testing::GradientComparison cmp = testing::compare_gradients(grad, numeric);
  EXPECT_LE(cmp.normwise, 1e-6) << cmp.report;
  EXPECT_LE(cmp.coordinate, 1e-6) << cmp.report;
}

INSTANTIATE_TEST_SUITE_P(LinearPath, NetworkBackward, ::testing::Bool(),
                         [](const ::testing::TestParamInfo<bool>& param_info) {
                           return param_info.param ? std::string("WithLinearPath")
                                             : std::string("ChainOnly");
                         });

// He: weight variance 2/fan_in; Glorot: uniform on +-sqrt(6/(in+out)), variance
// 2/(in+out); biases zero. Sample variances of 64*256 draws: standard error about 1.1%,
// so a 5% tolerance is over 4 standard errors.
TEST(Initialization, HeAndGlorotScalesAndDeterminism) {
  const std::uint64_t seed = testing::test_seed(34);
  const ParamLayout relu = make_layout({256}, "relu", 64, 3);
  VecX<double> theta(relu.num_params);
  initialize_params<double>(theta, relu, seed);
  const LayerLayout& first = relu.layers[0];
  auto weights = theta.segment(first.weight_offset, first.out * first.in);
  EXPECT_NEAR(weights.squaredNorm() / static_cast<double>(weights.size()), 2.0 / 64, 0.05 * 2.0 / 64);
  EXPECT_EQ(theta.segment(first.bias_offset, first.out).cwiseAbs().maxCoeff(), 0.0);
  const LayerLayout& out = relu.layers[1];  // output layer: Glorot
  const double limit = std::sqrt(6.0 / (256 + 3));
  EXPECT_LE(theta.segment(out.weight_offset, out.out * out.in).cwiseAbs().maxCoeff(), limit);

  const ParamLayout tanh = make_layout({256}, "tanh", 64, 3);
  VecX<double> theta_tanh(tanh.num_params);
  initialize_params<double>(theta_tanh, tanh, seed);
  auto w_tanh = theta_tanh.segment(0, 256 * 64);
  EXPECT_NEAR(w_tanh.squaredNorm() / static_cast<double>(w_tanh.size()), 2.0 / (64 + 256),
              0.05 * 2.0 / (64 + 256));
  EXPECT_LE(w_tanh.cwiseAbs().maxCoeff(), std::sqrt(6.0 / (64 + 256)));

  VecX<double> again(relu.num_params);
  initialize_params<double>(again, relu, seed);
  EXPECT_EQ(again, theta);
  initialize_params<double>(again, relu, seed + 1);
  EXPECT_NE(again, theta);
  VecX<float> as_float(relu.num_params);
  initialize_params<float>(as_float, relu, seed);
  EXPECT_EQ(as_float, theta.cast<float>());
}

}  // namespace
}  // namespace credence
