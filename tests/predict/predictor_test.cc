// Predictor: a plain per-sample softmax loop (the obvious version) against the blocked
// average, sample selection, and refusal of inconsistent parts.
#include <gtest/gtest.h>

#include <cmath>
#include <random>

#include "credence/predict.h"
#include "testing/predict_fixtures.h"
#include "testing/seed.h"

namespace credence {
namespace {

using testing::small_net;
using testing::two_input_preprocessing;

TEST(Predictor, BlockedAverageMatchesPlainLoop) {
  std::mt19937_64 rng(testing::test_seed(11));
  std::normal_distribution<float> normal;
  const std::string net = small_net();
  Result<ParamLayout> layout = resolve_layout(*parse_net_text(net, "t"), 2, 3);
  ASSERT_TRUE(layout.ok());
  Eigen::MatrixXf samples(layout->num_params, 5);  // (P, S)
  for (Index i = 0; i < samples.size(); ++i) samples.data()[i] = normal(rng);
  Eigen::MatrixXf x(2, 7);  // (D, B)
  for (Index i = 0; i < x.size(); ++i) x.data()[i] = normal(rng);

  Result<Predictor> predictor =
      Predictor::from_parts(two_input_preprocessing(), net, samples, {.samples = 0, .block_rows = 8, .temperature = {}});
  ASSERT_TRUE(predictor.ok()) << predictor.status().message();
  Workspace<float> ws = predictor->make_workspace();
  EnsembleAverager averager;
  Prediction out;
  ASSERT_TRUE(predictor->predict_encoded(ws, averager, x, out).ok());

  // Plain version: probabilities of each sample, averaged; entropies from them.
  Network<float> network(*layout);
  Workspace<float> ws1(*layout, 7);
  Eigen::MatrixXd mean = Eigen::MatrixXd::Zero(3, 7);
  Eigen::VectorXd eh = Eigen::VectorXd::Zero(7);
  for (Index s = 0; s < 5; ++s) {
    ASSERT_TRUE(network.forward(ws1, samples.col(s), x).ok());
    const Eigen::MatrixXd p = ws1.log_probs().cast<double>().array().exp().matrix();
    mean += p / 5.0;
    eh -= (p.array() * p.array().log()).colwise().sum().matrix().transpose() / 5.0;
  }
  for (Index b = 0; b < 7; ++b) {
    const double h = -(mean.col(b).array() * mean.col(b).array().log()).sum();
    for (Index k = 0; k < 3; ++k) EXPECT_NEAR(out.probabilities(k, b), mean(k, b), 1e-12);
    EXPECT_NEAR(out.entropy(b), h, 1e-12);
    EXPECT_NEAR(out.expected_entropy(b), eh(b), 1e-12);
    EXPECT_NEAR(out.entropy(b), out.expected_entropy(b) + out.mutual_information(b), 1e-12);
  }
}

TEST(Predictor, UsesSamplesSpreadEvenly) {
  const std::string net = small_net();
  Result<ParamLayout> layout = resolve_layout(*parse_net_text(net, "t"), 2, 3);
  Eigen::MatrixXf samples = Eigen::MatrixXf::Zero(layout->num_params, 10);
  Result<Predictor> all = Predictor::from_parts(two_input_preprocessing(), net, samples, {});
  Result<Predictor> some =
      Predictor::from_parts(two_input_preprocessing(), net, samples, {.samples = 4, .block_rows = 4096, .temperature = {}});
  ASSERT_TRUE(all.ok() && some.ok());
  EXPECT_EQ(all->num_samples(), 10);
  EXPECT_EQ(some->num_samples(), 4);
}

TEST(Predictor, RefusesInconsistentParts) {
  const std::string net = small_net();
  Result<Predictor> wrong =
      Predictor::from_parts(two_input_preprocessing(), net, Eigen::MatrixXf::Zero(5, 3), {});
  ASSERT_FALSE(wrong.ok());
  EXPECT_EQ(wrong.status().code(), StatusCode::kCorrupt);
  EXPECT_NE(wrong.status().message().find("parameters"), std::string::npos);
  Result<Predictor> empty =
      Predictor::from_parts(two_input_preprocessing(), net, Eigen::MatrixXf::Zero(35, 0), {});
  ASSERT_FALSE(empty.ok());
  EXPECT_NE(empty.status().message().find("no kept sample"), std::string::npos);
}

}  // namespace
}  // namespace credence
