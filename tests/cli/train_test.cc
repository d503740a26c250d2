// `credence train` end to end: the run file it writes, refusal to overwrite, Ctrl-C and
// --resume (bit for bit against an uninterrupted run), kill -9 at random moments, and
// divergence. Data: an invented cold-store table from `credence synth`.
#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <filesystem>
#include <fstream>
#include <random>
#include <sstream>
#include <numeric>
#include <thread>
#include <tuple>

#include "credence/ensemble.h"
#include "credence/net.h"
#include "credence/samplers_settings.h"
#include "testing/process.h"
#include "testing/kept_samples.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/seed.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::ChildProcess;
using testing::run_credence;

class Train : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = (dir_->path() / "cold.csv").string();
    auto out = run_credence("synth --scenario cold-store --rows 600 --seed 4 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }
  static void TearDownTestSuite() { delete dir_; }

  // The data and model flags every run here shares; `extra` adds or overrides.
  static std::vector<std::string> args(const std::string& out, std::vector<std::string> extra) {
    std::vector<std::string> a = {"--quiet", "train", data_,      "--target", "fault_14d",
                                  "--id",    "unit_id", "--impute", "median", "--batch",
                                  "32",      "--chains", "2",      "--seed",  "3",
                                  "--out",   out};
    if (std::find(extra.begin(), extra.end(), "--hidden") == extra.end()) {
      a.insert(a.end(), {"--hidden", "8"});
    }
    a.insert(a.end(), extra.begin(), extra.end());
    return a;
  }
  static std::string joined(const std::vector<std::string>& a) {
    std::string text;
    for (const std::string& piece : a) text += "'" + piece + "' ";
    return text;
  }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }

  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* Train::dir_ = nullptr;
std::string Train::data_;

using Samples = testing::KeptSamples;
Samples read_samples(const std::string& run) { return testing::read_kept_samples(run); }

TEST_F(Train, WritesARunThatInspectReads) {
  const std::string run = path("basic.h5");
  auto out = run_credence(joined(args(run, {"--burn-in", "100", "--thin", "5", "--samples", "20"})));
  ASSERT_EQ(out.exit_code, 0) << out.output;
  auto reader = RunReader::open(run);
  ASSERT_TRUE(reader.ok()) << reader.status().message();
  EXPECT_EQ((*reader)->summary().status, RunStatus::kComplete);
  EXPECT_EQ((*reader)->summary().samples, 40);
  EXPECT_EQ((*reader)->header().chains, 2);
  EXPECT_EQ((*reader)->header().data_rows, 600);
  EXPECT_NE((*reader)->header().command_line.find("--samples 20"), std::string::npos)
      << "provenance: " << (*reader)->header().command_line;
  auto inspect = run_credence("inspect '" + run + "' --json '" + path("basic.json") + "'");
  EXPECT_EQ(inspect.exit_code, 0) << inspect.output;
  EXPECT_NE(inspect.output.find("complete"), std::string::npos) << inspect.output;
  EXPECT_NE(inspect.output.find("40 kept"), std::string::npos) << inspect.output;
  std::ifstream json(path("basic.json"));
  std::stringstream text;
  text << json.rdbuf();
  EXPECT_NE(text.str().find("\"samples\": 40"), std::string::npos) << text.str();
}

