// `credence assess` end to end: its JSON against scikit-learn and numpy applied to
// `predict`'s own output (tests/tools/sklearn_assess.py), member-wise temperature scaling
// stored in the run and used by predict, and bad input. Data: scikit-learn's bundled
// breast-cancer table (the sklearn_tables fixture) and its iris table (written by the
// helper with sklearn.datasets.load_iris).
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

const std::string kBreastCancer = std::string(CREDENCE_REFDATA_DIR) + "/breast_cancer.csv";
const std::string kHelper = std::string(CREDENCE_SOURCE_DIR) + "/tests/tools/sklearn_assess.py";

// predict writes probabilities and entropies with 9 significant digits, so a score
// recomputed from its CSV differs from assess's (computed in double from the unrounded
// values) by up to about 1e-9 per value; 1e-6 leaves room for that and nothing more.
constexpr const char* kTolerance = "1e-6";

using testing::read_text;

// Files in `dir` whose name starts with `prefix` (an output or its temporary file).
int files_starting_with(const std::filesystem::path& dir, const std::string& prefix) {
  int count = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir)) {
    if (entry.path().filename().string().rfind(prefix, 0) == 0) ++count;
  }
  return count;
}

// A number from the JSON text: the first value after "key": following `after` (the
// JSON's key names are documented; this avoids a JSON parser for two numbers).
double json_number(const std::string& json, const std::string& after, const std::string& key) {
  std::size_t at = json.find(after);
  if (at == std::string::npos) return std::nan("");
  at = json.find("\"" + key + "\":", at);
  if (at == std::string::npos) return std::nan("");
  return std::strtod(json.c_str() + at + key.size() + 3, nullptr);
}

class Assess : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    cancer_run_ = path("cancer.h5");
    iris_ = path("iris.csv");
    iris_run_ = path("iris.h5");
    ASSERT_EQ(python("iris '" + iris_ + "'", "iris_export.txt"), 0)
        << read_text(path("iris_export.txt"));
    // Small, quick runs: 2 chains x 10 kept samples of a one-layer net of 8 units.
    auto cancer = run_credence("--quiet train '" + kBreastCancer +
                               "' --target diagnosis --hidden 8 --chains 2 --burn-in 100 "
                               "--thin 5 --samples 10 --seed 3 --out '" + cancer_run_ + "'");
    ASSERT_EQ(cancer.exit_code, 0) << cancer.output;
    auto iris = run_credence("--quiet train '" + iris_ +
                             "' --target species --hidden 8 --chains 2 --burn-in 100 --thin 5 "
                             "--samples 10 --seed 3 --out '" + iris_run_ + "'");
    ASSERT_EQ(iris.exit_code, 0) << iris.output;
  }
  static void TearDownTestSuite() { delete dir_; }

  static std::string path(const std::string& name) { return (dir_->path() / name).string(); }
  // Runs the helper with CREDENCE_PYTHON; its report goes to `log` in the temp dir.
  static int python(const std::string& args, const std::string& log) {
    return std::system((std::string("'") + CREDENCE_PYTHON + "' '" + kHelper + "' " + args +
                        " > '" + path(log) + "' 2>&1")
                           .c_str());
  }

  // predict on the whole table, assess with --json, then scikit-learn on predict's rows.
  static void expect_sklearn_agreement(const std::string& run, const std::string& data,
                                       const std::string& target, const std::string& name,
                                       const std::string& assess_flags) {
    const std::string pred = path(name + "_pred.csv");
    const std::string json = path(name + ".json");
    auto predicted = run_credence("--quiet predict '" + run + "' '" + data + "' --out '" + pred + "'");
    ASSERT_EQ(predicted.exit_code, 0) << predicted.output;
    auto assessed = run_credence("assess '" + run + "' '" + data + "' --json '" + json + "' " +
                                 assess_flags);
    ASSERT_EQ(assessed.exit_code, 0) << assessed.output;
    const std::string log = name + "_sklearn.txt";
    EXPECT_EQ(python("check '" + run + "' '" + pred + "' '" + json + "' " + target + " " +
                         kTolerance + " '" + data + "'",
                     log),
              0)
        << read_text(path(log));
    std::printf("%s", read_text(path(log)).c_str());
  }

  static testing::TempDir* dir_;
  static std::string cancer_run_;
  static std::string iris_;
  static std::string iris_run_;
};
testing::TempDir* Assess::dir_ = nullptr;
std::string Assess::cancer_run_;
std::string Assess::iris_;
std::string Assess::iris_run_;

TEST_F(Assess, BinaryScoresMatchScikitLearnOnPredictOutput) {
  // References (in sklearn_assess.py): sklearn.metrics log_loss, brier_score_loss,
  // roc_auc_score, accuracy_score; sklearn.calibration.calibration_curve (uniform and
  // quantile); numpy for the multi-class Brier score and the equal-width ECE/MCE of
  // docs/methods.md 9.3; docs/methods.md 9.1 for H = E H + MI per row; and the single-sample means
  // against every member rebuilt by numpy from the run file (1e-5: float32 forward passes).
  expect_sklearn_agreement(cancer_run_, kBreastCancer, "diagnosis", "cancer_test",
                           "--split test --bootstrap 0");
}

