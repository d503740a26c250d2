// The end-of-run verdict (run_verdict.h) end to end: train prints it with its numbers and
// diagnose adds it to its JSON. Data: credence synth's invented cold-store table.
#include <gtest/gtest.h>

#include <cstdlib>
#include <string>

#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class Verdict : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = path("cold.csv");
    auto out = run_credence("synth --scenario cold-store --rows 400 --seed 4 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }
  static std::string train(const std::string& out, const std::string& extra) {
    return "--quiet train '" + data_ + "' --target fault_14d --id unit_id --impute median "
           "--hidden 8 --batch 32 --chains 2 --seed 3 --out '" + out + "' " + extra;
  }

  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* Verdict::dir_ = nullptr;
std::string Verdict::data_;

TEST_F(Verdict, ShortSamplerRunIsNotMixedAndSaysHowFarToGo) {
  const std::string run = path("short.h5");
  auto out = run_credence(train(run, "--method sgld --burn-in 50 --thin 1 --samples 20"));
  ASSERT_EQ(out.exit_code, 0) << out.output;
  // 2 chains x 20 kept samples cannot reach bulk-ESS 200: not mixed, with a step count.
  EXPECT_NE(out.output.find("verdict: NOT done: "), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("mixing [FAILED]: NOT mixed: smallest bulk-ESS"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("more steps per chain"), std::string::npos) << out.output;

  // diagnose prints it too and puts it in its JSON.
  const std::string json = path("short.json");
  auto diagnose = run_credence("diagnose '" + run + "' --json '" + json + "'");
  ASSERT_EQ(diagnose.exit_code, 0) << diagnose.output;
  EXPECT_NE(diagnose.output.find("verdict: NOT done: "), std::string::npos) << diagnose.output;
  const std::string text = testing::read_text(json);
  EXPECT_NE(text.find("\"run_verdict\": {"), std::string::npos) << text;
  EXPECT_NE(text.find("\"name\": \"mixing\""), std::string::npos) << text;
  EXPECT_NE(text.find("\"more_steps_per_chain\": "), std::string::npos) << text;
}

TEST_F(Verdict, OptimizerUnderATinyPriorIsPinnedAndConstant) {
  // Prior scale 0.1 on 280 training rows: the weights collapse to a small fraction of the
  // prior's sd and every row gets the class balance. (At 1e-3 adam's own step jitter
  // exceeds the prior's sd, so only the constant check catches it.)
  auto out = run_credence(train(path("pinned.h5"), "--method adam --epochs 20 --prior-scale 0.1"));
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("pinned [FAILED]: layer "), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("constant [FAILED]: predictions are nearly the same"), std::string::npos)
      << out.output;
  // With the default prior the same network learns: neither check fails.
  auto fine = run_credence(train(path("fine.h5"), "--method adam --epochs 20"));
  ASSERT_EQ(fine.exit_code, 0) << fine.output;
  EXPECT_NE(fine.output.find("verdict: "), std::string::npos) << fine.output;
  EXPECT_EQ(fine.output.find("pinned [FAILED]"), std::string::npos) << fine.output;
  EXPECT_EQ(fine.output.find("constant [FAILED]"), std::string::npos) << fine.output;
  EXPECT_EQ(fine.output.find("collapsed [FAILED]"), std::string::npos) << fine.output;
}

TEST_F(Verdict, OptimizerOnLabelsUnrelatedToTheInputsCollapses) {
  // 100 rows whose labels are coin flips independent of the 6 standard-normal inputs
  // (numpy's default_rng(5), written by pandas): the evidence updates of the default
  // learned prior hold two layers at their cap with weights at 0.036 and 0.009 of the
  // fixed prior's expectation. Seed-specific, by measurement: of four such tables at the
  // default chain seed, two collapse; with --seed 3 this one keeps an early iterate
  // (early stopping on noisy validation rows) and passes. Deterministic for this seed.
  const std::string noise = path("noise.csv");
  const std::string make = std::string("'") + CREDENCE_PYTHON +
      "' -c \"import sys, numpy as np, pandas as pd; r = np.random.default_rng(5); "
      "x = r.normal(size=(100, 6)); y = r.integers(0, 2, 100); "
      "d = pd.DataFrame(x, columns=[f'x{i}' for i in range(6)]); "
      "d['label'] = np.where(y == 1, 'yes', 'no'); d.to_csv(sys.argv[1], index=False)\" '" +
      noise + "'";
  ASSERT_EQ(std::system(make.c_str()), 0) << "numpy and pandas (Debian's python3-numpy, -pandas)";
  auto out = run_credence("--quiet train '" + noise + "' --target label --method adam "
                          "--out '" + path("noise.h5") + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("collapsed [FAILED]: layer "), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("is at its cap"), std::string::npos) << out.output;
}

}  // namespace
}  // namespace credence
