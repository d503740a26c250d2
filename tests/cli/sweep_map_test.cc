// `credence sweep --masses ... --max-moves ...` end to end on a tiny invented table
// (credence synth): the grid is refused with one message and exit 2 for methods it cannot
// map, writing nothing; a 2 x 2 map's per-cell ESS, gradient counts, ESS rate, mean |v|/c,
// stored settings and chosen cell agree with the run files read independently with h5py
// and numpy (tests/tools/check_tuning_map.py, ESS by tests/tools/numpy_rhat.py); and the
// report with its heat maps renders cleanly in headless Chromium.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>

#include "report/report_testing.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class SweepMap : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = dir_->path().string() + "/units.csv";
    auto synth = run_credence("--quiet synth --scenario cold-store --rows 400 --seed 4 --out '" +
                              data_ + "'");
    ASSERT_EQ(synth.exit_code, 0) << synth.output;
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string sweep(const std::string& args, const std::string& out) {
    return "--quiet sweep '" + data_ + "' --target fault_14d --id unit_id --impute median " +
           args + " --out '" + dir_->path().string() + "/" + out + "'";
  }
  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* SweepMap::dir_ = nullptr;
std::string SweepMap::data_;

// The default method list must be one sweep can run: it listed rsghmc, which a learning-rate
// sweep refuses, so `credence sweep DATA --target COL` failed with defaults only.
TEST_F(SweepMap, DefaultsSweepWithoutRefusal) {
  auto run = run_credence(sweep("--epochs 2 --chains 2 --step-sizes 0.01,0.1 --hidden 4", "plain"));
  EXPECT_EQ(run.exit_code, 0) << run.output;
  const std::string csv = testing::read_text(dir_->path().string() + "/plain/sweep.csv");
  EXPECT_NE(csv.find("sgld"), std::string::npos) << csv;
  EXPECT_NE(csv.find("sghmc"), std::string::npos) << csv;
}

TEST_F(SweepMap, RefusesWhatItCannotMapWithOneMessage) {
  const std::vector<std::pair<std::string, std::string>> cases = {
      {"--methods sghmc --masses 1 --max-moves 0.01", "sghmc reads neither"},
      {"--methods rsghmc,sgld --masses 1 --max-moves 0.01", "sgld reads neither"},
      {"--methods rsgd --masses 1 --max-moves 0.01", "rsgd is an optimizer"},
      {"--methods rhmc --masses 1 --max-moves 0.01", "rhmc uses the full data"},
      {"--max-moves 0.01", "give --masses too"},
      {"--masses 1", "needs a second axis"},
      {"--masses 1 --max-moves 0.01 --step-sizes 0.1", "not both"},
      {"--masses 0,1 --max-moves 0.01", "--masses '0,1'"},
  };
  for (const auto& [args, says] : cases) {
    auto run = run_credence(sweep(args, "refused"));
    EXPECT_EQ(run.exit_code, 2) << args << "\n" << run.output;
    EXPECT_NE(run.output.find(says), std::string::npos) << args << "\n" << run.output;
    // One message: a single line, naming the command.
    EXPECT_EQ(run.output.find('\n'), run.output.size() - 1) << args << "\n" << run.output;
    EXPECT_FALSE(std::filesystem::exists(dir_->path().string() + "/refused")) << args;
  }
}

TEST_F(SweepMap, CellMeasuresAgreeWithTheRunFilesAndTheReportRenders) {
  auto run = run_credence(sweep("--masses 0.01,1 --max-moves 0.003,0.03 --epochs 6 --chains 2 "
                                "--samples 20 --hidden 8 --bootstrap 0", "map"));
  ASSERT_EQ(run.exit_code, 0) << run.output;
  const std::string out = dir_->path().string() + "/map";
  for (const char* name : {"tuning_map.csv", "tuning_map.json", "rsghmc_ess.svg", "rsghmc_speed.svg",
                           "rsghmc_nll.svg", "rsghmc_diverged.svg", "report.html", "sweep.txt"}) {
    EXPECT_TRUE(std::filesystem::exists(out + "/" + name)) << name;
  }
  auto [code, output] = testing::run_shell(std::string("'") + CREDENCE_PYTHON + "' '" +
                                           CREDENCE_SOURCE_DIR +
                                           "/tests/tools/check_tuning_map.py' '" + out + "'");
  EXPECT_EQ(code, 0) << output;
  // Four trained cells, the first line the documented header.
  const std::string csv = testing::read_text(out + "/tuning_map.csv");
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 5) << csv;

  const char* chromium = "/usr/bin/chromium";
  if (!std::filesystem::exists(chromium)) GTEST_SKIP() << "no " << chromium;
  auto [shown, log] = testing::run_shell(
      std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
      "/tests/tools/render_check.py' '" + out + "/report.html' --chromium " + chromium +
      " --expect-svg 4 --expect-sections 3");
  EXPECT_EQ(shown, 0) << log;
}

}  // namespace
}  // namespace credence