TEST_F(Assess, ValidationSplitAndOtherBinsAlsoMatch) {
  // The same references on the run's validation rows (data/val_rows) with 10 bins.
  expect_sklearn_agreement(cancer_run_, kBreastCancer, "diagnosis", "cancer_val",
                           "--split val --bins 10 --bootstrap 50 --seed 4");
}

TEST_F(Assess, DecisionsAtACostThresholdMatchScikitLearn) {
  // The threshold of least cost (a missed 'benign' costs 5) chosen on the validation rows
  // and reported on the test rows, with 'benign' as the positive class (not the default
  // 'malignant', so the class plumbing is exercised). References in sklearn_assess.py:
  // confusion_matrix, recall_score, precision_score, f1_score, average_precision_score,
  // roc_auc_score and calibration_curve on P(benign) from predict's output.
  expect_sklearn_agreement(cancer_run_, kBreastCancer, "diagnosis", "cancer_cost",
                           "--split test --bootstrap 0 --positive-class benign --cost-fn 5");
  const std::string text = read_text(path("cancer_cost.json"));
  EXPECT_NE(text.find("\"rule\": \"cost\""), std::string::npos) << text;
  EXPECT_NE(text.find("\"chosen_on\": \"validation\""), std::string::npos);
  EXPECT_NE(text.find("\"reported_on\": \"test\""), std::string::npos);
  EXPECT_NE(text.find("\"name\": \"benign\""), std::string::npos);
}

TEST_F(Assess, BadDecisionFlagsAreRefusedWithExitCode2) {
  const std::string base = "assess '" + cancer_run_ + "' '" + kBreastCancer + "' --bootstrap 0 ";
  const std::pair<std::string, std::string> cases[] = {
      {"--threshold 1.5", "strictly between 0 and 1"},
      {"--threshold 0", "strictly between 0 and 1"},
      {"--positive-class nope", "name one of 'benign', 'malignant'"},
      {"--threshold 0.3 --cost-fn 2", "give one way to set the decision threshold"},
      {"--cost-fp -1", "two positive costs"},
      {"--target-sensitivity 1.2", "(0, 1]"},
  };
  for (const auto& [flags, expected] : cases) {
    auto r = run_credence(base + flags);
    EXPECT_EQ(r.exit_code, 2) << flags << "\n" << r.output;
    EXPECT_NE(r.output.find(expected), std::string::npos) << flags << "\n" << r.output;
  }
  for (const std::string flags : {"--cost-fp 2", "--positive-class setosa"}) {
    auto r = run_credence("assess '" + iris_run_ + "' '" + iris_ + "' --bootstrap 0 " + flags);
    EXPECT_EQ(r.exit_code, 2) << flags << "\n" << r.output;
    EXPECT_NE(r.output.find("two-class"), std::string::npos) << flags << "\n" << r.output;
  }
}

TEST_F(Assess, ThreeClassScoresMatchScikitLearnOnPredictOutput) {
  // Three classes: roc_auc_score(multi_class="ovr", average="macro"), log_loss, the
  // multi-class Brier score by numpy; brier_binary must be null.
  expect_sklearn_agreement(iris_run_, iris_, "species", "iris_test",
                           "--split test --bins 10 --bootstrap 0");
}

