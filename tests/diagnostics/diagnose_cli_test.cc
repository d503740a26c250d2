// `credence diagnose` end to end on real run files written by `credence train`: a
// four-chain run checked against an independent numpy implementation of the 2021 paper's
// R-hat and ESS applied to the stored summaries read with h5py (tests/tools/numpy_rhat.py),
// a one-chain run, a relativistic run (speed ratio note) and bad input. Data: an invented
// cold-store table from `credence synth`.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "python_reference.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class Diagnose : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = path("cold.csv");
    auto out = run_credence("synth --scenario cold-store --rows 400 --seed 4 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }
  static void TearDownTestSuite() { delete dir_; }

  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }

  // A small, fast run: hidden width 8, batch 32.
  static testing::CommandOutput train(const std::string& run, const std::string& extra) {
    return run_credence("--quiet train '" + data_ + "' --target fault_14d --id unit_id --impute median "
                        "--batch 32 --hidden 8 --seed 3 --out '" + run + "' " + extra);
  }

  // Trains `name` with `flags`, then runs `diagnose RUN <diagnose_flags>`; its output.
  static testing::CommandOutput train_and_diagnose(const std::string& name, const std::string& flags,
                                                   const std::string& diagnose_flags) {
    const std::string run = path(name);
    auto trained = train(run, flags);
    EXPECT_EQ(trained.exit_code, 0) << trained.output;
    return run_credence("diagnose '" + run + "' " + diagnose_flags);
  }

  static std::string read_text(const std::string& file) {
    std::ifstream in(file);
    std::stringstream text;
    text << in.rdbuf();
    return text.str();
  }

  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* Diagnose::dir_ = nullptr;
std::string Diagnose::data_;

