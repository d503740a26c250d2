// The kernel Stein discrepancy of real run files written by `credence train`: diagnose's
// JSON against an independent numpy rebuild of every full-data score and of the IMQ
// discrepancy (tests/tools/numpy_run_ksd.py, h5py and numpy only, 1e-6 relative), on a
// hidden-4 tanh net with the learned prior and on a logistic net with a fixed prior under
// likelihood tempering; that shifted draws and fewer draws of the same chains score worse;
// the report's table; and the notes that replace it for an optimizer, a missing table and the work
// cap. Data: an invented cold-store table from `credence synth`.
#include "credence/run_stein.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>

#include "python_reference.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

class RunSteinFile : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = path("cold.csv");
    auto out =
        run_credence("synth --scenario cold-store --rows 300 --seed 6 --out '" + data_ + "'");
    ASSERT_EQ(out.exit_code, 0) << out.output;
    // A sampler run with the default learned prior: hidden 4 tanh, 2 chains x 150 kept.
    out = train(path("tanh.h5"),
                "--hidden 4 --activation tanh --method sgld --chains 2 "
                "--burn-in 400 --thin 4 --samples 150");
    ASSERT_EQ(out.exit_code, 0) << out.output;
  }
  static void TearDownTestSuite() { delete dir_; }

  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }

  static testing::CommandOutput train(const std::string& run, const std::string& extra) {
    return run_credence("--quiet train '" + data_ +
                        "' --target fault_14d --id unit_id "
                        "--impute median --batch 32 --seed 3 --out '" +
                        run + "' " + extra);
  }

  static std::string read_text(const std::string& file) {
    std::ifstream in(file);
    std::stringstream text;
    text << in.rdbuf();
    return text.str();
  }

  // diagnose --json, then numpy_run_ksd.py on the run, the table and that JSON.
  static testing::PythonLines check_against_numpy(const std::string& run,
                                                  const std::string& flags) {
    const std::string json = run + ".json";
    auto out = run_credence("diagnose '" + run + "' --json '" + json + "' " + flags);
    EXPECT_EQ(out.exit_code, 0) << out.output;
    return testing::run_python_lines(std::string("'") + CREDENCE_PYTHON + "' '" +
                                     CREDENCE_SOURCE_DIR + "/tests/tools/numpy_run_ksd.py' '" +
                                     run + "' '" + data_ + "' '" + json + "' 1e-6");
  }

  static testing::TempDir* dir_;
  static std::string data_;
};
testing::TempDir* RunSteinFile::dir_ = nullptr;
std::string RunSteinFile::data_;

TEST_F(RunSteinFile, LearnedPriorJsonMatchesNumpyPerChainAndPooled) {
  // Cap 60 of 150 kept: the even spacing is part of what numpy rebuilds.
  const testing::PythonLines out = check_against_numpy(path("tanh.h5"), "--ksd-draws 60");
  EXPECT_TRUE(out.ok) << out.output;
  EXPECT_NE(out.output.find("chain1 ksd"), std::string::npos) << out.output;
}

TEST_F(RunSteinFile, FixedPriorLogisticNetUnderLikelihoodTemperingMatchesNumpy) {
  const std::string run = path("linear.h5");
  auto trained = train(run, "--net '" + std::string(CREDENCE_SOURCE_DIR) +
                                "/nets/linear.net' --method sghmc --chains 2 --burn-in 300 "
                                "--samples 80 --temperature 0.5 --tempering likelihood");
  ASSERT_EQ(trained.exit_code, 0) << trained.output;
  const testing::PythonLines out = check_against_numpy(run, "");
  EXPECT_TRUE(out.ok) << out.output;
}

TEST_F(RunSteinFile, TextReportsEveryChainAndTheTarget) {
  auto out = run_credence("diagnose '" + path("tanh.h5") + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("kernel Stein discrepancy: "), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("chain 1 "), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("theta-marginal"), std::string::npos) << out.output;
}

TEST_F(RunSteinFile, ReportShowsTheTableUnderMixingDiagnostics) {
  const std::string page = path("tanh.html");
  auto out = run_credence("--quiet report '" + path("tanh.h5") + "' '" + data_ + "' --out '" +
                          page + "' --bootstrap 0");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  const std::string html = read_text(page);
  const auto mixing = html.find("Mixing diagnostics");
  const auto stein = html.find("kernel Stein discrepancy of the kept draws");
  ASSERT_NE(mixing, std::string::npos);
  ASSERT_NE(stein, std::string::npos) << "no discrepancy table in the report";
  EXPECT_GT(stein, mixing);
  EXPECT_NE(html.find("all chains", mixing), std::string::npos);
}