TEST_F(Assess, SavedTemperatureIsUsedByPredictMemberWise) {
  const std::string run = path("tempered.h5");
  std::filesystem::copy_file(cancer_run_, run);
  const std::string json = path("tempered.json");
  auto assessed = run_credence("assess '" + run + "' '" + kBreastCancer +
                               "' --split test --bootstrap 0 --temperature-scale "
                               "--save-temperature --json '" + json + "'");
  ASSERT_EQ(assessed.exit_code, 0) << assessed.output;
  const std::string text = read_text(json);
  // "On Calibration of Modern Neural Networks" (ICML 2017): tau > 0 minimises the
  // validation NLL, so it is never above the NLL at tau = 1.
  const double tau = json_number(text, "\"temperature_scaling\"", "temperature");
  const double before = json_number(text, "\"temperature_scaling\"", "validation_nll_before");
  const double after = json_number(text, "\"temperature_scaling\"", "validation_nll_after");
  std::printf("fitted tau %.10g, validation nll %.6f -> %.6f\n", tau, before, after);
  ASSERT_GT(tau, 0.0);
  EXPECT_NE(tau, 1.0);  // this quick run is not calibrated as it comes
  EXPECT_LE(after, before);

  auto inspect = run_credence("inspect '" + run + "'");
  EXPECT_EQ(inspect.exit_code, 0) << inspect.output;

  // A later assess of the run scores at the stored temperature: the same numbers as the
  // calibrated block above (same rows, same members, same tau).
  const std::string again = path("tempered_again.json");
  auto reassessed = run_credence("--quiet assess '" + run + "' '" + kBreastCancer +
                                 "' --split test --bootstrap 0 --json '" + again + "'");
  ASSERT_EQ(reassessed.exit_code, 0) << reassessed.output;
  const std::string again_text = read_text(again);
  EXPECT_EQ(json_number(again_text, "\"metrics\"", "temperature"), tau);
  EXPECT_NEAR(json_number(again_text, "\"metrics\"", "nll"),
              json_number(text, "\"temperature_scaling\"", "nll"), 1e-12);

  // The run file stores the JSON's tau (docs/run-file.md /calibration, read with h5py),
  // and predict now tempers every member: numpy rebuild of softmax(log p_s / tau) averaged
  // over the members (sklearn_assess.py tempered, on rebuild_probabilities.py). The
  // forward passes run in float32 and tau < 1 magnifies their rounding; measured
  // differences are about 1e-7, the tolerance 1e-6.
  const std::string tempered = path("tempered_pred.csv");
  auto predicted = run_credence("--quiet predict '" + run + "' '" + kBreastCancer + "' --out '" +
                                tempered + "'");
  ASSERT_EQ(predicted.exit_code, 0) << predicted.output;
  char tau_text[64];
  std::snprintf(tau_text, sizeof tau_text, "%.17g", tau);
  EXPECT_EQ(python("tempered '" + run + "' '" + kBreastCancer + "' '" + tempered + "' " +
                       tau_text + " " + kTolerance,
                   "tempered.txt"),
            0)
      << read_text(path("tempered.txt"));

  // --temperature 1 turns it off: byte for byte the untempered run's predictions.
  const std::string plain = path("plain_pred.csv");
  const std::string untempered = path("untempered_pred.csv");
  ASSERT_EQ(run_credence("--quiet predict '" + cancer_run_ + "' '" + kBreastCancer + "' --out '" +
                         plain + "'")
                .exit_code,
            0);
  ASSERT_EQ(run_credence("--quiet predict '" + run + "' '" + kBreastCancer + "' --out '" +
                         untempered + "' --temperature 1")
                .exit_code,
            0);
  EXPECT_TRUE(read_text(untempered) == read_text(plain));
  EXPECT_FALSE(read_text(tempered) == read_text(plain));
}

TEST_F(Assess, BadInputExitsTwoAndLeavesNoJson) {
  // Another file: the breast-cancer table without its last row (a different SHA-256).
  std::ifstream in(kBreastCancer);
  std::string line, text;
  std::vector<std::string> lines;
  while (std::getline(in, line)) lines.push_back(line);
  for (std::size_t i = 0; i + 1 < lines.size(); ++i) text += lines[i] + "\n";
  const std::string other = dir_->write("other.csv", text);
  // And the table without its target column (the last one).
  std::string unlabelled;
  for (const std::string& l : lines) unlabelled += l.substr(0, l.rfind(',')) + "\n";
  const std::string no_target = dir_->write("no_target.csv", unlabelled);

  struct Case {
    std::string name;
    std::string args;
    std::vector<std::string> message;  // pieces the message must contain
  };
  const std::vector<Case> cases = {
      {"other_file", "'" + other + "' --split test", {"SHA-256", "--split all"}},
      {"save_alone", "'" + kBreastCancer + "' --save-temperature", {"--temperature-scale"}},
      {"no_target", "'" + no_target + "' --split all", {"'diagnosis'"}},
      {"zero_bins", "'" + kBreastCancer + "' --bins 0", {"--bins 0"}},
  };
  const std::string before = read_text(cancer_run_);
  for (const Case& c : cases) {
    const std::string json = "bad_" + c.name + ".json";
    auto result = run_credence("assess '" + cancer_run_ + "' " + c.args + " --json '" +
                               path(json) + "'");
    EXPECT_EQ(result.exit_code, 2) << c.name << ": " << result.output;
    for (const std::string& piece : c.message) {
      EXPECT_NE(result.output.find(piece), std::string::npos)
          << c.name << " should mention " << piece << ": " << result.output;
    }
    EXPECT_EQ(files_starting_with(dir_->path(), json), 0) << c.name;
  }
  EXPECT_TRUE(read_text(cancer_run_) == before);  // a refused assess leaves the run alone
}

// DISABLED until cmd_assess.cc checks "--save-temperature with --samples" before doing the
// work: today it writes the JSON and the text report, then exits 2 (reported to the lead).
TEST_F(Assess, SaveTemperatureWithFewerSamplesIsRefusedBeforeAnyOutput) {
  const std::string run = path("few.h5");
  std::filesystem::copy_file(cancer_run_, run);
  auto result = run_credence("assess '" + run + "' '" + kBreastCancer +
                             "' --samples 5 --temperature-scale --save-temperature --json '" +
                             path("few.json") + "'");
  EXPECT_EQ(result.exit_code, 2) << result.output;
  EXPECT_NE(result.output.find("--samples"), std::string::npos) << result.output;
  EXPECT_EQ(files_starting_with(dir_->path(), "few.json"), 0);
}

}  // namespace
}  // namespace credence
