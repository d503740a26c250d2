// Issue 22: a run file is untrusted input. A hand-edited or damaged run file crashed
// predict (an encoding offset past the input width or negative: writes outside an
// array), was accepted with an absurd encoding width, or made predict print NaN (a NaN in
// a kept sample); a fuzzed category range overflowed int64 in the reader. Now every
// structural field is validated against the stored network and the other fields when
// the file is opened, and every command refuses a damaged file with exit 2, a message
// naming the dataset and index, and no output.
//
// The damaged files are made with h5py (tests/tools/damage_run.py), one damage per file,
// from a run trained here; the dataset names are those of docs/run-file.md.
#include <gtest/gtest.h>

#include <filesystem>
#include <map>
#include <sstream>
#include <string>
#include <vector>

#include "credence/ensemble.h"
#include "ensemble/test_runs.h"
#include "testing/read_text.h"
#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

constexpr const char* kDamaged = "the file is damaged or was not written by credence";

class Issue22RunValidation : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    dir_ = new testing::TempDir();
    data_ = (dir_->path() / "pumps.csv").string();
    run_ = (dir_->path() / "run.h5").string();
    auto synth =
        testing::run_credence("synth --scenario pump-wear --rows 200 --out '" + data_ + "'");
    ASSERT_EQ(synth.exit_code, 0) << synth.output;
    auto train = testing::run_credence("--quiet train '" + data_ +
                                       "' --target condition --id pump_id --impute median "
                                       "--hidden 4 --chains 1 --burn-in 5 --samples 3 --out '" +
                                       run_ + "'");
    ASSERT_EQ(train.exit_code, 0) << train.output;
    const std::string damaged = (dir_->path() / "damaged").string();
    std::filesystem::create_directories(damaged);
    int code = 0;
    const std::string listing = testing::run_python(
        "'" + std::string(CREDENCE_SOURCE_DIR) + "/tests/tools/damage_run.py' '" + run_ + "' '" +
            damaged + "'",
        code);
    ASSERT_EQ(code, 0) << listing;
    std::istringstream lines(listing);
    std::string line;
    while (std::getline(lines, line)) {
      const auto tab = line.find('\t');
      ASSERT_NE(tab, std::string::npos) << line;
      cases_[line.substr(0, tab)] = line.substr(tab + 1);
    }
  }
  static void TearDownTestSuite() {
    delete dir_;
    dir_ = nullptr;
  }

  static std::string damaged(const std::string& name) {
    return (dir_->path() / "damaged" / (name + ".h5")).string();
  }
  static std::string out(const std::string& name) { return (dir_->path() / name).string(); }

  // Runs `command` (its arguments after the run file) on the damaged copy `name` and
  // checks the refusal: exit 2, the field named, the advice, and no output file.
  static void expect_refused(const std::string& name, const std::string& command,
                             const std::string& after_run, const std::string& output_file) {
    SCOPED_TRACE(name + ": " + command);
    ASSERT_TRUE(cases_.count(name)) << "no such damage case";
    std::filesystem::remove(output_file);
    auto result = testing::run_credence("--quiet " + command + " '" + damaged(name) + "' " +
                                        after_run);
    EXPECT_EQ(result.exit_code, 2) << result.output;
    EXPECT_NE(result.output.find(cases_[name]), std::string::npos)
        << "expected '" << cases_[name] << "' in: " << result.output;
    EXPECT_NE(result.output.find(kDamaged), std::string::npos) << result.output;
    EXPECT_FALSE(std::filesystem::exists(output_file)) << output_file;
  }

  static testing::TempDir* dir_;
  static std::string data_;
  static std::string run_;
  static std::map<std::string, std::string> cases_;  // case -> field the refusal names
};

testing::TempDir* Issue22RunValidation::dir_ = nullptr;
std::string Issue22RunValidation::data_;
std::string Issue22RunValidation::run_;
std::map<std::string, std::string> Issue22RunValidation::cases_;

TEST_F(Issue22RunValidation, IntactRunPredicts) {
  const std::string predictions = out("intact.csv");
  auto result = testing::run_credence("--quiet predict '" + run_ + "' '" + data_ + "' --out '" +
                                      predictions + "'");
  ASSERT_EQ(result.exit_code, 0) << result.output;
  EXPECT_EQ(testing::read_text(predictions).find("nan"), std::string::npos);
}

