// Issue 19 end to end on the invented demo table (fault within 14 days, two classes):
// the positive class stored by train and named by assess and predict, predict's
// --threshold, per-row intervals (against numpy.quantile in tests/tools/numpy_predict.py),
// row numbers and --keep, the outside-the-training-range column, and bad flags.
#include <gtest/gtest.h>

#include <algorithm>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "testing/csv_columns.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::read_text;
using testing::run_credence;

const std::string kDemo = std::string(CREDENCE_SOURCE_DIR) + "/data/demo.csv";

using testing::split_line;

std::pair<std::vector<std::string>, std::map<std::string, std::vector<std::string>>> read_csv(
    const std::string& path) {
  testing::CsvColumns csv = testing::read_csv_columns(path);
  return {std::move(csv.names), std::move(csv.columns)};
}

class Decisions : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    run_ = path("demo.h5");
    auto train = run_credence("--quiet train '" + kDemo +
                              "' --target fault_14d --drop unit_id --impute median --positive-class yes "
                              "--hidden 8 --chains 2 --burn-in 50 --thin 5 --samples 10 "
                              "--seed 3 --out '" + run_ + "'");
    ASSERT_EQ(train.exit_code, 0) << train.output;
  }
  static void TearDownTestSuite() { delete dir_; }
  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }
  static testing::CommandOutput predict(const std::string& input, const std::string& out,
                                        const std::string& extra) {
    return run_credence("predict '" + run_ + "' '" + input + "' --out '" + out + "' " + extra);
  }

  static testing::TempDir* dir_;
  static std::string run_;
};
testing::TempDir* Decisions::dir_ = nullptr;
std::string Decisions::run_;

TEST_F(Decisions, ThresholdDecidesPredictedAndRowsAreNumbered) {
  const std::string out = path("threshold.csv");
  auto r = predict(kDemo, out, "--threshold 0.2 --keep unit_id,site");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("positive class 'yes' (the run's setting), predicted where "
                          "P(yes) >= 0.2"),
            std::string::npos)
      << r.output;
  const auto [names, columns] = read_csv(out);
  ASSERT_GE(names.size(), 6u);
  EXPECT_EQ(names[0], "row");  // no id column: the data rows are numbered
  EXPECT_EQ(names[1], "unit_id");
  EXPECT_EQ(names[2], "site");
  EXPECT_EQ(names[3], "fault_14d");
  ASSERT_EQ(columns.at("p_yes").size(), 3000u);
  int called_yes = 0;
  for (std::size_t i = 0; i < 3000; ++i) {
    EXPECT_EQ(columns.at("row")[i], std::to_string(i + 1));
    const bool yes = std::stod(columns.at("p_yes")[i]) >= 0.2;
    EXPECT_EQ(columns.at("predicted")[i], yes ? "yes" : "no") << "row " << i + 1;
    called_yes += yes ? 1 : 0;
  }
  // The threshold matters: at 0.2 more rows are called 'yes' than by the larger class.
  int more_probable_yes = 0;
  for (const std::string& p : columns.at("p_yes")) more_probable_yes += std::stod(p) > 0.5;
  EXPECT_GT(called_yes, more_probable_yes);
}

TEST_F(Decisions, IntervalsMatchNumpyQuantilesOverTheMembers) {
  const std::string out = path("interval.csv");
  auto r = predict(kDemo, out, "--interval 0.8 --quiet");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const auto [names, columns] = read_csv(out);
  // Two classes: the positive class's interval only.
  EXPECT_EQ(columns.count("p_yes_lo80"), 1u);
  EXPECT_EQ(columns.count("p_yes_hi80"), 1u);
  EXPECT_EQ(columns.count("p_no_lo80"), 0u);
  // Reference: numpy.quantile(p_s, [0.1, 0.9], method='linear') over the members rebuilt
  // from the run file by numpy (tolerance 1e-5: float32 forward passes).
  const std::string log = path("interval_numpy.txt");
  const int check = std::system((std::string(CREDENCE_PYTHON) + " '" + CREDENCE_SOURCE_DIR +
                                 "/tests/tools/numpy_predict.py' '" + run_ + "' '" + kDemo +
                                 "' '" + out + "' 1e-5 > '" + log + "' 2>&1")
                                    .c_str());
  EXPECT_EQ(check, 0) << read_text(log);
  EXPECT_NE(read_text(log).find("p_yes_lo80 max_abs_diff"), std::string::npos) << read_text(log);
}

