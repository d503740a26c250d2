// evaluate_ensemble (src/predict/evaluate.cc): its model average against the Predictor's,
// each member's scores against the metrics module on that member alone, invariance to
// threads and block size, and member-wise tempering against a hand computation.
#include <gtest/gtest.h>
#include <omp.h>

#include <cmath>
#include <random>

#include "credence/predict.h"
#include "testing/predict_fixtures.h"
#include "testing/seed.h"

namespace credence {
namespace {

constexpr Index kRows = 11;
constexpr Index kMembers = 5;

using testing::small_net;
using testing::two_input_preprocessing;

class Evaluate : public ::testing::Test {
 protected:
  void SetUp() override {
    std::mt19937_64 rng(testing::test_seed(77));
    std::normal_distribution<float> normal(0.0f, 1.5f);
    Result<ParamLayout> resolved = resolve_layout(*parse_net_text(small_net(), "t"), 2, 3);
    ASSERT_TRUE(resolved.ok());
    layout_ = *resolved;
    samples_.resize(layout_.num_params, kMembers);  // (P, S)
    for (Index i = 0; i < samples_.size(); ++i) samples_.data()[i] = normal(rng);
    x_.resize(2, kRows);  // (D, n)
    for (Index i = 0; i < x_.size(); ++i) x_.data()[i] = normal(rng);
    std::uniform_int_distribution<std::int32_t> label(0, 2);
    labels_.resize(kRows);
    for (auto& y : labels_) y = label(rng);
  }

  Predictor make(Index block_rows, std::optional<double> temperature = {}) const {
    Result<Predictor> p = Predictor::from_parts(
        two_input_preprocessing(), small_net(), samples_,
        {.samples = 0, .block_rows = block_rows, .temperature = temperature});
    EXPECT_TRUE(p.ok()) << p.status().message();
    return std::move(*p);
  }

  // Each member's log-probabilities (K, n), from a plain forward pass.
  Eigen::MatrixXd member_log_probs(Index s) const {
    Network<float> network(layout_);
    Workspace<float> ws(layout_, kRows);
    EXPECT_TRUE(network.forward(ws, samples_.col(s), x_).ok());
    return ws.log_probs().cast<double>();
  }