TEST_F(RunSteinFile, ShiftedDrawsScoreWorse) {
  // "Measuring Sample Quality with Kernels" (ICML 2017): the discrepancy grows when the
  // draws move away from the target. Every weight shifted by 0.5 (the prior's weight sd is
  // 1/sqrt(fan-in) before learning) must score worse than the chains' own draws.
  auto reader = RunReader::open(path("tanh.h5"));
  ASSERT_TRUE(reader.ok()) << reader.status().message();
  Result<PosteriorScore> score = posterior_score_of_run(**reader, data_);
  ASSERT_TRUE(score.ok()) << score.status().message();
  const Eigen::MatrixXd draws = (*reader)->samples()->cast<double>();
  const Eigen::MatrixXd shifted = draws.array() + 0.5;
  auto ksd_of = [&](const Eigen::MatrixXd& x) {
    Eigen::MatrixXd s(x.rows(), x.cols());
    Eigen::VectorXd column;
    for (Index i = 0; i < x.cols(); ++i) {
      EXPECT_TRUE(score->score(x.col(i), column).ok());
      s.col(i) = column;
    }
    return kernel_stein_discrepancy(x, s).value().ksd;
  };
  const double own = ksd_of(draws), moved = ksd_of(shifted);
  EXPECT_GT(moved, 2 * own) << "own " << own << ", shifted " << moved;
}

TEST_F(RunSteinFile, MoreOfTheSameChainsScoresLower) {
  // The V-statistic's self-pairs weigh 1/n, so using more draws of a chain that samples
  // the target lowers it (methods.md section 11's test values show the same for exact
  // Gaussian draws).
  auto reader = RunReader::open(path("tanh.h5"));
  ASSERT_TRUE(reader.ok());
  SteinSettings few, many;
  few.max_draws_per_chain = 15;
  many.max_draws_per_chain = 150;
  Result<credence::RunStein> a = run_stein_discrepancy(**reader, few);
  Result<credence::RunStein> b = run_stein_discrepancy(**reader, many);
  ASSERT_TRUE(a.ok() && b.ok());
  ASSERT_TRUE(a->computed && b->computed) << a->note << b->note;
  EXPECT_EQ(a->pooled.draws, 30);
  EXPECT_EQ(b->pooled.draws, 300);
  EXPECT_LT(b->pooled.ksd, a->pooled.ksd);
  for (std::size_t c = 0; c < 2; ++c) EXPECT_LT(b->chains[c].ksd.ksd, a->chains[c].ksd.ksd);
}

TEST_F(RunSteinFile, OptimizerMissingTableAndWorkCapGetANoteAndExitZero) {
  const std::string opt = path("sgd.h5");
  auto trained = train(opt, "--hidden 4 --method sgd --steps 200");
  ASSERT_EQ(trained.exit_code, 0) << trained.output;
  auto out = run_credence("diagnose '" + opt + "' --json '" + opt + ".json'");
  EXPECT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("sgd is an optimizer"), std::string::npos) << out.output;
  EXPECT_NE(read_text(opt + ".json").find("\"computed\": false"), std::string::npos);

  // A run whose recorded table is gone: a note naming --data; the right --data computes it.
  const std::string copy = path("copy.csv");
  std::filesystem::copy_file(data_, copy);
  const std::string run = path("moved.h5");
  trained = run_credence("--quiet train '" + copy +
                         "' --target fault_14d --id unit_id --impute "
                         "median --hidden 2 --method sgld --chains 1 --samples 20 --burn-in 50 "
                         "--seed 3 --out '" +
                         run + "'");
  ASSERT_EQ(trained.exit_code, 0) << trained.output;
  std::filesystem::remove(copy);
  out = run_credence("diagnose '" + run + "'");
  EXPECT_EQ(out.exit_code, 0) << out.output;
  EXPECT_NE(out.output.find("cannot be read"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("--data"), std::string::npos) << out.output;
  out = run_credence("diagnose '" + run + "' --data '" + data_ + "'");
  EXPECT_EQ(out.exit_code, 0) << out.output;
  EXPECT_EQ(out.output.find("cannot be read"), std::string::npos) << out.output;
  EXPECT_NE(out.output.find("per chain: chain 0"), std::string::npos) << out.output;

  // --data naming another table is refused (exit 2) with what to give.
  const std::string other = path("other.csv");
  ASSERT_EQ(run_credence("synth --scenario cold-store --rows 50 --seed 9 --out '" + other + "'")
                .exit_code,
            0);
  out = run_credence("diagnose '" + run + "' --data '" + other + "'");
  EXPECT_EQ(out.exit_code, 2) << out.output;
  EXPECT_NE(out.output.find("the table the run was trained on"), std::string::npos) << out.output;

  // The work cap: a library caller's tiny limit skips with the numbers.
  auto reader = RunReader::open(path("tanh.h5"));
  ASSERT_TRUE(reader.ok());
  SteinSettings tight;
  tight.max_work = 1000;
  Result<credence::RunStein> capped = run_stein_discrepancy(**reader, tight);
  ASSERT_TRUE(capped.ok());
  EXPECT_FALSE(capped->computed);
  EXPECT_NE(capped->note.find("exceeds the limit"), std::string::npos) << capped->note;
}

}  // namespace
}  // namespace credence