TEST_F(Decisions, RowFarOutsideTheTrainingRangeIsFlaggedAndTypicalRowsAreNot) {
  // Typical rows: none of the 3,000 demo rows lies 10 training standard deviations out.
  const std::string typical = path("typical.csv");
  auto r = predict(kDemo, typical, "");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_EQ(r.output.find("outside the training range"), std::string::npos) << r.output;
  const auto typical_columns = read_csv(typical).second;
  for (const std::string& v : typical_columns.at("outside")) EXPECT_EQ(v, "0");

  // The first 200 rows, with row 100's runtime a million times its value.
  std::ifstream in(kDemo);
  std::string line, text;
  std::getline(in, line);
  text = line + "\n";
  const std::vector<std::string> header = split_line(line);
  const auto column = static_cast<std::size_t>(
      std::find(header.begin(), header.end(), "runtime_h_7d") - header.begin());
  ASSERT_LT(column, header.size());
  for (int row = 1; row <= 200 && std::getline(in, line); ++row) {
    std::vector<std::string> cells = split_line(line);
    if (row == 100) cells[column] = std::to_string(std::stod(cells[column]) * 1e6);
    for (std::size_t j = 0; j < cells.size(); ++j) text += (j ? "," : "") + cells[j];
    text += "\n";
  }
  const std::string far = dir_->write("far.csv", text);
  const std::string out = path("far_pred.csv");
  r = predict(far, out, "");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  EXPECT_NE(r.output.find("1 of 200 rows lie outside the training range"), std::string::npos)
      << r.output;
  const auto columns = read_csv(out).second;
  for (std::size_t i = 0; i < 200; ++i) {
    EXPECT_EQ(columns.at("outside")[i], i == 99 ? "1" : "0") << "row " << i + 1;
  }
  EXPECT_GT(std::stod(columns.at("farthest_z")[99]), 1e5);
}

TEST_F(Decisions, AssessNamesThePositiveClassAndItsDecisions) {
  auto r = run_credence("assess '" + run_ + "' '" + kDemo + "' --bootstrap 0 "
                        "--target-sensitivity 0.9");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  for (const char* expected :
       {"positive: yes, the run's setting", "brier of P(yes)", "reliability of P(yes)",
        "decisions: 'yes' where P(yes) >=", "reported on the test rows",
        "the highest threshold reaching sensitivity 0.9 on the run's", "average precision"}) {
    EXPECT_NE(r.output.find(expected), std::string::npos) << expected << "\n" << r.output;
  }
}

// The report's decisions section follows the same threshold rules as assess (it used a
// fixed 0.5 and took no decision flags before).
TEST_F(Decisions, ReportChoosesTheThresholdAsAssessDoes) {
  const std::string page = path("costs.html");
  auto r = run_credence("--quiet report '" + run_ + "' '" + kDemo + "' --bootstrap 0 "
                        "--cost-fp 1 --cost-fn 5 --out '" + page + "'");
  ASSERT_EQ(r.exit_code, 0) << r.output;
  const std::string html = testing::read_text(page);
  EXPECT_NE(html.find("the least total cost (false positive 1, false negative 5)"),
            std::string::npos)
      << "the page names the cost rule";
  EXPECT_EQ(html.find("a fixed threshold (--threshold, default 0.5)"), std::string::npos);
  auto both = run_credence("--quiet report '" + run_ + "' '" + kDemo +
                           "' --threshold 0.3 --target-sensitivity 0.9 --out '" +
                           path("both.html") + "'");
  EXPECT_EQ(both.exit_code, 2) << both.output;
  EXPECT_NE(both.output.find("give one way to set the decision threshold"), std::string::npos)
      << both.output;
  EXPECT_FALSE(std::filesystem::exists(path("both.html")));
}

TEST_F(Decisions, BadFlagsAreRefusedWithExitCode2) {
  const std::pair<std::string, std::string> cases[] = {
      {"--threshold 1.5", "strictly between 0 and 1"},
      {"--threshold 0", "strictly between 0 and 1"},
      {"--positive-class maybe", "name one of 'no', 'yes'"},
      {"--interval 1", "--interval 1"},
      {"--keep no_such_column", "'no_such_column' to keep is not in the header"},
      {"--outside-above -1", "--outside-above"},
  };
  for (const auto& [flags, expected] : cases) {
    const std::string out = path("bad.csv");
    auto r = predict(kDemo, out, flags);
    EXPECT_EQ(r.exit_code, 2) << flags << "\n" << r.output;
    EXPECT_NE(r.output.find(expected), std::string::npos) << flags << "\n" << r.output;
    EXPECT_FALSE(std::filesystem::exists(out)) << flags;
  }
  const std::string run = path("bad.h5");
  auto r = run_credence("--quiet train '" + kDemo +
                        "' --target fault_14d --drop unit_id --impute median --positive-class maybe "
                        "--hidden 8 --chains 1 --burn-in 5 --samples 2 --out '" + run + "'");
  EXPECT_EQ(r.exit_code, 2) << r.output;
  EXPECT_NE(r.output.find("name one of 'no', 'yes'"), std::string::npos) << r.output;
  EXPECT_FALSE(std::filesystem::exists(run));
}

}  // namespace
}  // namespace credence
