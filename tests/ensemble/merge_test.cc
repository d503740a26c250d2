// merge_runs: chains renumbered, samples concatenated, mismatched runs refused.
#include <gtest/gtest.h>

#include <filesystem>

#include "ensemble/test_runs.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::expect_failure;
using testing::TempDir;

// A finished run of `chains` chains with `per_chain` samples each.
std::string write_run(const TempDir& dir, const std::string& name, const RunHeader& header,
                      std::int64_t per_chain) {
  const std::string path = (dir.path() / name).string();
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(path, header, false);
  EXPECT_TRUE(writer.ok()) << writer.status().to_string();
  for (std::int64_t k = 0; k < per_chain; ++k) {
    for (int c = 0; c < header.chains; ++c) {
      EXPECT_TRUE(testing::append_rows(**writer, c, k).ok());
      EXPECT_TRUE((*writer)->set_chain_state(testing::state_after(header, c, k)).ok());
    }
    EXPECT_TRUE((*writer)->commit().ok());
  }
  EXPECT_TRUE((*writer)->finish(RunStatus::kComplete).ok());
  return path;
}

TEST(MergeRuns, RenumbersChainsAndConcatenatesSamples) {
  TempDir dir;
  const std::string a = write_run(dir, "a.h5", testing::make_header(2, 48), 4);
  const std::string b = write_run(dir, "b.h5", testing::make_header(3, 48), 2);
  const std::string out = (dir.path() / "merged.h5").string();
  const std::vector<std::string> inputs = {a, b};
  Status merged = merge_runs(inputs, out, false);
  ASSERT_TRUE(merged.ok()) << merged.to_string();

  Result<std::unique_ptr<RunReader>> reader = RunReader::open(out);
  ASSERT_TRUE(reader.ok()) << reader.status().to_string();
  const RunReader& run = **reader;
  EXPECT_EQ(run.header().chains, 5);
  EXPECT_EQ(run.summary().status, RunStatus::kComplete);
  EXPECT_EQ(run.summary().samples, 2 * 4 + 3 * 2);
  EXPECT_EQ(run.summary().kept_per_chain, (std::vector<std::int64_t>{4, 4, 2, 2, 2}));
  Result<Eigen::MatrixXf> theta = run.samples();
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  ASSERT_TRUE(theta.ok() && chains.ok() && indices.ok());
  // a's 8 samples first (chains 0, 1), then b's 6 (its chains 0..2 become 2..4).
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const auto s = static_cast<std::size_t>(j);
    const int source_chain = j < 8 ? static_cast<int>(j % 2) : static_cast<int>((j - 8) % 3);
    EXPECT_EQ((*chains)[s], j < 8 ? source_chain : source_chain + 2);
    EXPECT_EQ((*theta)(7, j), testing::theta_value(source_chain, (*indices)[s], 7));
  }
  Result<std::vector<TraceRecord>> traces = run.traces(4);
  ASSERT_TRUE(traces.ok());
  EXPECT_EQ(traces->size(), 4u);
  EXPECT_EQ(traces->front().chain, 4);
  EXPECT_EQ(traces->front().potential, 100.0 + 2);  // b's chain 2, kept 0
  Result<std::vector<ChainState>> states = run.chain_states();
  ASSERT_TRUE(states.ok());
  EXPECT_EQ((*states)[3].chain, 3);
  EXPECT_EQ((*states)[3].kept, 2);
  EXPECT_EQ((*states)[3].theta[0], testing::theta_value(1, 1, 0));

  expect_failure(merge_runs(inputs, out, false), StatusCode::kInvalidInput,
                 {out, "already exists", "--force"});
  EXPECT_TRUE(merge_runs(inputs, out, true).ok());
}

TEST(MergeRuns, RefusesDifferentParameterCountOrNet) {
  TempDir dir;
  const std::string a = write_run(dir, "a.h5", testing::make_header(2, 48), 1);
  const std::string b = write_run(dir, "b.h5", testing::make_header(2, 57), 1);
  RunHeader other_net = testing::make_header(2, 48);
  other_net.net_text = "credence-net 1\nhidden 5 relu\n";  // same parameter count
  const std::string c = write_run(dir, "c.h5", other_net, 1);
  const std::string out = (dir.path() / "merged.h5").string();

  std::vector<std::string> inputs = {a, b};
  expect_failure(merge_runs(inputs, out, false), StatusCode::kInvalidInput,
                 {b, "57 parameters", "has 48"});
  inputs = {a, c};
  expect_failure(merge_runs(inputs, out, false), StatusCode::kInvalidInput,
                 {"net text", "line 2", "hidden 5 relu", "hidden 5 tanh"});
  EXPECT_FALSE(std::filesystem::exists(out));
  // No temporary file is left behind either.
  int files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir.path()))
    files += entry.is_regular_file() ? 1 : 0;
  EXPECT_EQ(files, 3);
}

TEST(MergeRuns, RefusesDifferentPreprocessing) {
  TempDir dir;
  const std::string a = write_run(dir, "a.h5", testing::make_header(1, 21, 5), 1);
  const std::string b = write_run(dir, "b.h5", testing::make_header(1, 21, 6), 1);  // another split
  const std::vector<std::string> inputs = {a, b};
  expect_failure(merge_runs(inputs, (dir.path() / "m.h5").string(), false),
                 StatusCode::kInvalidInput, {"preprocessing", b});
}

TEST(MergeRuns, RefusesDifferentMethodsOrTemperaturesNamingBoth) {
  // Issue 17: runs of different methods were merged and then reported under the first
  // run's method. They are refused now, naming both.
  TempDir dir;
  const std::string a = write_run(dir, "a.h5", testing::make_header(1, 21), 1);
  RunHeader sgld = testing::make_header(1, 21);
  sgld.settings[0].second = std::string("sgld");
  const std::string b = write_run(dir, "b.h5", sgld, 1);
  RunHeader cold = testing::make_header(1, 21);
  cold.settings.emplace_back("temperature", 0.5);
  const std::string c = write_run(dir, "c.h5", cold, 1);
  const std::string out = (dir.path() / "m.h5").string();
  std::vector<std::string> inputs = {a, b};
  expect_failure(merge_runs(inputs, out, false), StatusCode::kInvalidInput,
                 {b, "method sgld", a, "method sghmc"});
  inputs = {a, c};
  expect_failure(merge_runs(inputs, out, false), StatusCode::kInvalidInput,
                 {c, "temperature 0.5", "temperature (none)"});
  EXPECT_FALSE(std::filesystem::exists(out));
}

}  // namespace
}  // namespace credence
