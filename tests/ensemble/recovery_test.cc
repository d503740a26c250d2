// Crash safety: a writer killed with SIGKILL at seeded moments never loses or tears
// a committed row, and reopen resumes from states that match the committed rows.
#include <gtest/gtest.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cstring>
#include <random>
#include <thread>

#include "ensemble/test_runs.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

#include <poll.h>

namespace credence {
namespace {

// Starts the crash writer and waits for its "ready" line; returns its pid.
pid_t start_writer(const std::string& path, const char* mode) {
  int fds[2];
  if (pipe(fds) != 0) return -1;
  const pid_t pid = fork();
  if (pid == 0) {
    dup2(fds[1], STDOUT_FILENO);
    close(fds[0]);
    close(fds[1]);
    execl(CREDENCE_CRASH_WRITER, CREDENCE_CRASH_WRITER, path.c_str(), mode, nullptr);
    _exit(127);
  }
  close(fds[1]);
  char buffer[16] = {};
  // Wait at most 30 s for "ready", so a stuck writer fails the test instead of hanging it.
  pollfd waiting{fds[0], POLLIN, 0};
  ssize_t got = poll(&waiting, 1, 30000) == 1 ? read(fds[0], buffer, sizeof buffer - 1) : -1;
  close(fds[0]);
  if (got <= 0 || std::strncmp(buffer, "ready", 5) != 0) {
    kill(pid, SIGKILL);
    waitpid(pid, nullptr, 0);
    return -1;
  }
  return pid;
}

// Every committed row is whole, and each chain's rows are kept numbers 0, 1, 2, ...
void check_committed_rows(const RunReader& run, std::vector<std::int64_t>& per_chain) {
  Result<Eigen::MatrixXf> theta = run.samples();
  Result<std::vector<std::int32_t>> chains = run.sample_chains();
  Result<std::vector<std::int64_t>> indices = run.sample_indices();
  ASSERT_TRUE(theta.ok() && chains.ok() && indices.ok()) << theta.status().to_string();
  per_chain.assign(static_cast<std::size_t>(run.header().chains), 0);
  for (Eigen::Index j = 0; j < theta->cols(); ++j) {
    const int c = (*chains)[static_cast<std::size_t>(j)];
    ASSERT_TRUE(c >= 0 && c < run.header().chains);
    const std::int64_t k = (*indices)[static_cast<std::size_t>(j)];
    ASSERT_EQ(k, per_chain[static_cast<std::size_t>(c)]) << "row " << j << " out of order";
    ++per_chain[static_cast<std::size_t>(c)];
    for (Eigen::Index i = 0; i < theta->rows(); ++i) {
      ASSERT_EQ((*theta)(i, j), testing::theta_value(c, k, i)) << "torn row " << j << " at " << i;
    }
  }
  EXPECT_EQ(per_chain, run.summary().kept_per_chain);
}

TEST(RunFileRecovery, KillNineNeverLosesOrTearsCommittedRows) {
  std::mt19937_64 rng(testing::test_seed(20261202));
  std::uniform_int_distribution<int> delay_ms(2, 120);
  testing::TempDir dir;
  const std::string path = (dir.path() / "crash.h5").string();
  std::int64_t previous = 0;
  int recovered = 0;
  for (int kill_number = 0; kill_number < 20; ++kill_number) {
    const pid_t pid = start_writer(path, kill_number == 0 ? "create" : "resume");
    ASSERT_GT(pid, 0) << "the crash writer did not start";
    std::this_thread::sleep_for(std::chrono::milliseconds(delay_ms(rng)));
    kill(pid, SIGKILL);
    int wait_status = 0;
    waitpid(pid, &wait_status, 0);
    ASSERT_TRUE(WIFSIGNALED(wait_status)) << "the writer stopped before it was killed";

    Result<std::unique_ptr<RunReader>> reader = RunReader::open(path);
    ASSERT_TRUE(reader.ok()) << "after kill " << kill_number << ": " << reader.status().to_string();
    const RunSummary summary = (*reader)->summary();  // a copy: the reader closes below
    recovered += summary.recovered ? 1 : 0;
    EXPECT_EQ(summary.status, RunStatus::kRunning);
    EXPECT_GE(summary.samples, previous) << "committed samples went backwards";
    previous = summary.samples;
    std::vector<std::int64_t> per_chain;
    check_committed_rows(**reader, per_chain);
    reader->reset();
    if (kill_number == 7) {
      // h5py (swmr=True, as docs/run-file.md says) finds the same committed rows.
      int code = 0;
      const std::string output = testing::run_python(
          std::string("'") + CREDENCE_SOURCE_DIR + "/tests/tools/read_run.py' '" + path + "'",
          code);
      ASSERT_EQ(code, 0) << output;
      EXPECT_NE(output.find("\nsamples " + std::to_string(summary.samples) + "\n"),
                std::string::npos)
          << output.substr(0, 300);
    }

    std::vector<ChainState> states;
    Result<std::unique_ptr<RunWriter>> writer = RunWriter::reopen(path, states);
    ASSERT_TRUE(writer.ok()) << writer.status().to_string();
    EXPECT_EQ((*writer)->committed_samples(), summary.samples);
    for (const ChainState& state : states) {
      const std::int64_t rows = per_chain[static_cast<std::size_t>(state.chain)];
      EXPECT_EQ(state.kept, rows) << "chain " << state.chain;
      if (rows > 0) {
        EXPECT_EQ(state.next_step, 10 * rows + 1);
        EXPECT_EQ(state.theta[5], testing::theta_value(state.chain, rows - 1, 5));
        EXPECT_EQ(state.state.words.at("batch_position")[0],
                  static_cast<std::uint64_t>(rows - 1) * 3);
      }
    }
  }
  EXPECT_EQ(recovered, 20) << "every kill should leave a file that needs the SWMR open";
  EXPECT_GT(previous, 0) << "no commit happened before any kill";

  const pid_t pid = start_writer(path, "finish");
  ASSERT_GT(pid, 0);
  int wait_status = 0;
  waitpid(pid, &wait_status, 0);
  ASSERT_TRUE(WIFEXITED(wait_status) && WEXITSTATUS(wait_status) == 0);
  Result<std::unique_ptr<RunReader>> reader = RunReader::open(path);
  ASSERT_TRUE(reader.ok()) << reader.status().to_string();
  EXPECT_FALSE((*reader)->summary().recovered);
  EXPECT_EQ((*reader)->summary().status, RunStatus::kComplete);
  EXPECT_GT((*reader)->summary().samples, previous);
  std::vector<std::int64_t> per_chain;
  check_committed_rows(**reader, per_chain);
}

}  // namespace
}  // namespace credence
