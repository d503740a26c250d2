// Metrics against scikit-learn 1.2.1 and numpy on identical probabilities
// (tests/tools/sklearn_metrics.py).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <random>
#include <sstream>
#include <string>

#include "credence/metrics.h"
#include "testing/python_reference.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr double kTolerance = 1e-9;

using testing::Reference;

// Writes probs (K, n) and labels, runs the script with Debian's python, reads its numbers.
Reference run_reference(const Eigen::MatrixXd& probs, const std::vector<std::int32_t>& labels) {
  testing::TempDir dir;
  {
    std::ofstream shape(dir.path() / "shape.txt");
    shape << probs.rows() << ' ' << probs.cols() << '\n';
    // Column-major (K, n) is n rows of K values, row by row: NumPy's (n, K) C order.
    std::ofstream p(dir.path() / "probs.f64", std::ios::binary);
    p.write(reinterpret_cast<const char*>(probs.data()),
            static_cast<std::streamsize>(probs.size() * sizeof(double)));
    std::ofstream y(dir.path() / "labels.i32", std::ios::binary);
    y.write(reinterpret_cast<const char*>(labels.data()),
            static_cast<std::streamsize>(labels.size() * sizeof(std::int32_t)));
  }
  return testing::run_python_reference("sklearn_metrics.py", dir.path());
}

void expect_all_near(const std::vector<double>& got, const std::vector<double>& want,
                     const char* what) {
  ASSERT_EQ(got.size(), want.size()) << what;
  double worst = 0;
  for (std::size_t i = 0; i < got.size(); ++i) worst = std::max(worst, std::abs(got[i] - want[i]));
  EXPECT_LE(worst, kTolerance) << what << ": largest difference " << worst;
}

// Softmax of N(0, scale^2) logits: (K, n) probabilities.
Eigen::MatrixXd random_probs(std::mt19937_64& gen, Eigen::Index k, Eigen::Index n, double scale) {
  std::normal_distribution<double> normal(0.0, scale);
  Eigen::MatrixXd p(k, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    for (Eigen::Index c = 0; c < k; ++c) p(c, i) = std::exp(normal(gen));
    p.col(i) /= p.col(i).sum();
  }
  return p;
}

TEST(SklearnAgreement, BinaryScoresCurvesAndAuroc) {
  // Reference: scikit-learn 1.2.1 log_loss, brier_score_loss (1-D positive-class input),
  // calibration_curve (uniform and quantile, n_bins = 10), roc_auc_score; numpy Brier.
  std::mt19937_64 gen(testing::test_seed(311));
  const Eigen::Index n = 600;
  Eigen::MatrixXd p = random_probs(gen, 2, n, 1.5);
  // Ties for AUROC and the quantile edges: a third of the rows rounded to two decimals;
  // and some rows exactly on NumPy's edges (3 * 0.1 = 0.30000000000000004 among them).
  const double on_edges[] = {0.0,
                             0.1,
                             0.2,
                             0.30000000000000004,
                             0.4,
                             0.5,
                             0.6000000000000001,
                             0.7000000000000001,
                             0.8,
                             0.9,
                             1.0,
                             0.3,
                             0.7};
  for (Eigen::Index i = 0; i < n; ++i) {
    double q = p(1, i);
    if (i % 3 == 0) q = std::round(q * 100) / 100;
    if (i < 13) q = on_edges[i];
    p(1, i) = q;
    p(0, i) = 1 - q;
  }
  std::vector<std::int32_t> y(static_cast<std::size_t>(n));
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  // Labels from a distorted version of q, so the model is informative but miscalibrated.
  for (Eigen::Index i = 0; i < n; ++i) {
    y[static_cast<std::size_t>(i)] = uniform(gen) < std::pow(p(1, i), 1.5) ? 1 : 0;
  }
  const Reference ref = run_reference(p, y);
  ASSERT_FALSE(ref.empty());

  EXPECT_NEAR(brier_score(p, y), ref.at("brier_multiclass")[0], kTolerance);
  EXPECT_NEAR(binary_brier_score(p, y), ref.at("brier_binary")[0], kTolerance);
  std::vector<double> q(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) q[static_cast<std::size_t>(i)] = p(1, i);
  EXPECT_NEAR(binary_brier_score(q, y), ref.at("brier_binary")[0], kTolerance);
  EXPECT_NEAR(*auroc_one_vs_rest(p, y).macro, ref.at("roc_auc")[0], kTolerance);
  std::vector<std::uint8_t> positive(y.begin(), y.end());
  EXPECT_NEAR(*auroc(q, positive), ref.at("roc_auc")[0], kTolerance);

  const PositiveClassCurve u = positive_class_curve(q, y, 10, CurveEdges::kWidth);
  expect_all_near(u.observed, ref.at("curve_uniform_true"), "width observed (sklearn uniform)");
  expect_all_near(u.mean_probability, ref.at("curve_uniform_pred"), "width mean probability");
  const PositiveClassCurve qc = positive_class_curve(q, y, 10, CurveEdges::kMass);
  expect_all_near(qc.observed, ref.at("curve_quantile_true"), "mass observed (sklearn quantile)");
  expect_all_near(qc.mean_probability, ref.at("curve_quantile_pred"), "mass mean probability");
}

TEST(SklearnAgreement, BinaryLogLossAwayFromZero) {
  // Reference: scikit-learn 1.2.1 log_loss (its eps clipping is inactive in (0, 1)).
  std::mt19937_64 gen(testing::test_seed(312));
  const Eigen::MatrixXd p = random_probs(gen, 2, 400, 2.0);
  std::vector<std::int32_t> y(400);
  for (std::size_t i = 0; i < y.size(); ++i) y[i] = static_cast<std::int32_t>(gen() % 2);
  const Reference ref = run_reference(p, y);
  ASSERT_FALSE(ref.empty());
  EXPECT_NEAR(negative_log_likelihood(p.array().log().matrix(), y), ref.at("log_loss")[0],
              kTolerance);
}

TEST(SklearnAgreement, MultiClassLogLossBrierAndOneVsRestAuroc) {
  // Reference: scikit-learn 1.2.1 log_loss, roc_auc_score(multi_class='ovr',
  // average='macro'); numpy for the multi-class Brier definition.
  std::mt19937_64 gen(testing::test_seed(313));
  const Eigen::Index n = 800;
  Eigen::MatrixXd p = random_probs(gen, 4, n, 1.2);
  std::vector<std::int32_t> y(static_cast<std::size_t>(n));
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  for (Eigen::Index i = 0; i < n; ++i) {
    double u = uniform(gen);
    std::int32_t label = 3;
    for (std::int32_t k = 0; k < 3; ++k) {
      if (u < p(k, i)) {
        label = k;
        break;
      }
      u -= p(k, i);
    }
    y[static_cast<std::size_t>(i)] = label;
  }
  const Reference ref = run_reference(p, y);
  ASSERT_FALSE(ref.empty());
  EXPECT_NEAR(negative_log_likelihood(p.array().log().matrix(), y), ref.at("log_loss")[0],
              kTolerance);
  EXPECT_NEAR(brier_score(p, y), ref.at("brier_multiclass")[0], kTolerance);
  const OneVsRestAuroc ovr = auroc_one_vs_rest(p, y);
  EXPECT_EQ(ovr.classes_scored, 4);
  EXPECT_NEAR(*ovr.macro, ref.at("roc_auc_ovr_macro")[0], kTolerance);
}

}  // namespace
}  // namespace credence
