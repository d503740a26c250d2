// santa and santa-opt through the command line: train (with the learned prior scale, the
// default --prior-scale auto), their own flag and the refusal of flags they do not read,
// compare and sweep, and a run file whose santa state has the wrong size (refused when
// opened, before a resume could trust it).
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>

#include "ensemble/test_runs.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class SantaCli : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = path("pumps.csv");
    auto synth = run_credence("--quiet synth --scenario pump-wear --rows 300 --out '" + data_ + "'");
    ASSERT_EQ(synth.exit_code, 0) << synth.output;
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }
  static std::string train(const std::string& method, const std::string& extra,
                           const std::string& out) {
    return "--quiet train '" + data_ + "' --target condition --id pump_id --impute median "
           "--hidden 4 --chains 2 --method " + method + " " + extra + " --out '" + path(out) + "'";
  }
  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* SantaCli::dir_ = nullptr;
std::string SantaCli::data_;

TEST_F(SantaCli, TrainsWithTheLearnedPriorScaleAndDiagnoses) {
  auto sampler = run_credence(train("santa", "--burn-in 200 --thin 4 --samples 20", "santa.h5"));
  ASSERT_EQ(sampler.exit_code, 0) << sampler.output;
  auto diagnose = run_credence("diagnose '" + path("santa.h5") + "'");
  EXPECT_EQ(diagnose.exit_code, 0) << diagnose.output;
  EXPECT_NE(diagnose.output.find("santa"), std::string::npos) << diagnose.output;
  // The Gibbs-updated prior precisions travel with the chain (docs/run-file.md).
  int code = 0;
  const std::string h5 = testing::run_python(
      "-c \"import h5py,sys; f=h5py.File(sys.argv[1]); s=f['checkpoint/slot_0/state'];"
      " print(sorted(s['floats']), s['doubles/model.prior_precision'].shape)\" '" +
          path("santa.h5") + "'",
      code);
  EXPECT_EQ(code, 0) << h5;
  EXPECT_NE(h5.find("'alpha', 'preconditioner', 'u', 'v'"), std::string::npos) << h5;
  auto optimizer = run_credence(train("santa-opt", "--steps 400 --exploration 0.25", "opt.h5"));
  EXPECT_EQ(optimizer.exit_code, 0) << optimizer.output;
}

TEST_F(SantaCli, RefusesFlagsItDoesNotRead) {
  struct Case {
    std::string method, flag, says;
  };
  for (const Case& c : {Case{"santa", "--exploration 0.3", "--exploration is the share"},
                        Case{"santa-opt", "--schedule cyclical", "anneal their temperature"},
                        Case{"santa", "--schedule cyclical", "anneal their temperature"},
                        Case{"santa-opt", "--temperature 0.5", "is an optimizer"},
                        Case{"santa", "--friction 0.2", "--friction is sghmc's"},
                        Case{"santa-opt", "--thermostat-gain 0", "santa sampler's thermostat"},
                        Case{"sghmc", "--thermostat-gain 0", "santa sampler's thermostat"}}) {
    auto r = run_credence(train(c.method, c.flag, "refused.h5"));
    EXPECT_EQ(r.exit_code, 2) << c.method << " " << c.flag << ": " << r.output;
    EXPECT_NE(r.output.find(c.says), std::string::npos) << r.output;
    EXPECT_FALSE(std::filesystem::exists(path("refused.h5")));
  }
  auto gain = run_credence(train("santa", "--thermostat-gain -1", "refused.h5"));
  EXPECT_EQ(gain.exit_code, 2) << gain.output;
  EXPECT_NE(gain.output.find("--thermostat-gain -1 is out of range"), std::string::npos)
      << gain.output;
  auto range = run_credence(train("santa-opt", "--exploration 1.5", "refused.h5"));
  EXPECT_EQ(range.exit_code, 2) << range.output;
  EXPECT_NE(range.output.find("--exploration 1.5 is out of range"), std::string::npos)
      << range.output;
}

TEST_F(SantaCli, JoinsCompareAndSweep) {
  auto compare = run_credence("--quiet compare '" + data_ +
                              "' --target condition --id pump_id --impute median --methods "
                              "santa,santa-opt,sghmc --epochs 3 --chains 2 --samples 10 --hidden 4 "
                              "--bootstrap 0 --out '" + path("cmp") + "'");
  ASSERT_EQ(compare.exit_code, 0) << compare.output;
  const std::string summary = testing::read_text(path("cmp") + "/summary.txt");
  EXPECT_NE(summary.find("santa-opt"), std::string::npos) << summary;
  auto sweep = run_credence("--quiet sweep '" + data_ +
                            "' --target condition --id pump_id --impute median --methods santa "
                            "--step-sizes 0.001,0.01 --epochs 3 --chains 2 --samples 10 --hidden 4 "
                            "--bootstrap 0 --out '" + path("sweep") + "'");
  ASSERT_EQ(sweep.exit_code, 0) << sweep.output;
  EXPECT_NE(testing::read_text(path("sweep") + "/sweep.txt").find("santa"), std::string::npos);
}

TEST_F(SantaCli, AWrongStateSizeIsRefusedWhenTheFileOpens) {
  auto trained = run_credence(train("santa", "--burn-in 20 --thin 2 --samples 5", "damaged.h5"));
  ASSERT_EQ(trained.exit_code, 0) << trained.output;
  // h5py: replace slot 0's 'u' (C, P) by a (C, P - 1) array in both slots.
  int code = 0;
  const std::string edit = testing::run_python(
      "-c \"import h5py,sys\nf=h5py.File(sys.argv[1],'r+')\nfor s in ('slot_0','slot_1'):\n"
      "  g=f['checkpoint/'+s+'/state/floats']; u=g['u'][:, :-1]; del g['u']; g['u']=u\n\" '" +
          path("damaged.h5") + "'",
      code);
  ASSERT_EQ(code, 0) << edit;
  auto inspect = run_credence("inspect '" + path("damaged.h5") + "'");
  EXPECT_EQ(inspect.exit_code, 2) << inspect.output;
  EXPECT_NE(inspect.output.find("checkpoint/slot_0/state/floats/u holds"), std::string::npos)
      << inspect.output;
  auto resume = run_credence("--quiet train --resume '" + path("damaged.h5") + "'");
  EXPECT_EQ(resume.exit_code, 2) << resume.output;
}

}  // namespace
}  // namespace credence
