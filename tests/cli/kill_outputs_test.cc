// SIGKILL during predict and merge (issue 9, DESIGN.md section 7): both write a temporary
// file beside --out and rename it at the end, so a kill at any moment leaves either no
// file at --out or the complete one, byte-identical to an uninterrupted run's. Data: the
// invented pump-wear scenario of `credence synth`.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <cstdint>
#include <cstdio>
#include <filesystem>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "credence/ensemble.h"
#include "testing/process.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

namespace fs = std::filesystem;
using testing::run_credence;

class KillOutputs : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    const std::string data = path("pumps.csv");
    ASSERT_EQ(run_credence("synth --scenario pump-wear --rows 600 --seed 4 --out '" + data + "'")
                  .exit_code,
              0);
    // Rows enough that predict runs for a while; the kill delays adapt to its length.
    ASSERT_EQ(run_credence("synth --scenario pump-wear --rows 20000 --seed 5 --out '" +
                           path("many.csv") + "'")
                  .exit_code,
              0);
    for (const char* name : {"a.h5", "b.h5"}) {
      // Same data, split and net; different chain seeds are not needed for a merge test.
      auto train = run_credence("--quiet train '" + data +
                                "' --target condition --id pump_id --hidden 16,16 --chains 2 "
                                "--burn-in 20 --thin 2 --samples 400 --out '" +
                                path(name) + "'");
      ASSERT_EQ(train.exit_code, 0) << train.output;
    }
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }

  // Milliseconds `command` takes uninterrupted; the caller checks its exit code.
  static int duration_ms(const std::string& command, int* exit_code) {
    const auto start = std::chrono::steady_clock::now();
    const auto result = run_credence(command);
    *exit_code = result.exit_code;
    const auto elapsed = std::chrono::steady_clock::now() - start;
    return static_cast<int>(
        std::chrono::duration_cast<std::chrono::milliseconds>(elapsed).count());
  }

  // Runs `args` and kills it after a random delay below `max_ms`, until `wanted` kills have
  // landed mid-run or `rounds` runs are spent; returns how many landed. After a kill that
  // landed, `after_kill(round)` checks what the run left; a run that finished first must
  // exit 0 and pass `after_finish(round)`, and halves the delays' range. A fixed range
  // taken from one timed run missed when the machine's load fell after the timing (CI runs
  // two tests at once), so the range now follows the runs themselves.
  template <typename AfterKill, typename AfterFinish>
  static int kill_until_landed(const std::vector<std::string>& args, const std::string& out,
                               std::uint64_t seed, int wanted, int rounds, int max_ms,
                               AfterKill after_kill, AfterFinish after_finish) {
    std::mt19937_64 random(testing::test_seed(seed));
    int landed = 0;
    for (int round = 0; round < rounds && landed < wanted; ++round) {
      fs::remove(out);
      testing::ChildProcess child(args, path("killed.log"));
      EXPECT_TRUE(child.started());
      std::this_thread::sleep_for(
          std::chrono::milliseconds(2 + random() % static_cast<unsigned>(max_ms)));
      child.signal(SIGKILL);
      const int code = child.wait();
      if (code == 128 + SIGKILL) {
        ++landed;
        after_kill(round);
      } else {
        EXPECT_EQ(code, 0) << "round " << round;
        after_finish(round);
        max_ms = std::max(2, max_ms / 2);
      }
    }
    return landed;
  }

  // Files left beside `out` by killed runs (their temporary files).
  static int leftovers(const std::string& out) {
    int count = 0;
    const std::string stem = fs::path(out).filename().string();
    for (const auto& entry : fs::directory_iterator(dir_->path())) {
      const std::string name = entry.path().filename().string();
      if (name != stem && name.rfind(stem, 0) == 0) ++count;
    }
    return count;
  }

  static testing::TempDir* dir_;
};
testing::TempDir* KillOutputs::dir_ = nullptr;

TEST_F(KillOutputs, PredictLeavesNoHalfWrittenFile) {
  const std::string reference = path("reference.csv");
  int exit_code = -1;
  const int span = duration_ms(
      "--quiet predict '" + path("a.h5") + "' '" + path("many.csv") + "' --out '" + reference + "'",
      &exit_code);
  ASSERT_EQ(exit_code, 0);
  const std::string expected = testing::read_text(reference);
  const std::string out = path("predictions.csv");
  const int landed = kill_until_landed(
      {"--quiet", "predict", path("a.h5"), path("many.csv"), "--out", out}, out, 20261202, 5, 16,
      std::max(10, span * 3 / 4),
      [&](int round) {
        EXPECT_FALSE(fs::exists(out) && testing::read_text(out) != expected)
            << "round " << round << ": a killed run left a different file at " << out;
      },
      [&](int round) { EXPECT_EQ(testing::read_text(out), expected) << "round " << round; });
  EXPECT_GE(landed, 5) << "kills should land before predict ends; lengthen the input";
  std::printf("predict: %d kills landed mid-run\n", landed);
  // A rerun after the kills writes the same bytes and clears the killed runs' temporaries.
  ASSERT_EQ(run_credence("--quiet predict '" + path("a.h5") + "' '" + path("many.csv") +
                         "' --out '" + out + "'")
                .exit_code,
            0);
  EXPECT_EQ(testing::read_text(out), expected);
  EXPECT_EQ(leftovers(out), 0);
}

TEST_F(KillOutputs, MergeLeavesNoHalfWrittenRun) {
  const std::string reference = path("merged_reference.h5");
  auto whole = run_credence("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") +
                            "' --out '" + reference + "'");
  ASSERT_EQ(whole.exit_code, 0) << whole.output;
  const std::string out = path("merged.h5");
  // Run files carry no wall-clock field that differs between two merges of the same
  // inputs, so the complete file equals the reference byte for byte (checked first).
  ASSERT_EQ(run_credence("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") +
                         "' --out '" + out + "'")
                .exit_code,
            0);
  const bool bytes_repeat = testing::read_text(out) == testing::read_text(reference);
  fs::remove(out);
  int exit_code = -1;
  const int span =
      duration_ms("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") + "' --out '" + out + "'",
                  &exit_code);
  ASSERT_EQ(exit_code, 0);
  int present = 0;
  const int landed = kill_until_landed(
      {"--quiet", "merge", path("a.h5"), path("b.h5"), "--out", out}, out, 20261203, 5, 16,
      std::max(10, span * 3 / 4),
      [&](int round) {
        if (!fs::exists(out)) return;
        ++present;
        // Present after a kill: it must be the whole merge, readable and complete.
        auto reader = RunReader::open(out);
        ASSERT_TRUE(reader.ok()) << "round " << round << ": " << reader.status().message();
        EXPECT_EQ((*reader)->summary().samples, 1600) << "round " << round;
        if (bytes_repeat) {
          EXPECT_EQ(testing::read_text(out), testing::read_text(reference)) << "round " << round;
        }
      },
      [](int) {});
  EXPECT_GE(landed, 5) << "kills should land before merge ends";
  std::printf("merge: %d kills landed mid-run, %d of them after the rename\n", landed, present);
  ASSERT_EQ(run_credence("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") + "' --out '" +
                         out + "' --force")
                .exit_code,
            0);
  EXPECT_EQ(leftovers(out), 0) << "the last merge clears the killed ones' temporaries";
}

}  // namespace
}  // namespace credence