// Every damage: predict refuses it with exit 2, naming the field, and writes nothing.
// Before the fix the offsets crashed predict (SIGSEGV, or "double free or corruption"),
// the absurd width and the NaN sample wrote predictions, and the overflow was undefined.
TEST_F(Issue22RunValidation, PredictRefusesEachDamageNamingTheField) {
  ASSERT_EQ(cases_.size(), 32u) << "tests/tools/damage_run.py lists 32 cases";
  for (const auto& [name, field] : cases_) {
    if (name == "setting_out_of_range") continue;  // the sampler settings: resume only
    expect_refused(name, "predict", "'" + data_ + "' --out '" + out("pred.csv") + "'",
                   out("pred.csv"));
  }
}

// A non-finite kept sample refuses the whole file in every command that reads samples or
// summaries (docs/run-file.md, "Validation"): none prints NaN.
TEST_F(Issue22RunValidation, EveryCommandRefusesANonFiniteSample) {
  for (const char* name : {"theta_nan", "theta_infinite", "projection_nan", "probe_log_lik_nan",
                           "trace_potential_nan"}) {
    expect_refused(name, "assess", "'" + data_ + "' --json '" + out("assess.json") + "'",
                   out("assess.json"));
    expect_refused(name, "diagnose", "--json '" + out("diagnose.json") + "'",
                   out("diagnose.json"));
    expect_refused(name, "report", "'" + data_ + "' --out '" + out("report.html") + "'",
                   out("report.html"));
  }
}

// --resume continues from the active checkpoint slot with the stored settings: a NaN
// there, or a sampler setting out of range, is refused too.
TEST_F(Issue22RunValidation, ResumeRefusesANonFiniteCheckpoint) {
  for (const char* name :
       {"checkpoint_theta_nan", "next_step_negative", "seconds_nan", "setting_out_of_range"}) {
    SCOPED_TRACE(name);
    auto result = testing::run_credence("--quiet train --resume '" + damaged(name) + "'");
    EXPECT_EQ(result.exit_code, 2) << result.output;
    EXPECT_NE(result.output.find(cases_[name]), std::string::npos) << result.output;
  }
}

// inspect shows what the file holds, then says what is wrong (exit 2, no JSON).
TEST_F(Issue22RunValidation, InspectReportsWhatItCanAndTheDamage) {
  const std::string json = out("inspect.json");
  auto result = testing::run_credence("inspect '" + damaged("offset_past_width") + "' --json '" +
                                      json + "'");
  EXPECT_EQ(result.exit_code, 2) << result.output;
  EXPECT_NE(result.output.find("status"), std::string::npos) << result.output;
  EXPECT_NE(result.output.find("chain 0"), std::string::npos) << result.output;
  EXPECT_NE(result.output.find("preprocessing/features/offset[0]"), std::string::npos)
      << result.output;
  EXPECT_FALSE(std::filesystem::exists(json));
}

// The library API: the same refusal as a Status, and a reader that keeps the damage.
TEST_F(Issue22RunValidation, ReaderReportsDamageOnlyWhenAsked) {
  auto refused = RunReader::open(damaged("width_absurd"));
  ASSERT_FALSE(refused.ok());
  EXPECT_EQ(refused.status().code(), StatusCode::kCorrupt);
  auto kept = RunReader::open(damaged("width_absurd"), RunOpen::kReportDamage);
  ASSERT_TRUE(kept.ok()) << kept.status().to_string();
  EXPECT_EQ((*kept)->damage().code(), StatusCode::kCorrupt);
  EXPECT_NE((*kept)->damage().message().find(cases_["width_absurd"]), std::string::npos);
  auto intact = RunReader::open(run_, RunOpen::kReportDamage);
  ASSERT_TRUE(intact.ok());
  EXPECT_TRUE((*intact)->damage().ok()) << (*intact)->damage().to_string();
}

// The fuzzer's input (a signed overflow in the category-range check, found by a 70-second
// fuzz_run): refused with a status naming the range, with no undefined behaviour (the
// sanitizer build runs this test under UBSan).
TEST(Issue22CategoryOverflow, FuzzerInputIsRefused) {
  const std::string path = std::string(CREDENCE_SOURCE_DIR) +
                           "/tests/regressions/inputs/run-ubsan-category-overflow";
  auto reader = RunReader::open(path);
  ASSERT_FALSE(reader.ok());
  EXPECT_EQ(reader.status().code(), StatusCode::kCorrupt) << reader.status().to_string();
  EXPECT_NE(reader.status().message().find("category_start["), std::string::npos)
      << reader.status().message();
}

}  // namespace
}  // namespace credence
