// Binary decisions, precision-recall and ROC curves and predict's per-row interval
// against scikit-learn 1.2.1 and numpy 1.24 on identical numbers
// (tests/tools/sklearn_decisions.py).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <map>
#include <random>
#include <sstream>
#include <string>
#include <tuple>

#include "credence/metrics.h"
#include "credence/predict.h"
#include "testing/python_reference.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr double kTolerance = 1e-9;

using testing::Reference;

template <typename T>
void write_binary(const std::filesystem::path& path, const std::vector<T>& values) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(values.data()),
            static_cast<std::streamsize>(values.size() * sizeof(T)));
}

Reference run_reference(const PositiveScores& s, const std::vector<double>& thresholds,
                        const std::vector<double>& levels) {
  testing::TempDir dir;
  write_binary(dir.path() / "q.f64", s.q);
  write_binary(dir.path() / "positive.u8", s.positive);
  write_binary(dir.path() / "thresholds.f64", thresholds);
  write_binary(dir.path() / "levels.f64", levels);
  return testing::run_python_reference("sklearn_decisions.py", dir.path());
}

void expect_all_near(const std::vector<double>& got, const std::vector<double>& want,
                     const std::string& what) {
  ASSERT_EQ(got.size(), want.size()) << what;
  double worst = 0;
  for (std::size_t i = 0; i < got.size(); ++i) worst = std::max(worst, std::abs(got[i] - want[i]));
  EXPECT_LE(worst, kTolerance) << what << ": largest difference " << worst;
}

std::vector<double> reversed(std::vector<double> v) {
  std::reverse(v.begin(), v.end());
  return v;
}

// q with ties (a third rounded to two decimals) and labels drawn from a distorted q, so
// the scores are informative but not calibrated; class 0 is the positive one here, so
// the positive-class plumbing is exercised too.
PositiveScores sample_scores(std::uint64_t seed, std::size_t n) {
  std::mt19937_64 gen(testing::test_seed(seed));
  std::uniform_real_distribution<double> uniform(0.0, 1.0);
  Eigen::MatrixXd p(2, static_cast<Eigen::Index>(n));
  std::vector<std::int32_t> y(n);
  for (std::size_t i = 0; i < n; ++i) {
    double q0 = uniform(gen);
    if (i % 3 == 0) q0 = std::round(q0 * 100) / 100;
    p(0, static_cast<Eigen::Index>(i)) = q0;
    p(1, static_cast<Eigen::Index>(i)) = 1 - q0;
    y[i] = uniform(gen) < std::pow(q0, 1.5) ? 0 : 1;
  }
  return positive_scores(p, y, /*positive_class=*/0);
}

TEST(DecisionsSklearn, ConfusionCurvesAreasAndQuantiles) {
  // References: scikit-learn 1.2.1 confusion_matrix, precision_recall_curve,
  // average_precision_score, roc_curve (default and drop_intermediate=False),
  // roc_auc_score; numpy.quantile(method='linear').
  const PositiveScores s = sample_scores(419, 700);
  const std::vector<double> thresholds{0.05, 0.25, 0.5, 0.62, 0.9, s.q[3]};
  const std::vector<double> levels{0.05, 0.95, 0.025, 0.975, 0.0, 1.0, 0.5};
  const Reference ref = run_reference(s, thresholds, levels);
  ASSERT_FALSE(ref.empty());

  for (std::size_t i = 0; i < thresholds.size(); ++i) {
    const DecisionScores d = decide_at(s.q, s.positive, thresholds[i]);
    const std::vector<double> want = ref.at("confusion_" + std::to_string(i));
    EXPECT_EQ(static_cast<double>(d.counts.true_positive), want[0]) << thresholds[i];
    EXPECT_EQ(static_cast<double>(d.counts.false_positive), want[1]) << thresholds[i];
    EXPECT_EQ(static_cast<double>(d.counts.true_negative), want[2]) << thresholds[i];
    EXPECT_EQ(static_cast<double>(d.counts.false_negative), want[3]) << thresholds[i];
    EXPECT_NEAR(d.sensitivity, want[0] / (want[0] + want[3]), kTolerance);
    EXPECT_NEAR(d.specificity, want[2] / (want[2] + want[1]), kTolerance);
  }

  const std::optional<PrecisionRecallCurve> pr = precision_recall_curve(s.q, s.positive);
  ASSERT_TRUE(pr.has_value());
  // scikit-learn lists thresholds ascending and ends with (precision 1, recall 0); ours
  // start there and go down, with +inf as that point's threshold.
  expect_all_near(reversed(pr->precision), ref.at("pr_precision"), "precision");
  expect_all_near(reversed(pr->recall), ref.at("pr_recall"), "recall");
  expect_all_near(std::vector<double>(pr->thresholds.rbegin(), pr->thresholds.rend() - 1),
                  ref.at("pr_thresholds"), "precision-recall thresholds");
  EXPECT_NEAR(pr->average_precision, ref.at("average_precision")[0], kTolerance);

  for (const auto& [name, drop] : {std::pair{"roc", true}, std::pair{"roc_all", false}}) {
    const std::optional<RocCurve> roc = roc_curve(s.q, s.positive, drop);
    ASSERT_TRUE(roc.has_value());
    expect_all_near(roc->false_positive_rate, ref.at(std::string(name) + "_fpr"), name);
    expect_all_near(roc->true_positive_rate, ref.at(std::string(name) + "_tpr"), name);
    expect_all_near(std::vector<double>(roc->thresholds.begin() + 1, roc->thresholds.end()),
                    ref.at(std::string(name) + "_thresholds"), name);
    EXPECT_NEAR(roc->area, ref.at("roc_auc")[0], kTolerance) << name;
  }
  EXPECT_NEAR(*auroc(s.q, s.positive), ref.at("roc_auc")[0], kTolerance);

  std::vector<double> sorted = s.q;
  std::sort(sorted.begin(), sorted.end());
  const std::vector<double>& want = ref.at("quantiles");
  for (std::size_t i = 0; i < levels.size(); ++i) {
    EXPECT_NEAR(sorted_quantile(sorted, levels[i]), want[i], kTolerance) << levels[i];
  }
  // predict's per-row interval (partial ordering, not a sort) gives the same numbers:
  // levels 0.9 and 0.95 are the pairs (0.05, 0.95) and (0.025, 0.975) above.
  for (const auto& [level, lo, hi] : {std::tuple{0.9, 0, 1}, std::tuple{0.95, 2, 3}}) {
    std::vector<double> values = s.q;
    const Interval got = interval_of_members(values, level);
    EXPECT_NEAR(got.lo, want[static_cast<std::size_t>(lo)], kTolerance) << level;
    EXPECT_NEAR(got.hi, want[static_cast<std::size_t>(hi)], kTolerance) << level;
  }
}

TEST(DecisionsSklearn, IntervalOfFewMembers) {
  // numpy.quantile([3, 1, 2], [0.25, 0.75]) = [1.5, 2.5] (h = 0.5 and 1.5, by hand);
  // one member: both ends are its value.
  std::vector<double> three{3, 1, 2};
  const Interval i = interval_of_members(three, 0.5);
  EXPECT_DOUBLE_EQ(i.lo, 1.5);
  EXPECT_DOUBLE_EQ(i.hi, 2.5);
  std::vector<double> one{0.25};
  const Interval j = interval_of_members(one, 0.9);
  EXPECT_EQ(j.lo, 0.25);
  EXPECT_EQ(j.hi, 0.25);
}

}  // namespace
}  // namespace credence
