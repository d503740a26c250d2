// Tracked per-sample summaries (docs/methods.md 10.3) against numpy, by hand, and in law.
#include "credence/summaries.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "testing/seed.h"
#include "testing/net_layout.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::make_layout;

ProbeSet random_probe(Index d, Index rows, Index k, std::mt19937_64& engine) {
  std::normal_distribution<float> normal(0.0f, 1.5f);
  ProbeSet probe;
  probe.x.resize(d, rows);
  for (Index i = 0; i < probe.x.size(); ++i) probe.x.data()[i] = normal(engine);
  for (Index r = 0; r < rows; ++r) probe.labels.push_back(static_cast<std::int32_t>(engine() % k));
  return probe;
}

Eigen::VectorXf random_theta(Index p, float scale, std::mt19937_64& engine) {
  std::normal_distribution<float> normal(0.0f, scale);
  Eigen::VectorXf theta(p);
  for (Index i = 0; i < p; ++i) theta[i] = normal(engine);
  return theta;
}

template <typename T>
void write_binary(const std::filesystem::path& path, const T* data, std::size_t count) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(count * sizeof(T)));
}

bool near_relative(double got, double want, double tolerance) {
  return std::abs(got - want) <= tolerance * std::max(std::abs(want), 1e-30);
}

TEST(SampleSummarizer, MatchesNumpyOnTheDocumentedFlatLayout) {
  // Reference: tests/tools/numpy_summaries.py (numpy + scipy.special.log_softmax), which
  // reads theta with nets/README.md's layout and rebuilds u_j from summaries.h's recipe.
  std::mt19937_64 engine(testing::test_seed(501));
  struct Case {
    std::vector<Index> hidden;
    const char* activation;
    Index d, k, r;
    int projections;
    bool linear_path = false;
  };
  for (const Case& c :
       {Case{{}, "relu", 5, 3, 24, 4}, Case{{7}, "tanh", 5, 3, 24, 6},
        Case{{6, 4}, "softplus", 4, 2, 17, 4}, Case{{6, 4}, "relu", 4, 3, 17, 4, true}}) {
    const ParamLayout layout = make_layout(c.hidden, c.activation, c.d, c.k, c.linear_path);
    ProbeSet probe = random_probe(c.d, c.r, c.k, engine);
    const ProbeSet probe_copy = probe;
    const Eigen::VectorXf theta = random_theta(layout.num_params, 0.8f, engine);
    const std::uint64_t seed = 0xC0FFEE1234567ull + static_cast<std::uint64_t>(c.d);
    Result<SampleSummarizer> summarizer =
        SampleSummarizer::create(layout, std::move(probe), c.projections, seed);
    ASSERT_TRUE(summarizer.ok()) << summarizer.status().message();
    SampleSummary out = summarizer->make_summary();
    ASSERT_TRUE(summarizer->summarize(theta, out).ok());

    testing::TempDir dir;
    {
      std::ofstream layout_file(dir.path() / "layout.txt");
      for (std::size_t i = 0; i < layout.layers.size(); ++i) {
        const LayerLayout& l = layout.layers[i];
        layout_file << l.in << " " << l.out << " " << activation_name(l.activation) << " "
                    << l.weight_offset << " " << l.bias_offset
                    << (i >= layout.chain_size() ? " linear" : "") << "\n";
      }
      std::ofstream projections_file(dir.path() / "projections.txt");
      projections_file << c.projections << " " << seed << "\n";
    }
    write_binary(dir.path() / "theta.f32", theta.data(), static_cast<std::size_t>(theta.size()));
    const Eigen::MatrixXf rows = probe_copy.x.transpose();  // stored row by row
    Eigen::Matrix<float, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor> row_major = rows;
    write_binary(dir.path() / "x.f32", row_major.data(), static_cast<std::size_t>(rows.size()));
    write_binary(dir.path() / "labels.i32", probe_copy.labels.data(), probe_copy.labels.size());
    const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                                "/tests/tools/numpy_summaries.py' '" + dir.path().string() + "'";
    ASSERT_EQ(std::system(command.c_str()), 0) << command;
    std::ifstream in(dir.path() / "summaries.f64", std::ios::binary);
    const std::size_t layers = layout.layers.size();
    std::vector<double> want(1 + static_cast<std::size_t>(c.r) +
                             static_cast<std::size_t>(c.projections) + layers);
    in.read(reinterpret_cast<char*>(want.data()),
            static_cast<std::streamsize>(want.size() * sizeof(double)));
    ASSERT_TRUE(in.good()) << "numpy wrote too few values";

    // Probe log-likelihood and probabilities: 1e-5 relative (float32 forward pass).
    EXPECT_TRUE(near_relative(out.probe_log_lik, want[0], 1e-5))
        << out.probe_log_lik << " vs numpy " << want[0];
    int mismatches = 0;
    double worst = 0;
    for (Index r = 0; r < c.r; ++r) {
      const double ref = want[1 + static_cast<std::size_t>(r)];
      worst = std::max(worst, std::abs(out.probe_prob[r] - ref) / ref);
      if (!near_relative(out.probe_prob[r], ref, 1e-5) && ++mismatches <= 3) {
        ADD_FAILURE() << "probe row " << r << ": " << out.probe_prob[r] << " vs numpy " << ref;
      }
    }
    // The probabilities span a range (the comparison is not all near one value).
    EXPECT_LT(out.probe_prob.minCoeff(), 0.3f);
    EXPECT_GT(out.probe_prob.maxCoeff(), 0.6f);
    // Projections: numpy rebuilt u_j from the documented generator. Tolerance relative
    // to sum_i |u_ji theta_i| (double accumulation on both sides; cancellation-safe).
    for (int j = 0; j < c.projections; ++j) {
      const double ref = want[1 + static_cast<std::size_t>(c.r) + static_cast<std::size_t>(j)];
      const double scale = (summarizer->directions().col(j).cwiseAbs().cast<double>().array() *
                            theta.cwiseAbs().cast<double>().array())
                               .sum();
      EXPECT_NEAR(out.projections[j], ref, 1e-6 * scale) << "projection " << j;
    }
    // Layer norms: numpy, and by hand below.
    for (std::size_t l = 0; l < layers; ++l) {
      const double ref = want[1 + static_cast<std::size_t>(c.r + c.projections) + l];
      EXPECT_TRUE(near_relative(out.layer_sq_norms[static_cast<Index>(l)], ref, 1e-6))
          << "layer " << l;
    }
    std::printf(
        "[ measured ] %zu layers, R=%ld: log-lik %.6f (numpy %.6f), worst prob rel "
        "err %.2e\n",
        layers, static_cast<long>(c.r), out.probe_log_lik, want[0], worst);
  }
}

