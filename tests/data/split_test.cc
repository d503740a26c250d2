// Stratified split: class proportions within one row, exact reproducibility by seed, coverage.
// The "within one row" bound is the guarantee of largest-remainder rounding (common practice).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "credence/data.h"
#include "data/test_tables.h"
#include "testing/seed.h"

namespace credence {
namespace {

std::vector<std::int32_t> labels_with_counts(const std::vector<int>& counts) {
  std::vector<std::int32_t> labels;
  // Interleave classes so that class membership is not a block of rows.
  int remaining = 0;
  for (int c : counts) remaining += c;
  std::vector<int> left = counts;
  while (remaining > 0) {
    for (std::size_t k = 0; k < left.size(); ++k) {
      if (left[k] > 0) {
        labels.push_back(static_cast<std::int32_t>(k));
        --left[k];
        --remaining;
      }
    }
  }
  return labels;
}

TEST(StratifiedSplit, EachClassKeepsItsProportionWithinOneRow) {
  const std::vector<int> counts = {212, 357, 31};
  const auto labels = labels_with_counts(counts);
  SplitOptions options;
  options.seed = testing::test_seed(20240611);
  auto split = stratified_split(labels, 3, options);
  ASSERT_TRUE(split.ok()) << split.status().to_string();
  const double n = static_cast<double>(labels.size());
  EXPECT_EQ(static_cast<double>(split->test.size()), std::round(n * 0.2));
  EXPECT_EQ(static_cast<double>(split->validation.size()), std::round(n * 0.1));
  for (int k = 0; k < 3; ++k) {
    auto in = [&](const std::vector<std::int64_t>& rows) {
      return static_cast<double>(std::count_if(rows.begin(), rows.end(), [&](std::int64_t r) {
        return labels[static_cast<std::size_t>(r)] == k;
      }));
    };
    EXPECT_LE(std::abs(in(split->test) - counts[static_cast<std::size_t>(k)] * 0.2), 1.0) << k;
    EXPECT_LE(std::abs(in(split->validation) - counts[static_cast<std::size_t>(k)] * 0.1), 1.0) << k;
  }
  // Every row exactly once across the three parts.
  std::vector<std::int64_t> all;
  for (const auto* part : {&split->train, &split->validation, &split->test}) {
    EXPECT_TRUE(std::is_sorted(part->begin(), part->end()));
    all.insert(all.end(), part->begin(), part->end());
  }
  std::sort(all.begin(), all.end());
  ASSERT_EQ(all.size(), labels.size());
  for (std::size_t i = 0; i < all.size(); ++i) EXPECT_EQ(all[i], static_cast<std::int64_t>(i));
}

TEST(StratifiedSplit, SameSeedSameSplitOtherSeedOtherSplit) {
  const auto labels = labels_with_counts({50, 70});
  SplitOptions a;
  a.seed = testing::test_seed(7);
  SplitOptions b = a;
  b.seed = a.seed + 1;
  auto first = stratified_split(labels, 2, a);
  auto again = stratified_split(labels, 2, a);
  auto other = stratified_split(labels, 2, b);
  ASSERT_TRUE(first.ok() && again.ok() && other.ok());
  EXPECT_EQ(first->test, again->test);
  EXPECT_EQ(first->validation, again->validation);
  EXPECT_EQ(first->train, again->train);
  EXPECT_NE(first->test, other->test);
}

TEST(StratifiedSplit, ZeroFractionsKeepEveryRowForTraining) {
  const auto labels = labels_with_counts({3, 4});
  SplitOptions options;
  options.test_fraction = 0.0;
  options.val_fraction = 0.0;
  auto split = stratified_split(labels, 2, options);
  ASSERT_TRUE(split.ok());
  EXPECT_EQ(split->train.size(), 7u);
  EXPECT_TRUE(split->test.empty());
}

TEST(StratifiedSplit, FractionsLeavingNoTrainingRowsAreRefused) {
  const auto labels = labels_with_counts({3, 4});
  SplitOptions options;
  options.test_fraction = 0.6;
  options.val_fraction = 0.5;
  testing::expect_invalid(stratified_split(labels, 2, options).status(),
                          {"--test-fraction 0.6", "--val-fraction 0.5", "sum to less than 1"});
  options.test_fraction = -0.1;
  options.val_fraction = 0.1;
  testing::expect_invalid(stratified_split(labels, 2, options).status(), {"--test-fraction -0.1"});
}

}  // namespace
}  // namespace credence
