// `credence train` under mpirun: two ranks give the same samples as one process, a
// rank killed mid-run leaves a run file that opens and resumes, and ranks reading
// different data refuse to start. Data: an invented cold-store table from `credence synth`.
#include <gtest/gtest.h>

#include <fcntl.h>
#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include "credence/ensemble.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

extern char** environ;

namespace credence {
namespace {

using testing::run_credence;

#ifdef CREDENCE_HAVE_MPI
constexpr bool kHaveMpi = true;
#else
constexpr bool kHaveMpi = false;
#endif

// Tests run as root in CI and this machine has fewer cores than ranks.
const std::string kMpirun =
    "mpirun -n 2 --oversubscribe --allow-run-as-root --mca btl_vader_single_copy_mechanism none";

// Runs a shell command, returning its exit code and what it printed.
testing::CommandOutput shell(const std::string& command) {
  testing::CommandOutput result;
  FILE* pipe = popen((command + " 2>&1").c_str(), "r");
  if (pipe == nullptr) return result;
  char buffer[4096];
  std::size_t n = 0;
  while ((n = fread(buffer, 1, sizeof buffer, pipe)) > 0) result.output.append(buffer, n);
  const int status = pclose(pipe);
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return result;
}

// Compares theta per (chain, index) of two run files with h5py and numpy, outside our
// own reader (docs/run-file.md: committed rows are the first committed_samples of the
// active checkpoint slot). Prints "same N" or what differs.
std::string compare_with_h5py(const std::string& a, const std::string& b) {
  const std::string script = R"PY(
import sys, h5py, numpy as np
def rows(path):
    with h5py.File(path, "r") as f:
        slot = int(f["run/active_slot"][0])
        n = int(f["checkpoint/slot_%d/committed_samples" % slot][0])
        s = f["samples"]
        keys = list(zip(s["chain"][:n].tolist(), s["index"][:n].tolist()))
        theta = s["theta"][:n]
    return {k: theta[i] for i, k in enumerate(keys)}
a, b = rows(sys.argv[1]), rows(sys.argv[2])
if sorted(a) != sorted(b):
    print("keys differ", sorted(a)[:8], sorted(b)[:8]); sys.exit(0)
bad = [k for k in a if not np.array_equal(a[k], b[k])]
print("same %d" % len(a) if not bad else "theta differs at %s" % bad[:5])
)PY";
  testing::TempDir dir;
  const std::string path = dir.write("compare.py", script);
  return shell(std::string("'") + CREDENCE_PYTHON + "' '" + path + "' '" + a + "' '" + b + "'")
      .output;
}

class MpiTrain : public ::testing::Test {
 protected:
  void SetUp() override {
    if (!kHaveMpi) {
      GTEST_SKIP() << "this build has no MPI: configure with -DCREDENCE_MPI=ON "
                      "(scripts/test-mpi) to run the MPI tests";
    }
    data_ = (dir_.path() / "cold.csv").string();
    auto out = run_credence("synth --scenario cold-store --rows 600 --seed 4 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }

  // The flags every run here shares.
  std::string train_args(const std::string& out, const std::string& extra) const {
    return "--quiet train '" + data_ + "' --target fault_14d --id unit_id --impute median "
           "--batch 32 --hidden 8 --chains 4 --seed 3 --threads 1 --out '" + out + "' " + extra;
  }
  std::string path(const std::string& name) const { return (dir_.path() / name).string(); }

  testing::TempDir dir_;
  std::string data_;
};

TEST_F(MpiTrain, TwoRanksGiveTheSamplesOfOneProcess) {
  const std::string extra = "--burn-in 40 --thin 2 --samples 10";
  const std::string local = path("local.h5"), spread = path("spread.h5");
  auto one = run_credence(train_args(local, extra));
  ASSERT_EQ(one.exit_code, 0) << one.output;
  auto two = shell(kMpirun + " '" + CREDENCE_BIN + "' " + train_args(spread, extra));
  ASSERT_EQ(two.exit_code, 0) << two.output;
  // Reference: h5py and numpy read both files; equality is exact (bit for bit).
  EXPECT_EQ(compare_with_h5py(local, spread), "same 40\n");
  // The end-of-run verdict is printed under mpirun too (rank 0 judges the finished file),
  // and it is the one process's verdict: the files hold the same samples.
  const auto verdict_of = [](const std::string& output) {
    const std::size_t at = output.find("verdict:");
    return at == std::string::npos ? std::string("(no verdict)")
                                   : output.substr(at, output.find('\n', at) - at);
  };
  EXPECT_NE(verdict_of(one.output), "(no verdict)") << one.output;
  EXPECT_EQ(verdict_of(two.output), verdict_of(one.output)) << two.output;
  auto inspect = run_credence("inspect '" + spread + "'");
  ASSERT_EQ(inspect.exit_code, 0) << inspect.output;
  EXPECT_NE(inspect.output.find("40 kept of 40 planned"), std::string::npos) << inspect.output;
}

TEST_F(MpiTrain, RanksReadingDifferentDataRefuseToStart) {
  // Rank 1 is given another file: each rank checks its SHA-256 against rank 0's.
  const std::string other = path("other.csv");
  std::filesystem::copy_file(data_, other);
  std::ofstream(other, std::ios::app) << "\n";
  const std::string run = path("never.h5");
  const std::string args = train_args(run, "--burn-in 4 --thin 1 --samples 2");
  std::string other_args = args;
  other_args.replace(other_args.find(data_), data_.size(), other);
  auto out = shell("mpirun --oversubscribe --allow-run-as-root --mca "
                   "btl_vader_single_copy_mechanism none -n 1 '" + std::string(CREDENCE_BIN) +
                   "' " + args + " : -n 1 '" + CREDENCE_BIN + "' " + other_args);
  EXPECT_EQ(out.exit_code, 2) << out.output;
  EXPECT_NE(out.output.find("rank 1"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("other.csv"), std::string::npos) << out.output;
  EXPECT_FALSE(std::filesystem::exists(run)) << "nothing is written when the data differ";
}

// The pid of the process of rank `rank` among the descendants of `root`.
pid_t find_rank(pid_t root, int rank) {
  const std::string want = "OMPI_COMM_WORLD_RANK=" + std::to_string(rank);
  for (const auto& entry : std::filesystem::directory_iterator("/proc")) {
    const std::string name = entry.path().filename().string();
    if (name.find_first_not_of("0123456789") != std::string::npos) continue;
    std::ifstream environ_file(entry.path() / "environ");
    std::string env((std::istreambuf_iterator<char>(environ_file)), {});
    if (env.find(want + '\0') == std::string::npos) continue;
    // Walk up the parents to `root`: only our own job counts.
    for (pid_t p = static_cast<pid_t>(std::stol(name)); p > 1;) {
      std::ifstream stat(std::filesystem::path("/proc") / std::to_string(p) / "stat");
      std::string text((std::istreambuf_iterator<char>(stat)), {});
      const auto close = text.rfind(')');
      if (close == std::string::npos) break;
      std::istringstream rest(text.substr(close + 2));
      char state = 0;
      pid_t parent = 0;
      rest >> state >> parent;
      if (parent == root) return static_cast<pid_t>(std::stol(name));
      p = parent;
    }
  }
  return -1;
}

TEST_F(MpiTrain, KillingOneRankLeavesARunThatOpensAndResumes) {
  const std::string extra = "--burn-in 2000 --thin 1000 --samples 60 --flush-seconds 0.1";
  const std::string whole = path("whole.h5"), run = path("killed.h5");
  auto reference = run_credence(train_args(whole, extra));
  ASSERT_EQ(reference.exit_code, 0) << reference.output;

  const std::string command = kMpirun + " '" + CREDENCE_BIN + "' " + train_args(run, extra) +
                              " > '" + path("mpirun.log") + "' 2>&1";
  std::vector<std::string> argv_text = {"/bin/sh", "-c", command};
  std::vector<char*> argv;
  for (std::string& a : argv_text) argv.push_back(a.data());
  argv.push_back(nullptr);
  pid_t shell_pid = -1;
  ASSERT_EQ(posix_spawn(&shell_pid, "/bin/sh", nullptr, nullptr, argv.data(), environ), 0);
  // Wait until rank 1 runs and some samples are committed, then kill -9 rank 1.
  pid_t victim = -1;
  std::int64_t committed = 0;
  for (int i = 0; i < 400 && committed < 8; ++i) {
    std::this_thread::sleep_for(std::chrono::milliseconds(25));
    if (victim < 0) victim = find_rank(shell_pid, 1);
    if (auto reader = RunReader::open(run); reader.ok()) committed = (*reader)->summary().samples;
  }
  ASSERT_GT(victim, 0) << "rank 1 never started";
  ASSERT_EQ(::kill(victim, SIGKILL), 0);
  int status = 0;
  waitpid(shell_pid, &status, 0);
  EXPECT_NE(WEXITSTATUS(status), 0) << "Open MPI ends the job when a rank dies";

  // The file opens (our reader and h5py), then resumes in one process (a different
  // number of ranks) to the samples of the uninterrupted run.
  {
    auto opened = RunReader::open(run);
    ASSERT_TRUE(opened.ok()) << opened.status().message();
    EXPECT_GT((*opened)->summary().samples, 0);
    EXPECT_LT((*opened)->summary().samples, 240) << "the kill came after the run ended";
  }
  auto resumed = run_credence("--quiet train --resume '" + run + "'");
  ASSERT_EQ(resumed.exit_code, 0) << resumed.output;
  EXPECT_EQ(compare_with_h5py(whole, run), "same 240\n");
}

}  // namespace
}  // namespace credence