// A Python user with h5py and numpy alone, following docs/run-file.md, rebuilds the
// ensemble's probabilities for 100 rows (tests/tools/rebuild_probabilities.py); they
// must match credence's own preprocessing and forward pass to 1e-5.
// Once as trained by default and once with --linear-path on (its W_lin, b_lin after the
// output layer, as nets/README.md documents).
TEST_F(Train, RunFileRebuildsPredictionsWithNumpy) {
  for (const bool linear : {false, true}) {
    SCOPED_TRACE(linear ? "with the linear path" : "without the linear path");
    const std::string run = path(linear ? "numpy_linear.h5" : "numpy.h5");
    auto out = run_credence(
        joined(args(run, {"--hidden", "8,4", "--activation", "tanh", "--burn-in", "100", "--thin",
                          "5", "--samples", "10", "--linear-path", linear ? "on" : "off"})));
    ASSERT_EQ(out.exit_code, 0) << out.output;
    const std::string numpy_out = path("numpy_probs.csv");
    const std::string command = std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                                "/tests/tools/rebuild_probabilities.py' '" + run + "' '" + data_ +
                                "' 100 '" + numpy_out + "'";
    ASSERT_EQ(std::system(command.c_str()), 0) << command;

    auto reader = RunReader::open(run);
    ASSERT_TRUE(reader.ok()) << reader.status().message();
    const RunHeader& header = (*reader)->header();
    ReadOptions read;
    read.text_columns = text_columns_of(header.preprocessing);
    auto table = read_table(data_, read);
    ASSERT_TRUE(table.ok()) << table.status().message();
    std::vector<std::int64_t> rows(100);
    std::iota(rows.begin(), rows.end(), std::int64_t{0});
    auto x = transform_rows(header.preprocessing, *table, rows);
    ASSERT_TRUE(x.ok()) << x.status().message();
    auto spec = parse_net_text(header.net_text, "stored");
    ASSERT_TRUE(spec.ok());
    auto layout = resolve_layout(*spec, x->rows(),
                                 static_cast<Index>(header.preprocessing.class_names.size()));
    ASSERT_TRUE(layout.ok());
    ASSERT_EQ(layout->linear_path, linear);
    Network<float> network(*layout);
    Workspace<float> workspace(*layout, 100);
    auto theta = (*reader)->samples();
    ASSERT_TRUE(theta.ok());
    ASSERT_EQ(theta->cols(), 20);
    Eigen::MatrixXd mean = Eigen::MatrixXd::Zero(layout->num_classes, 100);
    for (Eigen::Index s = 0; s < theta->cols(); ++s) {
      ASSERT_TRUE(network.forward(workspace, theta->col(s), *x).ok());
      mean += workspace.log_probs().cast<double>().array().exp().matrix();
    }
    mean /= static_cast<double>(theta->cols());

    std::ifstream in(numpy_out);
    double worst = 0;
    int lines = 0;
    for (std::string line; std::getline(in, line); ++lines) {
      std::stringstream cells(line);
      int k = 0;
      for (std::string cell; std::getline(cells, cell, ','); ++k) {
        worst = std::max(worst, std::abs(std::stod(cell) - mean(k, lines)));
      }
      EXPECT_EQ(k, layout->num_classes);
    }
    EXPECT_EQ(lines, 100);
    std::printf("largest |p_credence - p_numpy| over 100 rows: %.3g\n", worst);
    EXPECT_LT(worst, 1e-5);
  }
}

// DESIGN.md 7: a file that is not a run, a truncated run and a merge of different nets
// each exit 2 with a message naming the file.
TEST_F(Train, BadRunFilesAndMismatchedMergesExitTwo) {
  const std::string text = dir_->write("notes.h5", "this is not HDF5\n");
  auto not_hdf5 = run_credence("inspect '" + text + "'");
  EXPECT_EQ(not_hdf5.exit_code, 2) << not_hdf5.output;
  EXPECT_NE(not_hdf5.output.find("notes.h5"), std::string::npos) << not_hdf5.output;

  const std::string small = path("small_net.h5"), wide = path("wide_net.h5");
  ASSERT_EQ(run_credence(joined(args(small, {"--burn-in", "10", "--thin", "1", "--samples", "2"})))
                .exit_code, 0);
  ASSERT_EQ(run_credence(joined(args(wide, {"--hidden", "12", "--burn-in", "10", "--thin", "1",
                                            "--samples", "2"})))
                .exit_code, 0);
  const auto bytes = std::filesystem::file_size(small);
  const std::string cut = path("cut_in_half.h5");
  std::filesystem::copy_file(small, cut);
  std::filesystem::resize_file(cut, bytes / 2);
  auto truncated = run_credence("inspect '" + cut + "'");
  EXPECT_EQ(truncated.exit_code, 2) << truncated.output;
  EXPECT_NE(truncated.output.find("cut_in_half.h5"), std::string::npos) << truncated.output;

  const std::string merged = path("merged.h5");
  auto mismatch = run_credence("merge '" + small + "' '" + wide + "' --out '" + merged + "'");
  EXPECT_EQ(mismatch.exit_code, 2) << mismatch.output;
  EXPECT_FALSE(std::filesystem::exists(merged)) << "no half-written output";
  auto same = run_credence("merge '" + small + "' '" + small + "' --out '" + merged + "'");
  EXPECT_EQ(same.exit_code, 0) << same.output;
  auto reader = RunReader::open(merged);
  ASSERT_TRUE(reader.ok()) << reader.status().message();
  EXPECT_EQ((*reader)->header().chains, 4);
  EXPECT_EQ((*reader)->summary().samples, 8);
}