TEST(SampleSummarizer, LayerNormsByHand) {
  // D = 2, one hidden layer of 2, K = 2: P = 2*2 + 2 + 2*2 + 2 = 12; theta_i = i + 1.
  const ParamLayout layout = make_layout({2}, "relu", 2, 2);
  ASSERT_EQ(layout.num_params, 12);
  Eigen::VectorXf theta = Eigen::VectorXf::LinSpaced(12, 1, 12);
  ProbeSet probe;
  probe.x = Eigen::MatrixXf::Zero(2, 1);
  probe.labels = {1};
  Result<SampleSummarizer> s = SampleSummarizer::create(layout, probe, 0, 1);
  ASSERT_TRUE(s.ok());
  SampleSummary out = s->make_summary();
  ASSERT_TRUE(s->summarize(theta, out).ok());
  ASSERT_EQ(out.layer_sq_norms.size(), 2);
  // Layer 1: 1^2 + ... + 6^2 = 91; layer 2: 7^2 + ... + 12^2 = 650 - 91 = 559.
  EXPECT_FLOAT_EQ(out.layer_sq_norms[0], 91.0f);
  EXPECT_FLOAT_EQ(out.layer_sq_norms[1], 559.0f);
  EXPECT_EQ(out.projections.size(), 0);
  // x = 0: hidden = relu(b1) = (5, 6); logits = W2 (5, 6) + b2 with W2 = [[7, 9], [8, 10]]
  // (column-major), b2 = (11, 12): logits (100, 112); p(1) = 1 / (1 + e^-12).
  // float32 log-softmax rounds 1 + e^-12, so both are good to about 1e-7 absolute.
  EXPECT_NEAR(out.probe_prob[0], 1.0 / (1.0 + std::exp(-12.0)), 2e-7);
  EXPECT_NEAR(out.probe_log_lik, -std::log1p(std::exp(-12.0)), 2e-7);
}

