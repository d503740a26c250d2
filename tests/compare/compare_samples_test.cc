// compare's default kept samples per sampler chain (src/compare/compare_samples.h): enough
// draws that the verdict's largest R-hat over every probe row can fall to the 2021
// paper's 1.01 when the chains do agree, and a cut when run files would grow too large.
#include "compare/compare_samples.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <random>

#include "credence/diagnostics.h"
#include "testing/seed.h"

namespace credence {
namespace {

// The largest R-hat (max of bulk and folded, as the verdict judges) over `summaries`
// scalars drawn independently and identically in every chain: what a perfectly mixed
// run of `draws` kept samples per chain shows. Summaries share half their variance, as
// probe rows of one network do.
double largest_rhat_of_ideal_chains(long draws, int summaries, std::uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  constexpr int kChains = 4;
  Chains common(kChains, std::vector<double>(static_cast<std::size_t>(draws)));
  for (auto& chain : common) {
    for (double& x : chain) x = normal(rng);
  }
  double largest = 0;
  for (int s = 0; s < summaries; ++s) {
    Chains chains = common;
    for (auto& chain : chains) {
      for (double& x : chain) x = 0.7071 * x + 0.7071 * normal(rng);
    }
    const ScalarDiagnostics d = diagnose_scalar(chains);
    largest = std::max(largest, d.rhat.value_or(0));
  }
  return largest;
}

TEST(CompareSamples, DefaultDrawsLetAnIdealRunPassThePredictionsCheck) {
  // 257 summaries: the default 256 probe rows and the probe log-likelihood. Reference
  // figures from tests/tools/numpy_rhat.py on the same construction (numpy, 10 repeats):
  // 100 draws per chain, largest R-hat 1.022-1.029; 400 draws, 1.005-1.007.
  for (int repeat = 0; repeat < 3; ++repeat) {
    const std::uint64_t seed = testing::test_seed(170 + static_cast<std::uint64_t>(repeat));
    EXPECT_LT(largest_rhat_of_ideal_chains(kCompareRhatDraws, 257, seed), kRhatThreshold)
        << "the default leaves a perfectly mixed run failing the check (repeat " << repeat << ")";
    // The old default of 100 kept samples could not pass however well the chains mixed.
    EXPECT_GT(largest_rhat_of_ideal_chains(100, 257, seed), kRhatThreshold) << "repeat " << repeat;
  }
}

TEST(CompareSamples, DenseParametersCountWeightsAndBiases) {
  // Hand count for the demo's network: 20 inputs, hidden 32,32, 2 classes:
  // 21*32 + 33*32 + 33*2 = 1794 (credence train logs "1794 parameters" for it).
  EXPECT_EQ(dense_parameters(20, {32, 32}, 2), 1794);
  EXPECT_EQ(dense_parameters(4, {}, 3), 15);  // logistic regression: 5 * 3
}

TEST(CompareSamples, LargeNetworksKeepFewerAndSaySo) {
  const CompareSamples demo = default_compare_samples(1794, 4);
  EXPECT_EQ(demo.samples, kCompareRhatDraws);
  EXPECT_TRUE(demo.note.empty());
  // One million parameters x 4 chains x 4 bytes = 16 MB per kept sample: 256 MiB holds 16.
  const CompareSamples big = default_compare_samples(1'000'000, 4);
  EXPECT_EQ(big.samples, 16);
  EXPECT_NE(big.note.find("16 samples per chain"), std::string::npos) << big.note;
  EXPECT_EQ(default_compare_samples(0, 4).samples, kCompareRhatDraws) << "unknown size: not cut";
}

}  // namespace
}  // namespace credence