// Out-of-range settings are refused before anything is written (DESIGN.md 7).
TEST_F(Train, BadSettingsExitTwoAndWriteNothing) {
  const std::vector<std::pair<std::vector<std::string>, std::string>> cases = {
      {{"--samples", "0"}, "--samples"},     {{"--chains", "0"}, "--chains"},
      {{"--thin", "0"}, "--thin"},           {{"--burn-in", "-5"}, "--burn-in"},
      {{"--batch", "0"}, "--batch"},         {{"--lr", "-1"}, "--lr -1"},
      {{"--temperature", "-1"}, "--temperature -1"}, {{"--method", "nope"}, "valid methods"},
      {{"--hidden", "0,x"}, "--hidden"},     {{"--activation", "gelu"}, "gelu"}};
  for (const auto& [extra, expected] : cases) {
    const std::string run = path("refused.h5");
    auto out = run_credence(joined(args(run, extra)));
    EXPECT_EQ(out.exit_code, 2) << extra[0] << ": " << out.output;
    EXPECT_NE(out.output.find(expected), std::string::npos) << extra[0] << ": " << out.output;
    EXPECT_FALSE(std::filesystem::exists(run)) << extra[0] << " left a run file";
  }
}

TEST_F(Train, EveryMethodRunsWithItsDefaults) {
  for (const char* method : {"sgld", "psgld", "sghmc", "rsghmc", "sgd", "momentum", "rsgd",
                             "adam", "hmc", "rhmc"}) {
    const std::string run = path(std::string("m_") + method + ".h5");
    // Each method gets only the budget flags it reads (a flag it ignores is refused).
    const bool sampler = is_sampler(*parse_method(method));
    std::vector<std::string> budget = {"--method", method};
    for (const char* flag : sampler ? std::vector<const char*>{"--burn-in", "60", "--thin", "2",
                                                               "--samples", "5"}
                                    : std::vector<const char*>{"--epochs", "3"}) {
      budget.emplace_back(flag);
    }
    std::vector<std::string> all = args(run, budget);
    if (is_full_batch(*parse_method(method))) {  // hmc and rhmc read no --batch
      const auto at = std::find(all.begin(), all.end(), "--batch");
      all.erase(at, at + 2);
    }
    auto out = run_credence(joined(all));
    EXPECT_EQ(out.exit_code, 0) << method << ": " << out.output;
    auto reader = RunReader::open(run);
    ASSERT_TRUE(reader.ok()) << method << ": " << reader.status().message();
    EXPECT_EQ((*reader)->summary().status, RunStatus::kComplete) << method;
  }
}

TEST_F(Train, ExistingRunIsNotOverwrittenWithoutForce) {
  const std::string run = path("twice.h5");
  const auto base = args(run, {"--burn-in", "10", "--thin", "1", "--samples", "2"});
  ASSERT_EQ(run_credence(joined(base)).exit_code, 0);
  auto again = run_credence(joined(base));
  EXPECT_EQ(again.exit_code, 2) << again.output;
  EXPECT_NE(again.output.find("--force"), std::string::npos) << again.output;
  auto forced = base;
  forced.push_back("--force");
  EXPECT_EQ(run_credence(joined(forced)).exit_code, 0);
}

// A kill can land after the last commit; resuming then must succeed and change nothing.
TEST_F(Train, ResumingACompleteRunSucceedsAndChangesNothing) {
  const std::string run = path("done.h5");
  ASSERT_EQ(run_credence(joined(args(run, {"--burn-in", "10", "--thin", "1", "--samples", "2"})))
                .exit_code,
            0);
  const std::string before = testing::read_text(run);
  auto resumed = run_credence("train --resume '" + run + "'");
  EXPECT_EQ(resumed.exit_code, 0) << resumed.output;
  EXPECT_NE(resumed.output.find("already complete"), std::string::npos) << resumed.output;
  EXPECT_EQ(testing::read_text(run), before);
}

TEST_F(Train, EveryChainDivergingExitsOneAndSuggestsASmallerStep) {
  const std::string run = path("diverge.h5");
  auto out = run_credence(joined(args(run, {"--method", "sghmc", "--lr", "1e6", "--burn-in",
                                            "50", "--thin", "1", "--samples", "5"})));
  EXPECT_EQ(out.exit_code, 1) << out.output;
  EXPECT_NE(out.output.find("smaller"), std::string::npos) << out.output;
  auto reader = RunReader::open(run);
  ASSERT_TRUE(reader.ok()) << reader.status().message();
  EXPECT_EQ((*reader)->summary().status, RunStatus::kDiverged);
}

