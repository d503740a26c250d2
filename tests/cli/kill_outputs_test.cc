// SIGKILL during predict and merge (issue 9, DESIGN.md section 7): both write a temporary
// file beside --out and rename it at the end, so a kill at any moment leaves either no
// file at --out or the complete one, byte-identical to an uninterrupted run's. Data: the
// invented pump-wear scenario of `credence synth`.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
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
    // Rows enough that a kill lands mid-file most of the time.
    ASSERT_EQ(run_credence("synth --scenario pump-wear --rows 60000 --seed 5 --out '" +
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

  // Milliseconds `command` takes uninterrupted (exit code checked by the caller's reference
  // run). Kill delays are drawn inside this span, so kills land mid-run whether the
  // machine is idle or loaded; fixed delays made the test depend on the machine's speed.
  static int duration_ms(const std::string& command) {
    const auto start = std::chrono::steady_clock::now();
    const auto result = run_credence(command);
    EXPECT_EQ(result.exit_code, 0) << result.output;
    const auto elapsed = std::chrono::steady_clock::now() - start;
    return static_cast<int>(
        std::chrono::duration_cast<std::chrono::milliseconds>(elapsed).count());
  }

  // Runs `args` writing `out`, killing it after a random delay below `max_ms`, `rounds`
  // times; after each kill, `out` must be absent or equal `reference`. Returns how many
  // kills landed before the command finished.
  static int kill_repeatedly(const std::vector<std::string>& args, const std::string& out,
                             const std::string& reference, int rounds, int max_ms) {
    std::mt19937_64 random(testing::test_seed(20261202));
    int landed = 0;
    for (int round = 0; round < rounds; ++round) {
      fs::remove(out);
      testing::ChildProcess child(args, path("killed.log"));
      EXPECT_TRUE(child.started());
      std::this_thread::sleep_for(std::chrono::milliseconds(5 + random() % max_ms));
      child.signal(SIGKILL);
      const int code = child.wait();
      if (code == 128 + SIGKILL) {
        ++landed;
        EXPECT_FALSE(fs::exists(out) && testing::read_text(out) != reference)
            << "round " << round << ": a killed run left a different file at " << out;
      } else {
        EXPECT_EQ(code, 0) << "round " << round;
        EXPECT_EQ(testing::read_text(out), reference) << "round " << round;
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
  auto whole = run_credence("--quiet predict '" + path("a.h5") + "' '" + path("many.csv") +
                            "' --out '" + reference + "'");
  ASSERT_EQ(whole.exit_code, 0) << whole.output;
  const std::string expected = testing::read_text(reference);
  const std::string out = path("predictions.csv");
  const int span = duration_ms("--quiet predict '" + path("a.h5") + "' '" + path("many.csv") +
                               "' --out '" + path("timed.csv") + "'");
  const int landed =
      kill_repeatedly({"--quiet", "predict", path("a.h5"), path("many.csv"), "--out", out}, out,
                      expected, 8, std::max(10, span * 3 / 4));
  EXPECT_GE(landed, 4) << "most kills should land before predict ends; lengthen the input";
  std::printf("predict: %d of 8 kills landed mid-run\n", landed);
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
  const int span = duration_ms("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") +
                               "' --out '" + out + "'");
  fs::remove(out);
  std::mt19937_64 random(testing::test_seed(20261203));
  int landed = 0, present = 0;
  for (int round = 0; round < 8; ++round) {
    fs::remove(out);
    testing::ChildProcess child({"--quiet", "merge", path("a.h5"), path("b.h5"), "--out", out},
                                path("merge.log"));
    ASSERT_TRUE(child.started());
    std::this_thread::sleep_for(std::chrono::milliseconds(
        2 + random() % static_cast<unsigned>(std::max(10, span * 3 / 4))));
    child.signal(SIGKILL);
    const int code = child.wait();
    if (code != 128 + SIGKILL) {
      EXPECT_EQ(code, 0) << "round " << round;
      continue;
    }
    ++landed;
    if (!fs::exists(out)) continue;
    ++present;
    // Present after a kill: it must be the whole merge, readable and complete.
    auto reader = RunReader::open(out);
    ASSERT_TRUE(reader.ok()) << "round " << round << ": " << reader.status().message();
    EXPECT_EQ((*reader)->summary().samples, 1600) << "round " << round;
    if (bytes_repeat) {
      EXPECT_EQ(testing::read_text(out), testing::read_text(reference));
    }
  }
  std::printf("merge: %d of 8 kills landed mid-run, %d of them after the rename\n", landed,
              present);
  ASSERT_EQ(run_credence("--quiet merge '" + path("a.h5") + "' '" + path("b.h5") + "' --out '" +
                         out + "' --force")
                .exit_code,
            0);
  EXPECT_EQ(leftovers(out), 0) << "the last merge clears the killed ones' temporaries";
}

}  // namespace
}  // namespace credence