  ParamLayout layout_;
  Eigen::MatrixXf samples_;
  Eigen::MatrixXf x_;
  std::vector<std::int32_t> labels_;
};

TEST_F(Evaluate, AverageEqualsThePredictorsAndMembersEqualTheMetricsModule) {
  const Predictor predictor = make(4096);
  Result<EnsembleEvaluation> e = evaluate_ensemble(predictor, x_, labels_, {});
  ASSERT_TRUE(e.ok()) << e.status().message();
  EXPECT_EQ(e->temperature, 1.0);

  // Reference 1: Predictor::predict_encoded, the path `credence predict` takes.
  Workspace<float> ws = predictor.make_workspace();
  EnsembleAverager averager;
  Prediction out;
  ASSERT_TRUE(predictor.predict_encoded(ws, averager, x_, out).ok());
  ASSERT_EQ(e->split.log_mean.cols(), kRows);
  for (Index b = 0; b < kRows; ++b) {
    for (Index k = 0; k < 3; ++k) {
      EXPECT_NEAR(e->split.log_mean(k, b), std::log(out.probabilities(k, b)), 1e-12);
    }
    EXPECT_NEAR(e->split.total(b), out.entropy(b), 1e-12);
    EXPECT_NEAR(e->split.expected(b), out.expected_entropy(b), 1e-12);
    EXPECT_NEAR(e->split.mutual_info(b), out.mutual_information(b), 1e-12);
  }

  // Reference 2: the metrics module (its own tests compare it with scikit-learn) applied
  // to each member alone.
  ASSERT_EQ(e->members.size(), static_cast<std::size_t>(kMembers));
  for (Index s = 0; s < kMembers; ++s) {
    const Eigen::MatrixXd log_p = member_log_probs(s);
    const Eigen::MatrixXd p = log_p.array().exp().matrix();
    const MemberScores& m = e->members[static_cast<std::size_t>(s)];
    EXPECT_NEAR(m.accuracy, accuracy_score(p, labels_), 1e-15) << "member " << s;
    EXPECT_NEAR(m.nll, negative_log_likelihood(log_p, labels_), 1e-12) << "member " << s;
    EXPECT_NEAR(m.brier, brier_score(p, labels_), 1e-12) << "member " << s;
    EXPECT_NEAR(m.ece, top_label_reliability(p, labels_, 15, Binning::kEqualWidth).ece, 1e-12)
        << "member " << s;
  }
  // The members do differ (otherwise the comparison above proves little).
  EXPECT_NE(e->members[0].nll, e->members[1].nll);
}

TEST_F(Evaluate, SameResultForAnyThreadCountAndBlockSize) {
  // DESIGN contract (predict.h): per-block sums added in block order, so the thread count
  // cannot change a bit; a different block size regroups the sums (1e-12).
  const Predictor small_blocks = make(3);
  const int threads_before = omp_get_max_threads();
  omp_set_num_threads(1);
  Result<EnsembleEvaluation> one = evaluate_ensemble(small_blocks, x_, labels_, {});
  omp_set_num_threads(2);
  Result<EnsembleEvaluation> two = evaluate_ensemble(small_blocks, x_, labels_, {});
  omp_set_num_threads(threads_before);
  ASSERT_TRUE(one.ok() && two.ok());
  EXPECT_TRUE(one->split.log_mean == two->split.log_mean);
  EXPECT_TRUE(one->split.mutual_info == two->split.mutual_info);
  for (std::size_t s = 0; s < one->members.size(); ++s) {
    EXPECT_EQ(one->members[s].nll, two->members[s].nll);
    EXPECT_EQ(one->members[s].brier, two->members[s].brier);
    EXPECT_EQ(one->members[s].ece, two->members[s].ece);
    EXPECT_EQ(one->members[s].accuracy, two->members[s].accuracy);
  }

  Result<EnsembleEvaluation> whole = evaluate_ensemble(make(4096), x_, labels_, {});
  ASSERT_TRUE(whole.ok());
  EXPECT_TRUE(whole->split.log_mean.isApprox(one->split.log_mean, 1e-12));
  EXPECT_LT((whole->split.total - one->split.total).cwiseAbs().maxCoeff(), 1e-12);
  for (std::size_t s = 0; s < one->members.size(); ++s) {
    EXPECT_NEAR(whole->members[s].nll, one->members[s].nll, 1e-12);
    EXPECT_NEAR(whole->members[s].brier, one->members[s].brier, 1e-12);
    EXPECT_NEAR(whole->members[s].ece, one->members[s].ece, 1e-12);
    EXPECT_EQ(whole->members[s].accuracy, one->members[s].accuracy);
  }
}

TEST_F(Evaluate, TemperatureTempersEveryMemberBeforeAveraging) {
  // By hand (docs/methods.md 9.4 applied per member, fit_ensemble_temperature's definition):
  // pbar = (1/S) sum_s softmax(log p_s / 2).
  const double tau = 2.0;
  Eigen::MatrixXd pbar = Eigen::MatrixXd::Zero(3, kRows);
  std::vector<Eigen::MatrixXd> tempered;
  for (Index s = 0; s < kMembers; ++s) {
    const Eigen::MatrixXd log_p = member_log_probs(s);
    Eigen::MatrixXd t(3, kRows);
    for (Index b = 0; b < kRows; ++b) {
      double sum = 0;
      for (Index k = 0; k < 3; ++k) sum += std::exp(log_p(k, b) / tau);
      for (Index k = 0; k < 3; ++k) t(k, b) = std::exp(log_p(k, b) / tau) / sum;
    }
    pbar += t / static_cast<double>(kMembers);
    tempered.push_back(t);
  }
  EvaluateOptions options;
  options.temperature = tau;
  options.keep_member_log_probs = true;
  Result<EnsembleEvaluation> e = evaluate_ensemble(make(4), x_, labels_, options);
  ASSERT_TRUE(e.ok()) << e.status().message();
  EXPECT_EQ(e->temperature, tau);
  for (Index b = 0; b < kRows; ++b) {
    for (Index k = 0; k < 3; ++k) {
      EXPECT_NEAR(e->split.log_mean(k, b), std::log(pbar(k, b)), 1e-12) << k << "," << b;
    }
  }
  ASSERT_EQ(e->member_log_probs.size(), static_cast<std::size_t>(kMembers));
  for (Index s = 0; s < kMembers; ++s) {
    const Eigen::MatrixXd& kept = e->member_log_probs[static_cast<std::size_t>(s)];
    EXPECT_LT((kept.array().exp().matrix() - tempered[static_cast<std::size_t>(s)])
                  .cwiseAbs()
                  .maxCoeff(),
              1e-12);
    EXPECT_NEAR(e->members[static_cast<std::size_t>(s)].nll,
                negative_log_likelihood(kept, labels_), 1e-12);
  }
  // The tempered average is still an average of distributions: H = E H + MI (docs/methods.md 9.1).
  EXPECT_LT((e->split.total - e->split.expected - e->split.mutual_info).cwiseAbs().maxCoeff(),
            1e-12);

  // The predictor's own temperature is the default; EvaluateOptions overrides it.
  Result<EnsembleEvaluation> from_predictor = evaluate_ensemble(make(4, tau), x_, labels_, {});
  ASSERT_TRUE(from_predictor.ok());
  EXPECT_TRUE(from_predictor->split.log_mean == e->split.log_mean);
}

TEST_F(Evaluate, RefusesBadLabelsShapesAndTemperatures) {
  const Predictor predictor = make(4096);
  std::vector<std::int32_t> bad = labels_;
  bad[3] = 3;
  Result<EnsembleEvaluation> label = evaluate_ensemble(predictor, x_, bad, {});
  ASSERT_FALSE(label.ok());
  EXPECT_EQ(label.status().code(), StatusCode::kInvalidInput);
  Result<EnsembleEvaluation> shape =
      evaluate_ensemble(predictor, Eigen::MatrixXf::Zero(3, kRows), labels_, {});
  EXPECT_EQ(shape.status().code(), StatusCode::kInvalidInput);
  EvaluateOptions frozen;
  frozen.temperature = 0.0;
  EXPECT_EQ(evaluate_ensemble(predictor, x_, labels_, frozen).status().code(),
            StatusCode::kInvalidInput);
}

}  // namespace
}  // namespace credence
