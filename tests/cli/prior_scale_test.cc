// `credence train --prior-scale`: auto (the default) learns each block's precision in the
// samplers and records it (net text, checkpoint state); a number keeps the prior fixed;
// optimizers learn it by evidence updates and record it too; anything else is refused.
// docs/methods.md section 15.
#include <gtest/gtest.h>

#include "credence/ensemble.h"
#include "credence/net.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class PriorScale : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = (dir_->path() / "cold.csv").string();
    auto out = run_credence("synth --scenario cold-store --rows 300 --seed 4 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }
  static void TearDownTestSuite() { delete dir_; }

  // Trains with `extra` flags; returns the run file's path (empty on failure).
  static std::string train(const std::string& name, const std::string& extra,
                           bool sampler = true) {
    const std::string run = (dir_->path() / name).string();
    auto out = run_credence("--quiet train '" + data_ + "' --target fault_14d --id unit_id "
                            "--impute median --hidden 8 " +
                            std::string(sampler ? "--chains 2 --burn-in 40 --thin 2 --samples 5 " : "") +
                            "--out '" + run + "' " + extra);
    EXPECT_EQ(out.exit_code, 0) << out.output;
    return out.exit_code == 0 ? run : std::string();
  }

  static testing::TempDir* dir_;
  static std::string data_;
};

testing::TempDir* PriorScale::dir_ = nullptr;
std::string PriorScale::data_;

// The learned precisions of every chain's latest state, or none.
std::vector<std::vector<double>> stored_precisions(const std::string& run, NetSpec& spec) {
  auto reader = RunReader::open(run);
  EXPECT_TRUE(reader.ok());
  if (!reader.ok()) return {};
  auto parsed = parse_net_text((*reader)->header().net_text, "stored");
  EXPECT_TRUE(parsed.ok());
  if (parsed.ok()) spec = *parsed;
  auto states = (*reader)->chain_states();
  EXPECT_TRUE(states.ok());
  std::vector<std::vector<double>> out;
  for (const ChainState& state : *states) {
    auto it = state.state.doubles.find("model.prior_precision");
    if (it != state.state.doubles.end()) out.push_back(it->second);
  }
  return out;
}

TEST_F(PriorScale, AutoIsTheDefaultAndLearnsInSamplers) {
  const std::string run = train("auto.h5", "--method sgld");
  ASSERT_FALSE(run.empty());
  NetSpec spec;
  const auto precisions = stored_precisions(run, spec);
  EXPECT_TRUE(spec.prior.learn_scale);
  ASSERT_EQ(precisions.size(), 2u);
  ASSERT_EQ(precisions[0].size(), 4u);  // hidden weights, biases, output weights, biases
  // Drawn, so no longer the starting fan-in values; and the chains differ.
  EXPECT_NE(precisions[0], precisions[1]);
  for (double p : precisions[0]) EXPECT_GT(p, 0);
  // Every kept sample records its precisions (samples/prior_precision, 2L x S); a chain's
  // last sample's equal its final state's (no update follows the last kept step).
  auto reader = RunReader::open(run);
  ASSERT_TRUE(reader.ok());
  auto per_sample = (*reader)->prior_precisions();
  auto chains = (*reader)->sample_chains();
  ASSERT_TRUE(per_sample.ok() && chains.ok());
  ASSERT_EQ(per_sample->rows(), 4);
  ASSERT_EQ(per_sample->cols(), 10);
  EXPECT_TRUE(per_sample->allFinite());
  EXPECT_GT(per_sample->minCoeff(), 0);
  for (int c = 0; c < 2; ++c) {
    Eigen::Index last = -1;
    for (std::size_t j = 0; j < chains->size(); ++j) {
      if ((*chains)[j] == c) last = static_cast<Eigen::Index>(j);
    }
    ASSERT_GE(last, 0);
    for (Eigen::Index b = 0; b < 4; ++b) {
      EXPECT_EQ((*per_sample)(b, last),
                precisions[static_cast<std::size_t>(c)][static_cast<std::size_t>(b)]);
    }
  }
  auto inspect = run_credence("inspect '" + run + "'");
  EXPECT_NE(inspect.output.find("learned scale (scale=auto)"), std::string::npos)
      << inspect.output;
}

TEST_F(PriorScale, FixedScalesKeepFixedPrecisions) {
  NetSpec spec;
  const std::string fixed = train("fixed.h5", "--method sgld --prior-scale 2");
  ASSERT_FALSE(fixed.empty());
  EXPECT_TRUE(stored_precisions(fixed, spec).empty());
  EXPECT_FALSE(spec.prior.learn_scale);
  EXPECT_EQ(spec.prior.weight_scale, 2.0);
  auto reader = RunReader::open(fixed);
  ASSERT_TRUE(reader.ok());
  auto per_sample = (*reader)->prior_precisions();
  ASSERT_TRUE(per_sample.ok());
  EXPECT_EQ(per_sample->cols(), 10);
  EXPECT_TRUE(per_sample->array().isNaN().all());
  const std::string adam = train("adam.h5", "--method adam --epochs 2 --prior-scale 2", false);
  ASSERT_FALSE(adam.empty());
  EXPECT_TRUE(stored_precisions(adam, spec).empty());
}

TEST_F(PriorScale, OptimizersRecordTheirEvidencePrecisions) {
  // With auto, an optimizer's state holds its precisions (posterior/precision_evidence.h);
  // past the warm-up (500 steps) they move, never above the fixed start.
  NetSpec spec;
  const std::string adam = train("adam_auto.h5", "--method adam --steps 900 --patience 0", false);
  ASSERT_FALSE(adam.empty());
  const auto precisions = stored_precisions(adam, spec);
  EXPECT_TRUE(spec.prior.learn_scale);
  ASSERT_FALSE(precisions.empty());
  for (const std::vector<double>& chain : precisions) {
    ASSERT_EQ(chain.size(), 4u);
    // The fixed start (fan-in 20 and 8 for weights, 1 for biases) caps them; past the
    // warm-up at least one block has moved below it.
    const std::vector<double> start = {20, 1, 8, 1};
    bool moved = false;
    for (std::size_t b = 0; b < 4; ++b) {
      EXPECT_GT(chain[b], 0);
      EXPECT_LE(chain[b], start[b]);
      moved = moved || chain[b] < start[b];
    }
    EXPECT_TRUE(moved) << chain[0] << " " << chain[1] << " " << chain[2] << " " << chain[3];
  }
}

TEST_F(PriorScale, RefusesAnythingButAutoOrAPositiveNumber) {
  for (const char* bad : {"abc", "0", "nan", "2x"}) {
    auto out = run_credence("--quiet train '" + data_ + "' --target fault_14d --id unit_id "
                            "--impute median --prior-scale " + bad + " --out '" +
                            (dir_->path() / "bad.h5").string() + "'");
    EXPECT_EQ(out.exit_code, 2) << bad << ": " << out.output;
    EXPECT_NE(out.output.find("--prior-scale"), std::string::npos) << out.output;
  }
}

}  // namespace
}  // namespace credence