TEST_F(Diagnose, FourChainJsonMatchesNumpyOnStoredSummaries) {
  const std::string run = path("four.h5");
  auto trained = train(run, "--method sgld --chains 4 --burn-in 100 --thin 2 --samples 120");
  ASSERT_EQ(trained.exit_code, 0) << trained.output;
  const std::string json = path("four.json");
  auto out = run_credence("diagnose '" + run + "' --json '" + json + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;  // flags are information: exit 0 regardless
  EXPECT_NE(out.output.find("permuted"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("verdict:"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("probe probabilities"), std::string::npos) << out.output;

  // Reference: numpy_rhat.py on the summaries read with h5py (docs/run-file.md layout);
  // 1e-8 relative on R-hat (bulk, folded), bulk-ESS and tail-ESS.
  const testing::PythonLines ref = testing::run_numpy_rhat("run", run);
  ASSERT_TRUE(ref.ok) << ref.output;
  const testing::PythonLines ours = testing::run_numpy_rhat("json", json);
  ASSERT_TRUE(ours.ok) << ours.output << "\n" << read_text(json);
  ASSERT_EQ(ours.values.size(), ref.values.size()) << ours.output << "\n---\n" << ref.output;
  int compared = 0;
  for (const auto& [name, expected] : ref.values) {
    ASSERT_TRUE(ours.values.count(name)) << name;
    const std::vector<double>& actual = ours.values.at(name);
    ASSERT_EQ(actual.size(), expected.size()) << name;
    for (std::size_t k = 0; k < expected.size(); ++k) {
      if (std::isnan(expected[k])) {
        EXPECT_TRUE(std::isnan(actual[k])) << name << " value " << k;
      } else {
        // JSON prints the shortest round-trip form of each double.
        EXPECT_NEAR(actual[k], expected[k], 1e-8 * std::abs(expected[k])) << name << " value " << k;
        ++compared;
      }
    }
  }
  EXPECT_GT(compared, 20);

  const std::string report = read_text(json);
  for (const char* key : {"\"rhat\"", "\"ess_per_second\"", "\"ess_per_1000_grads\"", "\"flagged\"",
                          "\"verdict\"", "\"thin\": 2", "\"chains\": 4", "\"group\": \"potential\""}) {
    EXPECT_NE(report.find(key), std::string::npos) << key << " missing from\n" << report;
  }

  auto every = run_credence("diagnose '" + run + "' --all");
  EXPECT_EQ(every.exit_code, 0) << every.output;
  EXPECT_NE(every.output.find("probe_prob[0]"), std::string::npos) << every.output;
  EXPECT_NE(every.output.find("projection[0]"), std::string::npos) << every.output;
}

TEST_F(Diagnose, OneChainReportsEssAndSaysRhatNeedsTwoChains) {
  const std::string json = path("one.json");
  auto out = train_and_diagnose("one.h5", "--method sgld --chains 1 --burn-in 50 --samples 120",
                                "--json '" + json + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("R-hat needs two or more chains"), std::string::npos) << out.output;
  const testing::PythonLines ours = testing::run_numpy_rhat("json", json);
  ASSERT_TRUE(ours.ok) << ours.output;
  const std::vector<double>& log_lik = ours.values.at("probe_log_lik");
  EXPECT_TRUE(std::isnan(log_lik[0]) && std::isnan(log_lik[1])) << "no R-hat with one chain";
  EXPECT_GT(log_lik[2], 0) << "bulk-ESS is still reported";
  EXPECT_NE(read_text(json).find("\"rhat_available\": false"), std::string::npos);
}

TEST_F(Diagnose, RelativisticRunReportsSpeedRatio) {
  auto out = train_and_diagnose("rel.h5", "--method rsghmc --chains 2 --burn-in 50 --samples 60", "");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("mean |v|/c per chain"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("mass"), std::string::npos) << out.output;
}

TEST_F(Diagnose, LearnedPriorPrecisionsMatchNumpyOnTheStoredSamples) {
  // The default prior learns its scale; diagnose summarises each block's precision over
  // the kept samples. Reference: samples/prior_precision read with h5py and summarised
  // with numpy.mean and numpy.quantile (docs/run-file.md layout), 1e-9 relative.
  const std::string json = path("prior.json");
  auto out = train_and_diagnose("prior.h5", "--method sgld --chains 2 --burn-in 100 --thin 2 --samples 60",
                                "--json '" + json + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("learned prior precisions"), std::string::npos) << out.output;
  const std::string script = path("prior_check.py");
  std::ofstream(script)
      << "import json, sys, h5py, numpy as np\n"
         "f = h5py.File(sys.argv[1], 'r')\n"
         "slot = f['checkpoint/slot_%d' % int(f['run/active_slot'][0])]\n"
         "s = int(slot['committed_samples'][0])\n"
         "lam = f['samples/prior_precision'][:s]\n"
         "ours = json.load(open(sys.argv[2]))['prior_precision']\n"
         "assert len(ours) == lam.shape[1], (len(ours), lam.shape)\n"
         "for k, block in enumerate(ours):\n"
         "    assert block['layer'] == k // 2 + 1 and block['block'] == ('biases' if k % 2 else 'weights'), block\n"
         "    col = lam[:, k]\n"
         "    assert block['samples'] == len(col), block\n"
         "    for key, want in (('mean', np.mean(col)), ('q05', np.quantile(col, 0.05)),\n"
         "                      ('q95', np.quantile(col, 0.95)), ('sd_at_mean', 1 / np.sqrt(np.mean(col)))):\n"
         "        assert abs(block[key] - want) <= 1e-9 * abs(want), (k, key, block[key], want)\n"
         "    assert block['q05'] < block['q95'], block\n"
         "print('ok', len(ours))\n";
  const std::string log = path("prior_check.txt");
  const int status = std::system((std::string(CREDENCE_PYTHON) + " '" + script + "' '" + path("prior.h5") +
                                  "' '" + json + "' > '" + log + "' 2>&1").c_str());
  EXPECT_EQ(status, 0) << read_text(log) << "\n" << read_text(json);

  // A fixed prior has nothing learned: JSON null and one plain line.
  const std::string fixed_json = path("fixed.json");
  auto fixed = train_and_diagnose("fixed.h5", "--method sgld --chains 2 --burn-in 50 --samples 20 --prior-scale 1",
                                  "--json '" + fixed_json + "'");
  ASSERT_EQ(fixed.exit_code, 0) << fixed.output;
  EXPECT_NE(fixed.output.find("learned prior: none"), std::string::npos) << fixed.output;
  EXPECT_NE(read_text(fixed_json).find("\"prior_precision\": null"), std::string::npos);
}

TEST_F(Diagnose, LinearPathBlocksAreNamed) {
  // With --linear-path on (this fixture's one hidden layer) the path's blocks come after
  // the output layer, so they are layer 3 (nets/README.md); the table and the JSON say so.
  const std::string json = path("linear.json");
  auto out = train_and_diagnose("linear.h5", "--method sgld --chains 2 --burn-in 50 --samples 20 "
                                "--linear-path on", "--json '" + json + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("\n3 linear  weights"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("\n3 linear  biases"), std::string::npos) << out.output;
  EXPECT_EQ(out.output.find("2 linear"), std::string::npos) << out.output;
  // The JSON block objects list "layer", then "block", then "linear_path".
  const std::string text = read_text(json);
  auto flag_after = [&text](const std::string& layer) {
    const std::size_t at = text.find("\"layer\": " + layer + ",");
    const std::size_t key = text.find("\"linear_path\": ", at);
    return at == std::string::npos || key == std::string::npos
               ? std::string("missing")
               : text.substr(key + 15, text.compare(key + 15, 4, "true") == 0 ? 4 : 5);
  };
  EXPECT_EQ(flag_after("3"), "true") << text;
  EXPECT_EQ(flag_after("2"), "false") << text;
  auto inspect = run_credence("inspect '" + path("linear.h5") + "'");
  ASSERT_EQ(inspect.exit_code, 0) << inspect.output;
  EXPECT_NE(inspect.output.find("plus a linear path"), std::string::npos) << inspect.output;
}

TEST_F(Diagnose, BadInputExitsTwoAndWritesNothing) {
  const std::string json = path("missing.json");
  auto missing = run_credence("diagnose '" + path("no_such_run.h5") + "' --json '" + json + "'");
  EXPECT_EQ(missing.exit_code, 2) << missing.output;
  EXPECT_NE(missing.output.find("no_such_run.h5"), std::string::npos) << missing.output;
  EXPECT_FALSE(std::filesystem::exists(json));

  std::ofstream(path("not_a_run.h5")) << "plain text, not HDF5\n";
  auto garbage = run_credence("diagnose '" + path("not_a_run.h5") + "'");
  EXPECT_EQ(garbage.exit_code, 2) << garbage.output;
}

}  // namespace
}  // namespace credence
