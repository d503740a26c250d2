// The report's settings rows: only what the run's method reads, in words (issue 19).
#include <gtest/gtest.h>

#include <string>

#include "credence/run_settings.h"
#include "report/settings_view.h"
#include "testing/run_command.h"

namespace credence {
namespace {

using Rows = std::vector<std::pair<std::string, std::string>>;

RunHeader header_of(const TrainSettings& s, std::int64_t train_rows = 1920) {
  RunHeader h;
  DataOptions data;  // the default missing-value tokens: "", NA, NaN, null, ?
  h.settings = to_values(s, data);
  h.settings.emplace_back("positive_class", std::string("fault"));
  for (std::int64_t i = 0; i < train_rows; ++i) h.train_rows.push_back(i);
  h.parameters = 1537;
  return h;
}

std::string all_text(const Rows& rows) {
  std::string out;
  for (const auto& [name, value] : rows) out += name + ": " + value + "\n";
  return out;
}

std::string value_of(const Rows& rows, const std::string& name) {
  for (const auto& [n, v] : rows) {
    if (n == name) return v;
  }
  return "(absent)";
}

// The example: an optimizer run of 3110 steps was shown as `burn_in 3109` and
// `epochs 50`, with some 60 rows for other methods and `NANaNnull?` for the tokens.
TEST(SettingsRows, AnOptimizerShowsItsStepsAndNothingOfTheSamplers) {
  TrainSettings s;
  s.sampler.method = Method::kAdam;
  s.steps = 3110;
  s.chains.burn_in = 3109;  // as train stores an optimizer's budget (src/run/prepare.cc)
  s.chains.early_stop.every = 100;
  s.chains.early_stop.patience = 5;
  const Rows rows = report::settings_rows(header_of(s));
  const std::string text = all_text(rows);
  EXPECT_EQ(value_of(rows, "method"), "adam");
  // 1920 rows at the default batch of 128: 15 steps per pass; 3110 / 15 = 207.3 passes.
  EXPECT_NE(value_of(rows, "steps per chain").find("at most 3110 (207 passes"),
            std::string::npos) << text;
  EXPECT_NE(value_of(rows, "early stop").find("every 100 steps; a chain ends after 5 checks"),
            std::string::npos) << text;
  EXPECT_NE(value_of(rows, "early stop").find("keeps its best scored iterate"), std::string::npos);
  EXPECT_NE(value_of(rows, "moment decays").find("0.9 and 0.999"), std::string::npos) << text;
  for (const char* absent : {"burn", "3109", "epochs 50", "temperature", "friction", "--max-move",
                             "leapfrog", "psgld", "sghmc", "santa", "hmc_", "\x1f"}) {
    EXPECT_EQ(text.find(absent), std::string::npos) << absent << " in\n" << text;
  }
  EXPECT_EQ(value_of(rows, "missing values"), "\"NA\", \"NaN\", \"null\", \"?\" and empty cells");
  EXPECT_EQ(value_of(rows, "CSV delimiter"), "comma");
  EXPECT_EQ(value_of(rows, "positive_class"), "fault");  // written outside TrainSettings
  EXPECT_LT(rows.size(), 16u) << text;
  s.chains.early_stop.every = 0;
  EXPECT_EQ(value_of(report::settings_rows(header_of(s)), "early stop").find("off: every step "
                                                                           "runs and the final "
                                                                           "iterate is kept"),
            0u);
}

// Each sampler shows its own flags (the ones `credence train` accepts for it, per
// src/cli/method_flags.cc) and not another method's.
TEST(SettingsRows, SamplersShowTheirOwnFlags) {
  TrainSettings s;
  s.sampler.method = Method::kSghmc;
  s.chains.burn_in = 500;
  s.chains.thin = 10;
  s.chains.samples = 40;
  Rows rows = report::settings_rows(header_of(s));
  EXPECT_NE(value_of(rows, "friction"), "(absent)") << all_text(rows);
  EXPECT_EQ(value_of(rows, "per chain"),
            "burn-in 500 steps, then 40 kept, one every 10 (--burn-in, --samples, --thin)");
  EXPECT_NE(value_of(rows, "temperature"), "(absent)");
  EXPECT_EQ(value_of(rows, "steps per chain"), "(absent)");
  EXPECT_EQ(value_of(rows, "early stop"), "(absent)");

  s.sampler.method = Method::kSgld;
  rows = report::settings_rows(header_of(s));
  EXPECT_EQ(value_of(rows, "friction"), "(absent)") << all_text(rows);

  // rsghmc with a derived speed and mass: the step cancels, --max-move sets the move.
  s.sampler.method = Method::kRsghmc;
  rows = report::settings_rows(header_of(s));
  EXPECT_EQ(value_of(rows, "learning rate"), "(absent)") << all_text(rows);
  EXPECT_NE(value_of(rows, "largest move per step").find("(--max-move;"), std::string::npos);
  EXPECT_EQ(value_of(rows, "mass adaptation"), "during burn-in (--fixed-mass stops it)");

  s.sampler.method = Method::kHmc;
  rows = report::settings_rows(header_of(s));
  EXPECT_NE(value_of(rows, "leapfrog steps"), "(absent)") << all_text(rows);
  EXPECT_EQ(value_of(rows, "batch"), "(absent)");     // full batch: no --batch
  EXPECT_EQ(value_of(rows, "schedule"), "(absent)");  // dual averaging, no --schedule
}

// The rows name a train flag exactly when `credence train` reads it for the method: the
// executable is asked (its method_flags table refuses a flag with "is not read by" before
// it opens the data), so the view and the table cannot drift apart.
TEST(SettingsRows, NameExactlyTheFlagsTrainReadsForEachMethod) {
  const std::vector<std::pair<std::string, std::string>> flags = {
      {"--lr", "0.01"},         {"--temperature", "1"},  {"--tempering", "posterior"},
      {"--schedule", "constant"}, {"--cycles", "2"},    {"--exploration", "0.5"},
      {"--friction", "0.1"},    {"--max-move", "0.01"},  {"--speed", "1"},
      {"--mass", "1"},          {"--fixed-mass", ""},    {"--leapfrog", "5"},
      {"--target-accept", "0.8"}, {"--burn-in", "10"},  {"--thin", "1"},
      {"--samples", "5"},       {"--steps", "10"},       {"--epochs", "1"},
      {"--check-every", "5"},   {"--patience", "2"},     {"--min-steps", "1"},
      {"--batch", "16"},        {"--thermostat-gain", "0"}};
  for (const char* name : {"sgld", "psgld", "sghmc", "rsghmc", "sgd", "momentum", "rsgd", "adam",
                           "hmc", "rhmc", "santa", "santa-opt"}) {
    TrainSettings s;
    s.sampler.method = *parse_method(name);
    const std::string text = all_text(report::settings_rows(header_of(s)));
    for (const auto& [flag, value] : flags) {
      const testing::CommandOutput train = testing::run_credence(
          std::string("train /nonexistent-credence-table.csv --target y --out /nonexistent/x.h5 "
                      "--method ") + name + " " + flag + " " + value);
      ASSERT_EQ(train.exit_code, 2) << train.output;
      const bool read = train.output.find("is not read by") == std::string::npos;
      const bool shown = text.find(flag + ")") != std::string::npos ||
                         text.find(flag + ",") != std::string::npos ||
                         text.find(flag + ";") != std::string::npos ||
                         text.find(flag + " ") != std::string::npos;
      EXPECT_EQ(shown, read) << name << " " << flag << ": train says " << train.output
                             << "\nrows:\n" << text;
    }
  }
}

TEST(SettingsRows, AFileOfAnotherVersionIsListedAsStoredWithReadableLists) {
  RunHeader h;
  h.settings = {{"method", std::string("sgld")}, {"csv_na_tokens", std::string("NA\x1f?")}};
  const Rows rows = report::settings_rows(h);
  EXPECT_EQ(value_of(rows, "csv_na_tokens"), "NA, ?");
  EXPECT_EQ(report::method_of(h), "sgld");
}

}  // namespace
}  // namespace credence