// Ctrl-C finishes the step, flushes, marks the run interrupted and exits 130; --resume
// then gives exactly the samples of a run that was never interrupted (DESIGN.md 7).
TEST_F(Train, InterruptedAndResumedEqualsUninterrupted) {
  // About 2 s of work on one core, so a signal after 0.3 s lands mid-run.
  const std::vector<std::string> long_run = {"--method", "rsghmc", "--burn-in", "2000", "--thin",
                                             "10", "--samples", "10000", "--flush-seconds", "0.05"};
  const std::string whole = path("whole.h5"), cut = path("cut.h5");
  ASSERT_EQ(run_credence(joined(args(whole, long_run))).exit_code, 0);

  ChildProcess child(args(cut, long_run), path("cut.log"));
  ASSERT_TRUE(child.started());
  std::this_thread::sleep_for(std::chrono::milliseconds(300));
  child.signal(SIGINT);
  const int code = child.wait();
  if (code == 0) GTEST_SKIP() << "the run finished before the signal; nothing to resume";
  ASSERT_EQ(code, 130) << "see " << path("cut.log");
  {
    auto reader = RunReader::open(cut);
    ASSERT_TRUE(reader.ok()) << reader.status().message();
    EXPECT_EQ((*reader)->summary().status, RunStatus::kInterrupted);
  }
  auto resumed = run_credence("--quiet train --resume '" + cut + "'");
  ASSERT_EQ(resumed.exit_code, 0) << resumed.output;
  Samples a = read_samples(whole), b = read_samples(cut);
  ASSERT_EQ(a.rows.size(), 20000u);
  ASSERT_EQ(b.rows.size(), a.rows.size());
  for (std::size_t i = 0; i < a.rows.size(); ++i) {
    ASSERT_EQ(std::get<0>(a.rows[i]), std::get<0>(b.rows[i])) << i;
    ASSERT_EQ(std::get<1>(a.rows[i]), std::get<1>(b.rows[i])) << i;
    ASSERT_TRUE(std::get<2>(a.rows[i]) == std::get<2>(b.rows[i])) << "sample " << i << " differs";
  }
}

// kill -9 at random moments: the file always opens, the kept-sample count never goes
// down, and resuming completes the run with exactly the samples of a run never killed.
TEST_F(Train, SurvivesKillNineAtRandomMoments) {
  const std::string run = path("killed.h5");
  const std::vector<std::string> long_run = {"--method", "sgld", "--burn-in", "500", "--thin",
                                             "20", "--samples", "6000", "--flush-seconds", "0.05"};
  std::mt19937_64 random(testing::test_seed(20261202));
  std::int64_t last_count = 0;
  bool started = false;
  int kills = 0;
  // The shortest delay doubles after every kill that lands before the run file exists,
  // so a slow start (a sanitized build on a busy machine) still gets kills mid-run.
  std::int64_t shortest_ms = 10;
  for (int kill = 0; kill < 20; ++kill) {
    std::vector<std::string> a = started ? std::vector<std::string>{"--quiet", "train", "--resume", run}
                                         : args(run, long_run);
    ChildProcess child(a, path("killed.log"));
    ASSERT_TRUE(child.started());
    const auto delay =
        std::chrono::milliseconds(shortest_ms + static_cast<std::int64_t>(random() % 140));
    std::this_thread::sleep_for(delay);
    child.signal(SIGKILL);
    const int code = child.wait();
    if (code == 0) break;  // finished before the kill
    ASSERT_EQ(code, 128 + SIGKILL) << "see " << path("killed.log");
    ++kills;
    auto reader = RunReader::open(run);
    if (!started && !reader.ok()) {  // killed before the file existed
      shortest_ms = std::min<std::int64_t>(2 * shortest_ms, 5000);
      continue;
    }
    ASSERT_TRUE(reader.ok()) << "after kill " << kill << ": " << reader.status().message();
    started = true;
    const std::int64_t count = (*reader)->summary().samples;
    EXPECT_GE(count, last_count) << "after kill " << kill;
    last_count = count;
  }
  bool complete = false;
  if (auto before = RunReader::open(run); before.ok()) {
    complete = (*before)->summary().status == RunStatus::kComplete;
  }
  ASSERT_TRUE(started) << "no kill landed after the run file existed";
  if (!complete) {
    auto finish = run_credence("--quiet train --resume '" + run + "'");
    ASSERT_EQ(finish.exit_code, 0) << finish.output;
  }
  auto reader = RunReader::open(run);
  ASSERT_TRUE(reader.ok()) << reader.status().message();
  EXPECT_EQ((*reader)->summary().status, RunStatus::kComplete);
  EXPECT_EQ((*reader)->summary().samples, 12000);
  EXPECT_EQ(kills, 20) << "the run ended before 20 kills; lengthen it";
  const std::string whole = path("never_killed.h5");
  ASSERT_EQ(run_credence(joined(args(whole, long_run))).exit_code, 0);
  Samples a = read_samples(whole), b = read_samples(run);
  ASSERT_EQ(a.rows.size(), b.rows.size());
  for (std::size_t i = 0; i < a.rows.size(); ++i) {
    ASSERT_TRUE(a.rows[i] == b.rows[i]) << "sample " << i << " differs from the run never killed";
  }
  std::printf("%d kills; kept samples seen after them grew to %lld before the final resume\n",
              kills, static_cast<long long>(last_count));
}

}  // namespace
}  // namespace credence
