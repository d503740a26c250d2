// Invented demo tables: determinism, the truth file, and labels that follow the truth.
#include "credence/synth.h"

#include <gtest/gtest.h>

#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "testing/temp_dir.h"

namespace credence {
namespace {

std::string read_file(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

std::vector<std::string> split_lines(const std::string& text) {
  std::vector<std::string> lines;
  std::stringstream stream(text);
  for (std::string line; std::getline(stream, line);) lines.push_back(line);
  return lines;
}

std::vector<std::string> split_cells(const std::string& line) {
  std::vector<std::string> cells;
  std::stringstream stream(line);
  for (std::string cell; std::getline(stream, cell, ',');) cells.push_back(cell);
  if (!line.empty() && line.back() == ',') cells.emplace_back();
  return cells;
}

TEST(Synth, SameSeedSameTableOtherSeedOtherTable) {
  testing::TempDir dir;
  auto path = [&](const char* name) { return (dir.path() / name).string(); };
  SynthOptions options{.scenario = "cold-store", .rows = 200, .seed = 5};
  ASSERT_TRUE(write_synth_table(options, path("a.csv"), path("a.truth.csv")).ok());
  ASSERT_TRUE(write_synth_table(options, path("b.csv"), path("b.truth.csv")).ok());
  options.seed = 6;
  ASSERT_TRUE(write_synth_table(options, path("c.csv"), path("c.truth.csv")).ok());
  EXPECT_EQ(read_file(path("a.csv")), read_file(path("b.csv")));
  EXPECT_EQ(read_file(path("a.truth.csv")), read_file(path("b.truth.csv")));
  EXPECT_NE(read_file(path("a.csv")), read_file(path("c.csv")));
}

// Labels are drawn from the truth, so their frequency must match the mean true
// probability within the binomial standard error (4 standard errors: a false alarm
// rate below 1e-4 for a fixed seed, common practice).
TEST(Synth, LabelsFollowTheTrueProbabilities) {
  testing::TempDir dir;
  for (const SynthScenario& scenario : synth_scenarios()) {
    std::string csv = (dir.path() / (scenario.name + ".csv")).string();
    std::string truth = (dir.path() / (scenario.name + ".truth.csv")).string();
    SynthOptions options{.scenario = scenario.name, .rows = 20000, .seed = 11};
    ASSERT_TRUE(write_synth_table(options, csv, truth).ok());

    std::vector<std::string> rows = split_lines(read_file(csv));
    std::vector<std::string> truth_rows = split_lines(read_file(truth));
    ASSERT_EQ(rows.size(), 20001u);
    ASSERT_EQ(truth_rows.size(), 20001u);
    std::vector<std::string> header = split_cells(rows[0]);
    std::vector<std::string> truth_header = split_cells(truth_rows[0]);
    EXPECT_EQ(header.front(), scenario.id_column);
    EXPECT_EQ(header.back(), scenario.target);
    EXPECT_EQ(truth_header.front(), scenario.id_column);

    std::size_t classes = truth_header.size() - 1;
    std::vector<double> label_count(classes, 0), truth_sum(classes, 0);
    for (std::size_t i = 1; i < rows.size(); ++i) {
      std::vector<std::string> cells = split_cells(rows[i]);
      std::vector<std::string> p = split_cells(truth_rows[i]);
      ASSERT_EQ(cells.size(), header.size()) << "row " << i;
      ASSERT_EQ(p[0], cells[0]) << "ids line up, row " << i;
      double total = 0;
      for (std::size_t k = 0; k < classes; ++k) {
        double pk = std::stod(p[k + 1]);
        total += pk;
        truth_sum[k] += pk;
        if (truth_header[k + 1] == "p_" + cells.back()) label_count[k] += 1;
      }
      EXPECT_NEAR(total, 1.0, 1e-5) << "row " << i;
    }
    double n = static_cast<double>(rows.size() - 1);
    for (std::size_t k = 0; k < classes; ++k) {
      double expected = truth_sum[k] / n, observed = label_count[k] / n;
      double standard_error = std::sqrt(expected * (1 - expected) / n);
      EXPECT_NEAR(observed, expected, 4 * standard_error)
          << scenario.name << " class " << truth_header[k + 1];
    }
  }
}

TEST(Synth, ColdStoreHasSomeMissingOilReadings) {
  testing::TempDir dir;
  std::string csv = (dir.path() / "t.csv").string();
  ASSERT_TRUE(write_synth_table({.scenario = "cold-store", .rows = 2000, .seed = 3}, csv,
                                (dir.path() / "t.truth.csv").string())
                  .ok());
  std::vector<std::string> rows = split_lines(read_file(csv));
  std::vector<std::string> header = split_cells(rows[0]);
  std::size_t oil = 0;
  while (header[oil] != "oil_level_pct") ++oil;
  int missing = 0;
  for (std::size_t i = 1; i < rows.size(); ++i) missing += split_cells(rows[i])[oil].empty();
  EXPECT_GT(missing, 20);   // about 3% of 2000 = 60
  EXPECT_LT(missing, 120);
}

TEST(Synth, RefusesUnknownScenarioAndBadRowCount) {
  testing::TempDir dir;
  std::string csv = (dir.path() / "x.csv").string();
  std::string truth = (dir.path() / "x.truth.csv").string();
  Status unknown = write_synth_table({.scenario = "nope"}, csv, truth);
  EXPECT_EQ(unknown.code(), StatusCode::kInvalidInput);
  EXPECT_NE(unknown.message().find("cold-store"), std::string::npos) << unknown.message();
  Status zero = write_synth_table({.scenario = "cold-store", .rows = 0}, csv, truth);
  EXPECT_EQ(zero.code(), StatusCode::kInvalidInput);
  EXPECT_NE(zero.message().find("--rows"), std::string::npos) << zero.message();
  EXPECT_FALSE(std::ifstream(csv).good()) << "no output on failure";
}

TEST(Synth, UnwritableFolderIsAnIoErrorAndLeavesNothing) {
  Status s = write_synth_table({}, "/nonexistent-folder/x.csv", "/nonexistent-folder/x.t.csv");
  EXPECT_EQ(s.code(), StatusCode::kIoError);
  EXPECT_NE(s.message().find("/nonexistent-folder/x.csv"), std::string::npos) << s.message();
}

}  // namespace
}  // namespace credence
