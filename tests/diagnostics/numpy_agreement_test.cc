// R-hat, ESS and autocorrelation against an independent numpy/scipy implementation of the
// 2021 paper's equations (tests/tools/numpy_rhat.py; its autocovariances come from
// numpy.correlate, not an FFT).
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <random>

#include "credence/diagnostics.h"
#include "python_reference.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

void expect_relative(double actual, double expected, double tolerance, const std::string& what) {
  if (std::isnan(expected)) {
    EXPECT_TRUE(std::isnan(actual)) << what;
    return;
  }
  EXPECT_NEAR(actual, expected, tolerance * std::abs(expected)) << what;
}

// A small fixed set: four chains of 203 draws (odd: the split drops the middle draw) of
// an AR(1) with rho 0.7 and chain-specific scales, ties included by rounding.
Chains fixed_chains() {
  std::mt19937_64 rng(testing::test_seed(42));
  std::normal_distribution<double> normal;
  Chains chains(4);
  for (int c = 0; c < 4; ++c) {
    double x = 0;
    for (int t = 0; t < 203; ++t) {
      x = 0.7 * x + normal(rng) * (1 + 0.3 * c);
      chains[static_cast<std::size_t>(c)].push_back(std::round(x * 20) / 20 + 0.1 * c);
    }
  }
  return chains;
}

std::string write_chains(const testing::TempDir& dir, const Chains& chains) {
  const std::string path = (dir.path() / "chains.txt").string();
  std::ofstream out(path);
  out.precision(17);
  for (const auto& chain : chains) {
    for (double x : chain) out << x << ' ';
    out << '\n';
  }
  return path;
}

TEST(NumpyAgreement, RhatAndEssAgreeToRoundoff) {
  testing::TempDir dir;
  for (int ones : {0, 1}) {
    Chains chains = fixed_chains();
    if (ones) chains.resize(1);  // one chain: ESS from its halves, no R-hat
    const testing::PythonLines ref = testing::run_numpy_rhat("chains", write_chains(dir, chains));
    ASSERT_TRUE(ref.ok) << ref.output;
    const ScalarDiagnostics d = diagnose_scalar(chains);
    // Reference: numpy_rhat.py (numpy, scipy.stats.rankdata, scipy.special.ndtri), 1e-8 relative.
    expect_relative(d.ess_bulk, ref.values.at("ess_bulk")[0], 1e-8, "ess_bulk");
    expect_relative(d.ess_tail, ref.values.at("ess_tail")[0], 1e-8, "ess_tail");
    if (ones) {
      EXPECT_FALSE(d.rhat.has_value());
      continue;
    }
    expect_relative(*d.rhat_bulk, ref.values.at("rhat_bulk")[0], 1e-8, "rhat_bulk");
    expect_relative(*d.rhat_folded, ref.values.at("rhat_folded")[0], 1e-8, "rhat_folded");
    expect_relative(*d.rhat_split, ref.values.at("rhat_split")[0], 1e-8, "rhat_split");
    EXPECT_GT(*d.rhat_folded, 1.01) << "chain scales differ: the fixed set should need folding";
  }
}

TEST(NumpyAgreement, FftAutocorrelationMatchesDirectSum) {
  testing::TempDir dir;
  const Chains chains = fixed_chains();
  const testing::PythonLines ref = testing::run_numpy_rhat("chains", write_chains(dir, chains));
  ASSERT_TRUE(ref.ok) << ref.output;
  for (std::size_t m = 0; m < chains.size(); ++m) {
    const std::vector<double> acf = autocorrelation(chains[m]);
    const std::vector<double>& direct = ref.values.at("acf_" + std::to_string(m));
    ASSERT_EQ(acf.size(), direct.size());
    // Reference: numpy.correlate(x - mean, x - mean, "full") / n, normalised at lag 0.
    for (std::size_t t = 0; t < acf.size(); ++t) EXPECT_NEAR(acf[t], direct[t], 1e-12) << "lag " << t;
  }
}

TEST(NumpyAgreement, DeterministicChainsReproduceMethodsValues) {
  // The numpy script itself against docs/methods.md 10's worked values, so a wrong reference
  // cannot make the comparison above pass.
  testing::TempDir dir;
  const testing::PythonLines ref =
      testing::run_numpy_rhat("chains", write_chains(dir, {{1, 2, 3, 4, 5, 6, 7, 8}, {2, 4, 6, 8, 10, 12, 14, 16}}));
  ASSERT_TRUE(ref.ok) << ref.output;
  EXPECT_NEAR(ref.values.at("rhat_split")[0], 2.3600847442, 1e-9);
  EXPECT_NEAR(ref.values.at("rhat_bulk")[0], 2.0043325190, 1e-9);
  EXPECT_NEAR(ref.values.at("rhat_folded")[0], 1.7125588315, 1e-9);
}

}  // namespace
}  // namespace credence
