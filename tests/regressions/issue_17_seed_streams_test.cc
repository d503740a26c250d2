// Issue 17: per-chain seeds were ad hoc (batches seed * 1000003 + c, starting points
// seed + 1 + 7919 c), so runs with seeds s and s + 7919 shared starting points: chain 1
// of the first started where chain 0 of the second did. Every stream now comes from one
// mixing function of (seed, purpose, chain) (util/rng.h stream_seed).
#include <gtest/gtest.h>

#include <fstream>
#include <random>
#include <set>
#include <string>

#include "credence/ensemble.h"
#include "testing/run_command.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"
#include "util/rng.h"

namespace credence {
namespace {

TEST(Issue17SeedStreams, NearbySeedsPurposesAndChainsGetDistinctStreams) {
  std::set<std::uint64_t> seen;
  for (std::uint64_t seed : {3ull, 3ull + 7919, 4ull, 3ull * 1000003}) {
    for (SeedPurpose purpose : {SeedPurpose::kSampler, SeedPurpose::kBatches,
                                SeedPurpose::kInit, SeedPurpose::kGibbs}) {
      for (std::uint64_t chain = 0; chain < 64; ++chain) {
        EXPECT_TRUE(seen.insert(stream_seed(seed, purpose, chain)).second)
            << "seed " << seed << " purpose " << static_cast<int>(purpose) << " chain " << chain;
      }
    }
  }
}

// The first kept sample of an sgd run with a negligible step is its starting point.
Eigen::MatrixXf starting_points(const testing::TempDir& dir, const std::string& csv,
                                int seed, int chains) {
  const std::string out = (dir.path() / ("s" + std::to_string(seed) + ".h5")).string();
  const auto run = testing::run_credence(
      "--quiet train '" + csv + "' --target alarm --hidden 3 --method sgd --lr 1e-9 "
      "--steps 1 --chains " + std::to_string(chains) + " --seed " + std::to_string(seed) +
      " --out '" + out + "'");
  EXPECT_EQ(run.exit_code, 0) << run.output;
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(out);
  EXPECT_TRUE(reader.ok()) << reader.status().to_string();
  if (!reader.ok()) return {};
  Result<Eigen::MatrixXf> samples = (*reader)->samples();
  Result<std::vector<std::int32_t>> owners = (*reader)->sample_chains();
  EXPECT_TRUE(samples.ok() && owners.ok());
  if (!samples.ok() || !owners.ok()) return {};
  Eigen::MatrixXf by_chain(samples->rows(), chains);
  for (Eigen::Index j = 0; j < samples->cols(); ++j) {
    by_chain.col((*owners)[static_cast<std::size_t>(j)]) = samples->col(j);
  }
  return by_chain;
}

TEST(Issue17SeedStreams, SeedsSAndSPlus7919DoNotShareAStartingPoint) {
  testing::TempDir dir;
  const std::string csv = (dir.path() / "t.csv").string();
  {
    std::mt19937_64 rng(testing::test_seed(1705));
    std::normal_distribution<double> normal;
    std::ofstream out(csv);
    out << "flow,heat,alarm\n";
    for (int r = 0; r < 60; ++r) {
      const double a = normal(rng), b = normal(rng);
      out << a << "," << b << "," << (a + b > 0 ? "yes" : "no") << "\n";
    }
  }
  const Eigen::MatrixXf first = starting_points(dir, csv, 3, 2);
  const Eigen::MatrixXf second = starting_points(dir, csv, 3 + 7919, 1);
  ASSERT_EQ(first.cols(), 2);
  ASSERT_EQ(second.cols(), 1);
  const float distance = (first.col(1) - second.col(0)).cwiseAbs().maxCoeff();
  std::printf("largest difference between the two starting points: %g\n", distance);
  EXPECT_GT(distance, 1e-2f);
}

}  // namespace
}  // namespace credence