TEST(SampleSummarizer, ProjectionsFollowNormalWithVarianceNormOverP) {
  // For u ~ N(0, I/P) independent of theta, u^T theta ~ N(0, |theta|^2 / P) exactly, so
  // z = u^T theta / (|theta| / sqrt(P)) is N(0, 1): over 3000 seeds x 4 projections with a
  // fresh random theta each (scales 0.1 to 3), the mean is within 4 standard errors
  // (4 / sqrt(12000) = 0.037) of 0 and the variance within 4 sqrt(2/12000) = 0.052 of 1.
  const ParamLayout layout = make_layout({8}, "tanh", 5, 3);  // P = 5*8 + 8 + 8*3 + 3 = 75
  std::mt19937_64 engine(testing::test_seed(502));
  ProbeSet probe = random_probe(5, 2, 3, engine);
  std::uniform_real_distribution<float> scale(0.1f, 3.0f);
  double sum = 0, sum2 = 0, sum4 = 0;
  int n = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    Result<SampleSummarizer> s =
        SampleSummarizer::create(layout, probe, 4, 1000003ull * static_cast<std::uint64_t>(trial));
    ASSERT_TRUE(s.ok());
    const Eigen::VectorXf theta = random_theta(layout.num_params, scale(engine), engine);
    SampleSummary out = s->make_summary();
    ASSERT_TRUE(s->summarize(theta, out).ok());
    const double sd = theta.cast<double>().norm() / std::sqrt(75.0);
    for (Index j = 0; j < 4; ++j) {
      const double z = out.projections[j] / sd;
      sum += z;
      sum2 += z * z;
      sum4 += z * z * z * z;
      ++n;
    }
  }
  const double mean = sum / n, variance = sum2 / n - mean * mean;
  std::printf(
      "[ measured ] z = u^T theta / (|theta|/sqrt(P)): mean %.4f, variance %.4f, "
      "E z^4 %.3f (normal: 0, 1, 3)\n",
      mean, variance, sum4 / n);
  EXPECT_NEAR(mean, 0.0, 0.037);
  EXPECT_NEAR(variance, 1.0, 0.052);
  EXPECT_NEAR(sum4 / n, 3.0, 0.35);  // kurtosis of a normal; sd of the estimate ~0.09
}

TEST(SampleSummarizer, SameSeedSameDirectionsOtherSeedOthers) {
  const ParamLayout layout = make_layout({}, "relu", 3, 2);
  ProbeSet probe;
  probe.x = Eigen::MatrixXf::Zero(3, 0);
  Result<SampleSummarizer> a = SampleSummarizer::create(layout, probe, 4, 9);
  Result<SampleSummarizer> b = SampleSummarizer::create(layout, probe, 4, 9);
  Result<SampleSummarizer> c = SampleSummarizer::create(layout, probe, 4, 10);
  ASSERT_TRUE(a.ok() && b.ok() && c.ok());
  EXPECT_EQ(a->directions(), b->directions());
  EXPECT_NE(a->directions(), c->directions());
  // No probe rows is allowed: the log-likelihood of nothing is 0.
  SampleSummary out = a->make_summary();
  ASSERT_TRUE(a->summarize(Eigen::VectorXf::Ones(layout.num_params), out).ok());
  EXPECT_EQ(out.probe_log_lik, 0.0);
  EXPECT_EQ(out.probe_prob.size(), 0);
}

TEST(SampleSummarizer, RejectsBadProbesAndThetaWithAMessage) {
  const ParamLayout layout = make_layout({}, "relu", 3, 2);
  ProbeSet wrong_width{Eigen::MatrixXf::Zero(4, 2), {0, 1}};
  Result<SampleSummarizer> a = SampleSummarizer::create(layout, wrong_width);
  ASSERT_FALSE(a.ok());
  EXPECT_EQ(a.status().message(),
            "the probe rows are 4 x 2 with 2 labels; the network needs 3 inputs per row and "
            "one label per row");
  ProbeSet bad_label{Eigen::MatrixXf::Zero(3, 2), {0, 2}};
  Result<SampleSummarizer> b = SampleSummarizer::create(layout, bad_label);
  ASSERT_FALSE(b.ok());
  EXPECT_EQ(b.status().message(), "probe row 1 has label 2; expected 0..1");
  Result<SampleSummarizer> c =
      SampleSummarizer::create(layout, {Eigen::MatrixXf::Zero(3, 1), {0}}, -1);
  ASSERT_FALSE(c.ok());
  EXPECT_NE(c.status().message().find("random projections is -1"), std::string::npos);
  Result<SampleSummarizer> ok =
      SampleSummarizer::create(layout, {Eigen::MatrixXf::Zero(3, 1), {0}});
  ASSERT_TRUE(ok.ok());
  SampleSummary out = ok->make_summary();
  Status status = ok->summarize(Eigen::VectorXf::Zero(5), out);
  EXPECT_EQ(status.code(), StatusCode::kInvalidInput);
  EXPECT_EQ(status.message(), "summarizing a sample of 5 parameters; the network has 8");
}

}  // namespace
}  // namespace credence
