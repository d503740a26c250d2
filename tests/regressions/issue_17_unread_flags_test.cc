// Issue 17: a flag the chosen method does not read was accepted and ignored
// (`rsghmc --lr 0.1` gave the samples of `--lr 0.01`, since rsghmc's move per step comes
// from --max-move). `credence train` now refuses such a flag with exit code 2, naming the
// flag, the method and what the method reads instead, and writes nothing.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

struct Case {
  std::string flags;                  // method and the flag under test
  std::vector<std::string> expected;  // fragments of the message
};

TEST(Issue17UnreadFlags, TrainRefusesAFlagTheMethodDoesNotRead) {
  testing::TempDir dir;
  const std::string csv = (dir.path() / "t.csv").string();
  {
    std::ofstream out(csv);
    out << "flow,heat,alarm\n";
    for (int r = 0; r < 30; ++r) out << r % 7 << "," << (r * 3) % 5 << "," << (r % 2 ? "yes" : "no") << "\n";
  }
  const std::vector<Case> cases = {
      {"--method rsghmc --lr 0.1", {"--lr", "rsghmc", "--max-move"}},
      {"--method rsghmc --step-size 0.1", {"--step-size", "rsghmc", "--max-move"}},
      {"--method sgld --lr 0.1 --step-size 0.001", {"--lr", "sgld", "--step-size"}},
      {"--method adam --temperature 0.5", {"--temperature", "adam", "optimizer"}},
      {"--method sgd --tempering likelihood", {"--tempering", "sgd"}},
      {"--method hmc --schedule cyclical", {"--schedule", "hmc", "dual averaging"}},
      {"--method sgld --cycles 3", {"--cycles", "sgld", "--schedule cyclical"}},
      {"--method rsghmc --friction 0.2", {"--friction", "rsghmc", "sghmc"}},
      {"--method sghmc --max-move 0.1", {"--max-move", "sghmc", "rsghmc"}},
      {"--method rsghmc --speed 1 --max-move 0.1", {"--max-move", "rsghmc", "--speed"}},
      {"--method sgld --mass 2", {"--mass", "sgld"}},
      {"--method rsgd --fixed-mass", {"--fixed-mass", "rsgd"}},
      {"--method sgld --leapfrog 10", {"--leapfrog", "sgld", "hmc"}},
      {"--method sghmc --target-accept 0.8", {"--target-accept", "sghmc", "Metropolis"}},
      {"--method adam --burn-in 10", {"--burn-in", "adam", "--steps"}},
      {"--method sgd --samples 10", {"--samples", "sgd", "--epochs"}},
      {"--method sgld --epochs 3", {"--epochs", "sgld", "--burn-in"}},
      {"--method sgld --steps 30", {"--steps", "sgld", "--samples"}},
      {"--method rhmc --batch 8", {"--batch", "rhmc", "every training row"}},
      {"--method sgld --net '" + std::string(CREDENCE_SOURCE_DIR) + "/nets/linear.net' --prior-scale 2",
       {"--prior-scale", "net file"}},
  };
  for (const Case& c : cases) {
    const std::string out = (dir.path() / "run.h5").string();
    const auto run = testing::run_credence("--quiet train '" + csv + "' --target alarm " + c.flags +
                                           " --out '" + out + "'");
    EXPECT_EQ(run.exit_code, 2) << c.flags << ": " << run.output;
    for (const std::string& fragment : c.expected) {
      EXPECT_NE(run.output.find(fragment), std::string::npos)
          << c.flags << ": '" << fragment << "' missing from: " << run.output;
    }
    EXPECT_FALSE(std::filesystem::exists(out)) << c.flags << " left a run file";
  }
  // The same flags where the method reads them are accepted.
  for (const std::string flags :
       {"--method rsghmc --speed 1 --lr 0.1 --burn-in 2 --thin 1 --samples 1",
        "--method sghmc --friction 0.2 --burn-in 2 --thin 1 --samples 1",
        "--method adam --steps 3", "--method hmc --leapfrog 3 --burn-in 2 --thin 1 --samples 1"}) {
    const std::string out = (dir.path() / "ok.h5").string();
    const auto run = testing::run_credence("--quiet train '" + csv + "' --target alarm --hidden 2 " +
                                           flags + " --force --out '" + out + "'");
    EXPECT_EQ(run.exit_code, 0) << flags << ": " << run.output;
  }
}

TEST(Issue17UnreadFlags, CompareRefusesSamplesWhenEveryMethodIsAnOptimizer) {
  testing::TempDir dir;
  const std::string csv = (dir.path() / "t.csv").string();
  {
    std::ofstream out(csv);
    out << "flow,heat,alarm\n";
    for (int r = 0; r < 30; ++r) out << r % 7 << "," << (r * 3) % 5 << "," << (r % 2 ? "yes" : "no") << "\n";
  }
  const auto run = testing::run_credence("--quiet compare '" + csv +
                                         "' --target alarm --methods adam,sgd --samples 10 --out '" +
                                         (dir.path() / "cmp").string() + "'");
  EXPECT_EQ(run.exit_code, 2) << run.output;
  EXPECT_NE(run.output.find("--samples is not read by --methods adam,sgd"), std::string::npos)
      << run.output;
  EXPECT_FALSE(std::filesystem::exists(dir.path() / "cmp" / "summary.txt"));
}

TEST(Issue17UnreadFlags, ResumeRefusesASettingFlag) {
  testing::TempDir dir;
  const auto run = testing::run_credence("--quiet train --resume '" +
                                         (dir.path() / "absent.h5").string() + "' --lr 0.1");
  EXPECT_EQ(run.exit_code, 2) << run.output;
  EXPECT_NE(run.output.find("--lr is not read with --resume"), std::string::npos) << run.output;
}

}  // namespace
}  // namespace credence
