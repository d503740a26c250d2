// run_train called as a library (train.h), without the CLI: the progress hook sees the
// run from start to end, and the stop flag interrupts it into a run file that resumes to
// exactly the samples of an uninterrupted run (the property tests/cli/train_test.cc
// checks through the command with SIGINT). Data: an invented table from synth.h.
#include <gtest/gtest.h>

#include <atomic>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "credence/synth.h"
#include "credence/train.h"
#include "testing/kept_samples.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

class TrainHooksTest : public ::testing::Test {
 protected:
  void SetUp() override {
    data_ = (dir_.path() / "cold.csv").string();
    SynthOptions synth;
    synth.rows = 300;
    synth.seed = 5;
    ASSERT_TRUE(write_synth_table(synth, data_, (dir_.path() / "truth.csv").string()).ok());
  }

  TrainRequest request(const std::string& name) const {
    TrainRequest r;
    r.data_path = data_;
    r.data.schema.target = "fault_14d";
    r.data.schema.id = {"unit_id"};
    r.data.schema.impute = ImputeMethod::kMedian;
    r.hidden = {8};
    r.settings.sampler.method = Method::kSghmc;
    r.settings.chains.chains = 2;
    r.settings.chains.burn_in = 100;
    r.settings.chains.thin = 5;
    r.settings.chains.samples = 20;
    r.settings.batches.batch_rows = 32;
    r.settings.chains.seed = 3;
    r.settings.flush_seconds = 0.05;
    r.out_path = (dir_.path() / name).string();
    return r;
  }

  testing::TempDir dir_;
  std::string data_;
};

TEST_F(TrainHooksTest, ProgressRunsFromTheStartToEveryStepAndSample) {
  TrainRequest r = request("progress.h5");
  std::vector<TrainProgress> seen;
  r.hooks.progress = [&seen](const TrainProgress& p) { seen.push_back(p); };
  std::optional<RunVerdict> verdict;
  r.verdict = &verdict;
  ASSERT_TRUE(run_train(r).ok());
  ASSERT_GE(seen.size(), 2u);
  const std::int64_t steps = 2 * (100 + 5 * 20), samples = 2 * 20;
  EXPECT_EQ(seen.front().label, "train sghmc");
  EXPECT_EQ(seen.front().steps_done, 0);
  EXPECT_EQ(seen.front().kept, 0);
  EXPECT_FALSE(seen.front().finished);
  for (const TrainProgress& p : seen) {
    EXPECT_EQ(p.total_steps, steps);
    EXPECT_EQ(p.total_samples, samples);
  }
  for (std::size_t i = 0; i + 1 < seen.size(); ++i) EXPECT_FALSE(seen[i].finished) << i;
  EXPECT_TRUE(seen.back().finished);
  EXPECT_EQ(seen.back().steps_done, steps);
  EXPECT_EQ(seen.back().kept, samples);
  EXPECT_TRUE(verdict.has_value());  // judged, and handed over instead of printed
}

// A stop flag set before the first step: every chain ends at step 0, the run file is
// marked interrupted with no samples, and resuming gives the uninterrupted run's samples.
TEST_F(TrainHooksTest, StopFlagInterruptsAndResumeCompletesBitForBit) {
  ASSERT_TRUE(run_train(request("whole.h5")).ok());

  TrainRequest cut = request("cut.h5");
  std::atomic<bool> stop{true};
  cut.hooks.stop = &stop;
  std::optional<RunVerdict> verdict;
  cut.verdict = &verdict;
  const Status interrupted = run_train(cut);
  EXPECT_EQ(interrupted.code(), StatusCode::kInterrupted) << interrupted.message();
  EXPECT_FALSE(verdict.has_value());  // no verdict for a run that did not end well
  {
    auto reader = RunReader::open(cut.out_path);
    ASSERT_TRUE(reader.ok()) << reader.status().message();
    EXPECT_EQ((*reader)->summary().status, RunStatus::kInterrupted);
    EXPECT_EQ((*reader)->summary().samples, 0);
  }

  TrainRequest resume;
  resume.resume_path = cut.out_path;
  const Status resumed = run_train(resume);
  ASSERT_TRUE(resumed.ok()) << resumed.message();
  const testing::KeptSamples a = testing::read_kept_samples((dir_.path() / "whole.h5").string());
  const testing::KeptSamples b = testing::read_kept_samples(cut.out_path);
  ASSERT_EQ(a.rows.size(), 40u);
  ASSERT_EQ(b.rows.size(), a.rows.size());
  for (std::size_t i = 0; i < a.rows.size(); ++i) {
    ASSERT_TRUE(a.rows[i] == b.rows[i]) << "sample " << i << " differs";
  }
}

}  // namespace
}  // namespace credence
