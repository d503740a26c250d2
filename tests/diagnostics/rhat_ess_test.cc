// R-hat and ESS against published test values (docs/methods.md 10) and the AR(1) process's
// known integrated autocorrelation time.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <random>

#include "credence/diagnostics.h"
#include "testing/seed.h"

namespace credence {
namespace {

// x_t = rho x_{t-1} + e_t, started from the stationary distribution.
Chains ar1_chains(int chains, int draws, double rho, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  Chains out;
  for (int c = 0; c < chains; ++c) {
    std::vector<double> chain;
    double x = normal(rng) / std::sqrt(1 - rho * rho);
    for (int t = 0; t < draws; ++t) {
      x = rho * x + normal(rng);
      chain.push_back(x);
    }
    out.push_back(std::move(chain));
  }
  return out;
}

Chains normal_chains(int chains, int draws, std::mt19937_64& rng) { return ar1_chains(chains, draws, 0, rng); }

TEST(RhatEss, DeterministicChainsMatchWorkedValues) {
  // docs/methods.md 10 test values for chains [1..8] and [2,4,...,16], computed with the
  // 2021 paper's equations (and reproduced by tests/tools/numpy_rhat.py).
  const Chains chains = {{1, 2, 3, 4, 5, 6, 7, 8}, {2, 4, 6, 8, 10, 12, 14, 16}};
  EXPECT_NEAR(rhat_of(chains), 1.2449899598, 1e-9);
  EXPECT_NEAR(split_rhat(chains), 2.3600847442, 1e-9);
  EXPECT_NEAR(bulk_rhat(chains), 2.0043325190, 1e-9);
  EXPECT_NEAR(folded_rhat(chains), 1.7125588315, 1e-9);
  const ScalarDiagnostics d = diagnose_scalar(chains);
  ASSERT_TRUE(d.rhat.has_value());
  EXPECT_NEAR(*d.rhat, 2.0043325190, 1e-9);  // reported max(bulk, folded)
}

TEST(RhatEss, Ar1BulkEssMatchesIntegratedAutocorrelationTime) {
  // Standard time-series result: AR(1) has tau = (1 + rho)/(1 - rho), so ESS is about
  // N (1 - rho)/(1 + rho); docs/methods.md 10 test values, tolerance 10% averaged over seeds.
  std::mt19937_64 rng(testing::test_seed(2021));
  constexpr int kSeeds = 3, kChains = 4, kDraws = 10000;
  for (double rho : {0.0, 0.5, 0.9}) {
    double bulk = 0, tail = 0, rhat = 0;
    for (int s = 0; s < kSeeds; ++s) {
      const ScalarDiagnostics d = diagnose_scalar(ar1_chains(kChains, kDraws, rho, rng));
      bulk += d.ess_bulk / kSeeds;
      tail += d.ess_tail / kSeeds;
      rhat = std::max(rhat, *d.rhat);
    }
    const double expected = kChains * kDraws * (1 - rho) / (1 + rho);
    std::printf("rho %.1f: bulk-ESS %.0f (expected %.0f), tail-ESS %.0f, max R-hat %.4f\n", rho,
                bulk, expected, tail, rhat);
    EXPECT_NEAR(bulk, expected, 0.10 * expected) << "rho " << rho;
    EXPECT_LT(rhat, kRhatThreshold) << "rho " << rho;
    // docs/methods.md 10: tail indicators decorrelate faster than the draws themselves.
    if (rho > 0) {
      EXPECT_GT(tail, bulk) << "rho " << rho;
    }
  }
}

TEST(RhatEss, IndependentChainsPassAndShiftedChainIsCaught) {
  std::mt19937_64 rng(testing::test_seed(7));
  // Four iid N(0,1) chains of 1000: R-hat < 1.01 (the paper's threshold).
  const ScalarDiagnostics same = diagnose_scalar(normal_chains(4, 1000, rng));
  EXPECT_LT(*same.rhat, kRhatThreshold);

  // One of four chains shifted by one sd: docs/methods.md 10 gives split R-hat ~ 1.096 (bulk
  // ~ 1.095, folded ~ 1.004); by hand, B/n -> Var of split-chain means (2 of 8 at 1) =
  // 1.5/7, so R-hat -> sqrt(1 + 0.214) = 1.10.
  Chains shifted = normal_chains(4, 1000, rng);
  for (double& x : shifted[3]) x += 1;
  const ScalarDiagnostics four = diagnose_scalar(shifted);
  EXPECT_NEAR(*four.rhat_bulk, 1.095, 0.02);
  EXPECT_NEAR(*four.rhat_split, 1.096, 0.02);
  EXPECT_LT(*four.rhat_folded, 1.03);
  EXPECT_GT(*four.rhat, 1.05);

  // Two chains, one shifted by one sd: by hand, B/n -> 1/3, R-hat -> sqrt(4/3) = 1.155 > 1.1.
  Chains two = normal_chains(2, 1000, rng);
  for (double& x : two[1]) x += 1;
  EXPECT_GT(*diagnose_scalar(two).rhat, 1.1);
}

TEST(RhatEss, VarianceRatioFourIsCaughtByFoldedRhat) {
  // The 2021 paper's motivating case for folding: equal means, different scales. The
  // bulk statistic sees (almost) nothing; the folded one does. Expected value by hand
  // for four chains with one sd 2 (variance ratio 4): folded draws |x| have mean 0.80 vs
  // 1.60 and sd 0.60 vs 1.21, a shift comparable to the one-sd case above, so folded
  // R-hat is well above 1.01 while bulk stays below it.
  std::mt19937_64 rng(testing::test_seed(11));
  Chains chains = normal_chains(4, 1000, rng);
  for (double& x : chains[0]) x *= 2;
  const ScalarDiagnostics d = diagnose_scalar(chains);
  EXPECT_LT(*d.rhat_bulk, kRhatThreshold);
  EXPECT_GT(*d.rhat_folded, 1.05);
  EXPECT_GT(*d.rhat, kRhatThreshold);
  EXPECT_LT(*d.rhat_split, kRhatThreshold);  // classic R-hat misses it
}

TEST(RhatEss, OneChainGivesEssButNoRhat) {
  std::mt19937_64 rng(testing::test_seed(3));
  const ScalarDiagnostics d = diagnose_scalar(normal_chains(1, 2000, rng));
  EXPECT_FALSE(d.rhat.has_value());
  EXPECT_FALSE(d.rhat_bulk.has_value());
  EXPECT_NEAR(d.ess_bulk, 2000, 200);  // iid: ESS ~ N
  ASSERT_FALSE(d.notes.empty());
  EXPECT_NE(d.notes[0].find("R-hat needs two or more chains"), std::string::npos);
}

TEST(RhatEss, GuardsConstantShortAndUnequalChains) {
  const ScalarDiagnostics constant = diagnose_scalar({{2, 2, 2, 2, 2, 2}, {2, 2, 2, 2, 2, 2}});
  EXPECT_TRUE(std::isnan(constant.ess_bulk));
  EXPECT_TRUE(std::isnan(*constant.rhat));

  // Each chain constant at a different value: the chains plainly disagree.
  EXPECT_TRUE(std::isinf(rhat_of({{1, 1, 1, 1}, {2, 2, 2, 2}})));

  std::mt19937_64 rng(testing::test_seed(5));
  Chains unequal = normal_chains(3, 60, rng);
  unequal[1].resize(40);
  const ScalarDiagnostics cut = diagnose_scalar(unequal);
  EXPECT_TRUE(cut.lengths_differed);
  EXPECT_EQ(cut.draws_per_chain, 40);
  EXPECT_EQ(cut.draws_per_split_chain, 20);
  bool warned = false;
  for (const std::string& note : cut.notes) warned = warned || note.find("unstable") != std::string::npos;
  EXPECT_TRUE(warned) << "fewer than 50 draws per split chain must warn (docs/methods.md 10)";

  // Antithetic chains: ESS is capped at S log10(S) (docs/methods.md 10.2).
  Chains antithetic(2);
  for (int t = 0; t < 400; ++t) {
    antithetic[0].push_back(t % 2 ? 1.0 : -1.0);
    antithetic[1].push_back(t % 2 ? -1.0 : 1.0);
  }
  const double s = 800;
  EXPECT_LE(ess_of(split_chains(antithetic)), s * std::log10(s) * (1 + 1e-12));
}

TEST(RhatEss, AutocorrelationOfKnownSequence) {
  // By hand: x = [1, -1, 1, -1] has mean 0 and biased autocovariances 1, -3/4, 1/2, -1/4.
  const std::vector<double> x = {1, -1, 1, -1};
  const std::vector<double> acov = autocovariance(x);
  ASSERT_EQ(acov.size(), 4u);
  EXPECT_NEAR(acov[0], 1, 1e-14);
  EXPECT_NEAR(acov[1], -0.75, 1e-14);
  EXPECT_NEAR(acov[2], 0.5, 1e-14);
  EXPECT_NEAR(acov[3], -0.25, 1e-14);
}

}  // namespace
}  // namespace credence
