// run_compare_job and run_sweep_job called as a library (compare.h, sweep.h), without the
// CLI: the request is checked as the command checks its flags, the budget line reaches
// its hook once, every training's progress reaches the one progress hook, a set stop
// flag stops the whole comparison with no summary written, and a finished comparison's
// summary.csv holds one row per method (read back with Python's csv module, RFC 4180).
// Data: an invented table from synth.h.
#include <gtest/gtest.h>

#include <sys/wait.h>

#include <atomic>
#include <cstdlib>
#include <filesystem>
#include <set>
#include <string>
#include <vector>

#include "credence/compare.h"
#include "credence/sweep.h"
#include "credence/synth.h"
#include "testing/read_text.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

int run_python(const std::string& args, const std::string& log) {
  const int status = std::system(
      (std::string(CREDENCE_PYTHON) + " " + args + " > '" + log + "' 2>&1").c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

class CompareJobTest : public ::testing::Test {
 protected:
  void SetUp() override {
    data_ = (dir_.path() / "cold.csv").string();
    SynthOptions synth;
    synth.rows = 300;
    synth.seed = 5;
    ASSERT_TRUE(write_synth_table(synth, data_, (dir_.path() / "truth.csv").string()).ok());
  }

  CompareRequest request(const std::string& out) const {
    CompareRequest r;
    r.data_path = data_;
    r.data.schema.target = "fault_14d";
    r.data.schema.id = {"unit_id"};
    r.data.schema.impute = ImputeMethod::kMedian;
    r.epochs = 3;
    r.chains = 2;
    r.samples = 5;
    r.samples_given = true;
    r.bootstrap = 20;
    r.out_dir = (dir_.path() / out).string();
    return r;
  }

  testing::TempDir dir_;
  std::string data_;
};

TEST_F(CompareJobTest, RefusesWhatTheCommandRefuses) {
  CompareRequest r = request("refused");
  Result<std::vector<Method>> full_data = complete_compare_request(r, {.methods = "adam,hmc"});
  ASSERT_EQ(full_data.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(full_data.status().message().find("hmc uses the full data per step"),
            std::string::npos);
  r.samples_given = true;
  Result<std::vector<Method>> unread = complete_compare_request(r, {.methods = "adam"});
  ASSERT_EQ(unread.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(unread.status().message().find("--samples is not read"), std::string::npos);
  Result<std::vector<Method>> widths =
      complete_compare_request(r, {.methods = "sghmc", .hidden = "8,x"});
  EXPECT_EQ(widths.status().code(), StatusCode::kInvalidInput);
  Result<std::vector<Method>> fine = complete_compare_request(r, {.methods = "adam,sghmc", .hidden = "8"});
  ASSERT_TRUE(fine.ok()) << fine.status().message();
  EXPECT_EQ(*fine, (std::vector<Method>{Method::kAdam, Method::kSghmc}));
  EXPECT_EQ(r.hidden, std::vector<Index>{8});
  EXPECT_EQ(parse_step_sizes("1e-3:1e-1:3").value().size(), 3u);
  EXPECT_EQ(parse_step_sizes("0.1,-1").status().code(), StatusCode::kInvalidInput);
}

TEST_F(CompareJobTest, ASetStopFlagStopsTheComparisonWithNoSummary) {
  CompareRequest r = request("stopped");
  ASSERT_TRUE(complete_compare_request(r, {.methods = "adam,sghmc", .hidden = "8"}).ok());
  for (Method m : {Method::kAdam, Method::kSghmc}) r.entries.push_back(compare_entry(m));
  std::atomic<bool> stop{true};
  r.hooks.stop = &stop;
  Result<CompareSummary> summary = run_compare_job(r);
  EXPECT_EQ(summary.status().code(), StatusCode::kInterrupted);
  EXPECT_FALSE(std::filesystem::exists(std::filesystem::path(r.out_dir) / "summary.csv"));
}

TEST_F(CompareJobTest, HooksSeeEveryTrainingAndTheSummaryHasOneRowPerMethod) {
  CompareRequest r = request("done");
  ASSERT_TRUE(complete_compare_request(r, {.methods = "adam,sghmc", .hidden = "8"}).ok());
  for (Method m : {Method::kAdam, Method::kSghmc}) r.entries.push_back(compare_entry(m));
  std::vector<std::string> budget_lines;
  r.on_budget = [&](const std::string& line) { budget_lines.push_back(line); };
  std::set<std::string> labels;
  int finished = 0;
  r.hooks.progress = [&](const TrainProgress& p) {
    labels.insert(p.label);
    finished += p.finished ? 1 : 0;
  };
  Result<CompareSummary> summary = run_compare_job(r);
  ASSERT_TRUE(summary.ok()) << summary.status().message();
  ASSERT_EQ(budget_lines.size(), 1u);
  EXPECT_EQ(budget_lines[0].rfind("every method: ", 0), 0u) << budget_lines[0];
  EXPECT_EQ(finished, 2) << "one finished call per training";
  EXPECT_EQ(labels.size(), 2u);
  ASSERT_EQ(summary->outcomes.size(), 2u);
  // Python's csv module (RFC 4180) reads the file the job wrote: a header and two rows,
  // the methods in the order asked; the file is the text the job returned.
  const std::string csv = (std::filesystem::path(r.out_dir) / "summary.csv").string();
  EXPECT_EQ(testing::read_text(csv), summary->csv);
  const std::string script =
      "import csv,sys; rows=list(csv.reader(open(sys.argv[1], newline=''))); "
      "assert rows[0][0]=='method', rows[0]; "
      "assert [row[0] for row in rows[1:]]==['adam','sghmc'], rows";
  const std::string log = (dir_.path() / "csv_check.txt").string();
  EXPECT_EQ(run_python("-c \"" + script + "\" '" + csv + "'", log), 0) << testing::read_text(log);
}

TEST_F(CompareJobTest, SweepTrainsEveryMethodAtEveryRateAndRefusesRsghmc) {
  SweepRequest sweep;
  sweep.compare = request("sweep");
  sweep.methods = {Method::kSghmc};
  ASSERT_TRUE(complete_compare_request(sweep.compare, {.methods = "sghmc", .hidden = "8"}).ok());
  sweep.learning_rates = {0.01, 0.1};
  Result<SweepSummary> summary = run_sweep_job(sweep);
  ASSERT_TRUE(summary.ok()) << summary.status().message();
  EXPECT_EQ(summary->outcomes.size(), 2u);
  EXPECT_TRUE(std::filesystem::exists(std::filesystem::path(sweep.compare.out_dir) / "nll.svg"));
  sweep.methods = {Method::kRsghmc};
  EXPECT_EQ(run_sweep_job(sweep).status().code(), StatusCode::kInvalidInput);
}

}  // namespace
}  // namespace credence
