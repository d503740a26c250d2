// A run file whose writer died without closing it: resume rebuilds it from the committed
// rows, a copy cut short is refused, and no object header straddles a 4 KiB page (so a
// kill -9 cannot leave one half rewritten).
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>

#include "ensemble/test_runs.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::append_rows;
using testing::make_header;
using testing::state_after;
using testing::TempDir;

constexpr int kChains = 3;
constexpr std::int64_t kParameters = 2001;
constexpr std::int64_t kRounds = 40;  // kept samples per chain before the writer dies

// Writes kRounds committed rounds in a child that then ends without closing the file,
// as kill -9 would leave it (the superblock still says "open for SWMR writing").
void write_and_die(const std::string& path) {
  const pid_t pid = fork();
  ASSERT_GE(pid, 0);
  if (pid == 0) {
    const RunHeader header = make_header(kChains, kParameters);
    Result<std::unique_ptr<RunWriter>> writer = RunWriter::create(path, header, false);
    if (!writer.ok()) _exit(1);
    for (std::int64_t k = 0; k < kRounds; ++k) {
      for (int c = 0; c < kChains; ++c) {
        if (!append_rows(**writer, c, k).ok() ||
            !(*writer)->set_chain_state(state_after(header, c, k)).ok()) {
          _exit(1);
        }
      }
      if (!(*writer)->commit().ok()) _exit(1);
    }
    _exit(0);  // no destructor runs: HDF5 never closes the file
  }
  int status = 0;
  waitpid(pid, &status, 0);
  ASSERT_TRUE(WIFEXITED(status) && WEXITSTATUS(status) == 0) << "the child writer failed";
}

ino_t inode_of(const std::string& path) {
  struct stat info {};
  return stat(path.c_str(), &info) == 0 ? info.st_ino : 0;
}

TEST(KilledRun, ResumeRebuildsTheFileFromItsCommittedRows) {
  TempDir dir;
  const std::string path = (dir.path() / "run.h5").string();
  write_and_die(path);
  {
    Result<std::unique_ptr<RunReader>> before = RunReader::open(path);
    ASSERT_TRUE(before.ok()) << before.status().to_string();
    ASSERT_TRUE((*before)->summary().recovered);
    ASSERT_EQ((*before)->summary().samples, kChains * kRounds);
  }
  // What an earlier resume, killed mid-rebuild, would leave: pid 999999 runs nowhere.
  const std::string stale = dir.write("run.h5.rebuild-999999", "half a rebuild");
  const ino_t old_inode = inode_of(path);

  std::vector<ChainState> states;
  Result<std::unique_ptr<RunWriter>> writer = RunWriter::reopen(path, states);
  ASSERT_TRUE(writer.ok()) << writer.status().to_string();
  EXPECT_NE(inode_of(path), old_inode) << "the killed file was written in place";
  EXPECT_FALSE(std::filesystem::exists(stale)) << "a dead resume's temporary was left";
  ASSERT_EQ(states.size(), static_cast<std::size_t>(kChains));
  for (const ChainState& state : states) {
    EXPECT_EQ(state.kept, kRounds) << "chain " << state.chain;
    EXPECT_EQ(state.next_step, 10 * kRounds + 1);
    EXPECT_EQ(state.theta[7], testing::theta_value(state.chain, kRounds - 1, 7));
    EXPECT_EQ(state.state.words.at("batch_position")[0],
              static_cast<std::uint64_t>(kRounds - 1) * 3);
  }
  EXPECT_EQ((*writer)->committed_samples(), kChains * kRounds);

  // The rebuilt file takes new rows and finishes like any other.
  const RunHeader& header = (*writer)->header();
  for (int c = 0; c < kChains; ++c) {
    ASSERT_TRUE(append_rows(**writer, c, kRounds).ok());
    ASSERT_TRUE((*writer)->set_chain_state(state_after(header, c, kRounds)).ok());
  }
  ASSERT_TRUE((*writer)->finish(RunStatus::kComplete).ok());
  writer->reset();
  EXPECT_EQ(std::distance(std::filesystem::directory_iterator(dir.path()),
                          std::filesystem::directory_iterator()),
            1)
      << "only run.h5 should remain";

  Result<std::unique_ptr<RunReader>> after = RunReader::open(path);
  ASSERT_TRUE(after.ok()) << after.status().to_string();
  EXPECT_FALSE((*after)->summary().recovered);
  EXPECT_EQ((*after)->summary().status, RunStatus::kComplete);
  EXPECT_EQ((*after)->summary().samples, kChains * (kRounds + 1));
  Result<Eigen::MatrixXf> theta = (*after)->samples();
  Result<std::vector<std::int32_t>> chains = (*after)->sample_chains();
  Result<std::vector<std::int64_t>> indices = (*after)->sample_indices();
  ASSERT_TRUE(theta.ok() && chains.ok() && indices.ok());
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const auto k = static_cast<std::size_t>(j);
    ASSERT_EQ((*theta)(11, j), testing::theta_value((*chains)[k], (*indices)[k], 11)) << j;
  }
  for (int c = 0; c < kChains; ++c) {
    Result<std::vector<TraceRecord>> traces = (*after)->traces(c);
    ASSERT_TRUE(traces.ok());
    EXPECT_EQ(traces->size(), static_cast<std::size_t>(2 * (kRounds + 1))) << "chain " << c;
  }
}

TEST(KilledRun, CopyCutShortIsRefusedAsTruncated) {
  TempDir dir;
  const std::string intact = (dir.path() / "run.h5").string();
  write_and_die(intact);
  const auto size = std::filesystem::file_size(intact);
  for (std::uintmax_t keep : {size / 2, size - size / 8}) {
    const std::string path = (dir.path() / ("cut_" + std::to_string(keep) + ".h5")).string();
    std::filesystem::copy_file(intact, path);
    std::filesystem::resize_file(path, keep);
    const Status opened = RunReader::open(path).status();
    ASSERT_FALSE(opened.ok()) << "a copy cut to " << keep << " of " << size << " bytes opened";
    EXPECT_EQ(opened.code(), StatusCode::kCorrupt) << opened.to_string();
    EXPECT_NE(opened.message().find(path), std::string::npos) << opened.message();
    EXPECT_NE(opened.message().find("truncated"), std::string::npos) << opened.message();
    std::vector<ChainState> states;
    EXPECT_EQ(RunWriter::reopen(path, states).status().code(), StatusCode::kCorrupt);
  }
}

// h5py (the reference binding) reads the file-space settings and every object header's
// address and size.
TEST(KilledRun, NoObjectHeaderStraddlesAPage) {
  TempDir dir;
  const std::string path = (dir.path() / "run.h5").string();
  write_and_die(path);
  int code = 0;
  const std::string output = testing::run_python(
      std::string("'") + CREDENCE_SOURCE_DIR + "/tests/tools/page_straddles.py' '" + path + "'",
      code);
  ASSERT_EQ(code, 0) << output;
  // Strategy 1 is H5F_FSPACE_STRATEGY_PAGE.
  EXPECT_NE(output.find("strategy 1 page 4096\n"), std::string::npos) << output;
  EXPECT_NE(output.find("\nstraddling 0\n"), std::string::npos) << output;
  EXPECT_EQ(output.find("headers 1\n"), std::string::npos) << "only the root was visited";
}

}  // namespace
}  // namespace credence
