// `credence schema`: the report on scikit-learn's breast-cancer table (counts from the
// table's description in scikit-learn: 569 rows, 30 numeric features, 212 malignant and 357
// benign), its JSON, and exit code 2 with a located message for bad input.
#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

const std::string kCsv = std::string(CREDENCE_REFDATA_DIR) + "/breast_cancer.csv";

bool contains(const std::string& text, const std::string& piece) {
  return text.find(piece) != std::string::npos;
}

TEST(SchemaCommand, ReportsColumnsClassesAndSplit) {
  auto out = run_credence("schema '" + kCsv + "' --target diagnosis");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_TRUE(contains(out.output, "569 rows, 31 columns")) << out.output;
  EXPECT_TRUE(contains(out.output, "30 numeric and 0 categorical columns")) << out.output;
  EXPECT_TRUE(contains(out.output, "benign                    357 rows")) << out.output;
  EXPECT_TRUE(contains(out.output, "malignant                 212 rows")) << out.output;
  EXPECT_TRUE(contains(out.output, "mean radius")) << out.output;
  // 569 rows: test round(0.2 N) = 114, validation round(0.1 N) = 57, train the rest.
  EXPECT_TRUE(contains(out.output, "train           398 rows")) << out.output;
  EXPECT_TRUE(contains(out.output, "test            114 rows")) << out.output;
}

TEST(SchemaCommand, JsonHoldsTheSameFacts) {
  testing::TempDir dir;
  const std::string json = (dir.path() / "schema.json").string();
  auto out = run_credence("schema '" + kCsv + "' --target diagnosis --seed 3 --json '" + json + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  std::ifstream in(json);
  std::stringstream buffer;
  buffer << in.rdbuf();
  const std::string text = buffer.str();
  EXPECT_TRUE(contains(text, "\"rows\": 569")) << text;
  EXPECT_TRUE(contains(text, "\"numeric_columns\": 30")) << text;
  EXPECT_TRUE(contains(text, "{\"index\": 0, \"name\": \"benign\", \"rows\": 357}")) << text;
  EXPECT_TRUE(contains(text, "{\"index\": 1, \"name\": \"malignant\", \"rows\": 212}")) << text;
  EXPECT_TRUE(contains(text, "\"seed\": 3")) << text;
  EXPECT_TRUE(contains(text, "\"train\": 398, \"validation\": 57, \"test\": 114")) << text;
  // The JSON is parsed by Python's json module as an outside check of its syntax.
  const std::string check = std::string("'") + CREDENCE_PYTHON +
                            "' -c 'import json,sys; d=json.load(open(sys.argv[1])); "
                            "assert len(d[\"columns\"]) == 31' '" + json + "'";
  EXPECT_EQ(std::system(check.c_str()), 0);
  // Nothing but the JSON is left in the directory (the temporary file was renamed).
  int files = 0;
  for (const auto& entry : std::filesystem::directory_iterator(dir.path())) {
    (void)entry;
    ++files;
  }
  EXPECT_EQ(files, 1);
}

TEST(SchemaCommand, RaggedCsvExitsTwoNamingTheLine) {
  testing::TempDir dir;
  const std::string path = dir.write("ragged.csv", "a,b,y\n1,2,p\n3,4,q\n5,6,7,p\n");
  const std::string json = (dir.path() / "out.json").string();
  auto out = run_credence("schema '" + path + "' --target y --json '" + json + "'");
  EXPECT_EQ(out.exit_code, 2) << out.output;
  EXPECT_TRUE(contains(out.output, "ragged.csv:4:4:")) << out.output;
  EXPECT_TRUE(contains(out.output, "row 3 has 4 fields but the header has 3")) << out.output;
  EXPECT_FALSE(std::filesystem::exists(json));  // no half-written output
}

TEST(SchemaCommand, UnknownTargetExitsTwoListingColumns) {
  auto out = run_credence("schema '" + kCsv + "' --target outcome");
  EXPECT_EQ(out.exit_code, 2) << out.output;
  EXPECT_TRUE(contains(out.output, "'outcome' is not in the header")) << out.output;
  EXPECT_TRUE(contains(out.output, "available columns: 'mean radius', 'mean texture'")) << out.output;
  EXPECT_TRUE(contains(out.output, "'diagnosis'")) << out.output;
}

TEST(SchemaCommand, DataFlagsReachTheLibrary) {
  testing::TempDir dir;
  std::string csv = "id;zone;v;y\n";
  for (int i = 0; i < 24; ++i) {
    csv += std::to_string(i) + ";" + (i % 3 ? "1" : "2") + ";" + (i == 5 ? "-1" : std::to_string(i)) +
           ";" + (i % 2 ? "a" : "b") + "\n";
  }
  const std::string path = dir.write("flags.csv", csv);
  auto out = run_credence("schema '" + path +
                          "' --target y --delimiter ';' --categorical zone --drop id --na=-1 "
                          "--impute median --test-fraction 0.25 --val-fraction 0");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_TRUE(contains(out.output, "1 numeric and 1 categorical columns, 4 values per row"))
      << out.output;  // v, plus zone one-hot over (missing), 1, 2
  EXPECT_TRUE(contains(out.output, "test              6 rows")) << out.output;
  auto bad = run_credence("schema '" + path + "' --target y --impute mean");
  EXPECT_EQ(bad.exit_code, 2) << bad.output;
  EXPECT_TRUE(contains(bad.output, "--impute 'mean' is not one of: none, median")) << bad.output;
}

}  // namespace
}  // namespace credence
