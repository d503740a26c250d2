// `credence sweep --masses ... --max-moves ...` end to end on a tiny invented table
// (credence synth): the grid is refused with one message and exit 2 for methods it cannot
// map and for flags rhmc does not read, writing nothing; 2 x 2 maps of rsghmc and of rhmc
// have per-cell ESS, gradient counts (rhmc: trajectories x leapfrog steps), ESS rates per
// gradient and per pass, mean |v|/c, acceptance, stored settings and chosen cell that agree
// with the run files read independently with h5py and numpy
// (tests/tools/check_tuning_map.py, ESS by tests/tools/numpy_rhat.py); and the reports
// with their heat maps render cleanly in headless Chromium.
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

const char* kChromium = "/usr/bin/chromium";

// The map's report.html in headless Chromium: `svgs` charts and `sections` sections shown.
std::pair<int, std::string> render_check(const std::string& out, int svgs, int sections) {
  return testing::run_shell(std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                            "/tests/tools/render_check.py' '" + out + "/report.html' --chromium " +
                            kChromium + " --expect-svg " + std::to_string(svgs) +
                            " --expect-sections " + std::to_string(sections));
}

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
      {"--methods hmc --masses 1 --max-moves 0.01", "hmc reads neither"},
      // rhmc reads every training row in each gradient, and keeps the budget it is given.
      {"--methods rhmc --masses 1 --max-moves 0.01 --batch 64", "--batch is not read by rhmc"},
      {"--methods rhmc --masses 1 --max-moves 0.01 --extend-seconds 5",
       "--extend-seconds is not read by a map with rhmc"},
      {"--methods rsghmc,rhmc --masses 1 --max-moves 0.01 --extend-seconds 5",
       "--extend-seconds is not read by a map with rhmc"},
      {"--methods rhmc --masses 1 --max-moves 0.01 --epochs 39", "under two rhmc trajectories"},
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

  if (!std::filesystem::exists(kChromium)) GTEST_SKIP() << "no " << kChromium;
  auto [shown, log] = render_check(out, 4, 3);
  EXPECT_EQ(shown, 0) << log;
}

// rsghmc and rhmc over mass x learning rate: --epochs 800 is 800 passes per chain, for
// rhmc 40 trajectories of 20 leapfrog steps (one full-data gradient each).
TEST_F(SweepMap, RhmcCellsAgreeWithTheirRunFilesAndTheReportPassesTheAudit) {
  auto run = run_credence(sweep("--methods rsghmc,rhmc --masses 0.1,1 --step-sizes 0.003,0.03 "
                                "--epochs 800 --chains 2 --samples 20 --hidden 8 --bootstrap 0",
                                "rhmc_map"));
  ASSERT_EQ(run.exit_code, 0) << run.output;
  const std::string out = dir_->path().string() + "/rhmc_map";
  for (const char* name : {"rhmc_ess.svg", "rhmc_speed.svg", "rhmc_nll.svg", "rhmc_diverged.svg",
                           "rhmc_accept.svg", "report.html"}) {
    EXPECT_TRUE(std::filesystem::exists(out + "/" + name)) << name;
  }
  auto [code, output] = testing::run_shell(std::string("'") + CREDENCE_PYTHON + "' '" +
                                           CREDENCE_SOURCE_DIR +
                                           "/tests/tools/check_tuning_map.py' '" + out +
                                           "' --epochs 800");
  EXPECT_EQ(code, 0) << output;
  const std::string csv = testing::read_text(out + "/tuning_map.csv");
  EXPECT_EQ(std::count(csv.begin(), csv.end(), '\n'), 9) << csv;
  // Every rhmc cell measured a speed and an acceptance (no empty field in its line).
  for (std::size_t at = csv.find("\nrhmc,"); at != std::string::npos; at = csv.find("\nrhmc,", at + 1)) {
    const std::string line = csv.substr(at + 1, csv.find('\n', at + 1) - at - 1);
    EXPECT_EQ(line.find(",,"), std::string::npos) << line;
    EXPECT_NE(line.back(), ',') << line;
  }

  if (!std::filesystem::exists(kChromium)) GTEST_SKIP() << "no " << kChromium;
  auto [shown, log] = render_check(out, 9, 4);
  EXPECT_EQ(shown, 0) << log;
  // Nothing scrolls sideways at 1,400 and 800 px (a wide table did at 1,400), and axe-core's
  // WCAG 2.1 A/AA rules find nothing serious when scripts/bootstrap installed it.
  const bool axe = std::filesystem::exists(CREDENCE_AXE_JS);
  auto [audited, audit_log] = testing::run_shell(
      std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
      "/tests/tools/page_audit.py' '" + out + "/report.html' --chromium " + kChromium +
      " --widths 1400,800 --out '" + out + "/audit'" +
      (axe ? std::string(" --axe '") + CREDENCE_AXE_JS + "'" : std::string()));
  EXPECT_EQ(audited, 0) << audit_log;
}

}  // namespace
}  // namespace credence
