// Issue 17: chains had no seed of their own. README's "several machines, each with its
// own seed, then merge" failed, because a different --seed also changes the split, and
// merge refuses runs of different preprocessing. --chain-seed seeds the chains apart from
// the split's --seed and is recorded in the run file.
#include <gtest/gtest.h>

#include <fstream>
#include <random>
#include <string>
#include <variant>

#include "credence/ensemble.h"
#include "testing/run_command.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

std::int64_t integer_setting(const RunHeader& header, const std::string& name) {
  for (const auto& [key, value] : header.settings) {
    if (key == name && std::holds_alternative<std::int64_t>(value)) {
      return std::get<std::int64_t>(value);
    }
  }
  ADD_FAILURE() << "no integer setting " << name;
  return -1;
}

TEST(Issue17ChainSeed, RunsWithOneSplitSeedAndTwoChainSeedsMerge) {
  testing::TempDir dir;
  const std::string csv = (dir.path() / "t.csv").string();
  {
    std::mt19937_64 rng(testing::test_seed(1706));
    std::normal_distribution<double> normal;
    std::ofstream out(csv);
    out << "flow,heat,alarm\n";
    for (int r = 0; r < 80; ++r) {
      const double a = normal(rng), b = normal(rng);
      out << a << "," << b << "," << (a - b + 0.5 * normal(rng) > 0 ? "yes" : "no") << "\n";
    }
  }
  auto train = [&](const std::string& name, const std::string& chain_seed) {
    const std::string out = (dir.path() / name).string();
    const auto run = testing::run_credence(
        "--quiet train '" + csv + "' --target alarm --hidden 4 --chains 2 --burn-in 20 "
        "--thin 2 --samples 5 --seed 9 --chain-seed " + chain_seed + " --out '" + out + "'");
    EXPECT_EQ(run.exit_code, 0) << run.output;
    return out;
  };
  const std::string a = train("a.h5", "101"), b = train("b.h5", "102");
  const std::string merged = (dir.path() / "ab.h5").string();
  const auto merge = testing::run_credence("--quiet merge '" + a + "' '" + b + "' --out '" +
                                           merged + "'");
  ASSERT_EQ(merge.exit_code, 0) << merge.output;

  Result<std::unique_ptr<RunReader>> ra = RunReader::open(a), rb = RunReader::open(b);
  ASSERT_TRUE(ra.ok() && rb.ok());
  EXPECT_EQ(integer_setting((*ra)->header(), "chain_seed"), 101);
  EXPECT_EQ(integer_setting((*rb)->header(), "chain_seed"), 102);
  EXPECT_EQ(integer_setting((*ra)->header(), "data_split_seed"), 9);
  EXPECT_EQ((*ra)->header().train_rows, (*rb)->header().train_rows);
  // Different chain seeds: different chains.
  Result<Eigen::MatrixXf> sa = (*ra)->samples(), sb = (*rb)->samples();
  ASSERT_TRUE(sa.ok() && sb.ok());
  EXPECT_GT((*sa - *sb).cwiseAbs().maxCoeff(), 1e-3f);

  Result<std::unique_ptr<RunReader>> rm = RunReader::open(merged);
  ASSERT_TRUE(rm.ok()) << rm.status().to_string();
  EXPECT_EQ((*rm)->header().chains, 4);
  EXPECT_EQ((*rm)->summary().samples, 20);
}

}  // namespace
}  // namespace credence
