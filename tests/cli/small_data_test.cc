// Small and rare data are named, not hidden: a class with fewer than 5 rows, a split part
// without a class, a network with far more parameters than training rows, bootstrap
// intervals on few rows and a temperature fitted on few rows each get one warning with
// their numbers (thresholds in data.h, credence/assess.h and report/verdict_output.h, ours). The
// table is written here.
#include <gtest/gtest.h>

#include <string>

#include "testing/run_command.h"
#include "testing/temp_dir.h"

namespace credence {
namespace {

using testing::run_credence;

std::size_t count(const std::string& text, const std::string& piece) {
  std::size_t n = 0;
  for (std::size_t at = text.find(piece); at != std::string::npos; at = text.find(piece, at + 1)) ++n;
  return n;
}

TEST(SmallData, ATinyClassAMissingClassAndTooManyParametersAreNamedOnceEach) {
  // 60 rows; class 'rare' has 3 of them, so a 0.1 validation part cannot hold one.
  std::string csv = "a,b,y\n";
  for (int i = 0; i < 60; ++i) {
    csv += std::to_string(i % 7) + "," + std::to_string((i * 3) % 11) + "," +
           (i < 3 ? "rare" : i % 2 ? "yes" : "no") + "\n";
  }
  testing::TempDir dir;
  const std::string table = dir.write("small.csv", csv);
  auto out = run_credence("train '" + table + "' --target y --hidden 128 --method adam --epochs 2 "
                          "--chains 1 --out '" + (dir.path() / "small.h5").string() + "'");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  EXPECT_EQ(count(out.output, "class 'rare' has only 3 rows (fewer than 5)"), 1u) << out.output;
  EXPECT_EQ(count(out.output, "validation rows (6) hold no row of class 'rare' (3 in the whole table)"), 1u)
      << out.output;
  // 128 hidden units on 2 inputs and 3 classes: (2 + 1) * 128 + (128 + 1) * 3 = 771 parameters
  // for the 42 training rows (60 less 12 test and 6 validation rows).
  EXPECT_EQ(count(out.output, "771 parameters for 42 training rows"), 1u) << out.output;

  // Scored on its 12 test rows with a temperature fitted on its 6 validation rows.
  auto assess = run_credence("assess '" + (dir.path() / "small.h5").string() + "' '" + table +
                             "' --bootstrap 50 --temperature-scale");
  ASSERT_EQ(assess.exit_code, 0) << assess.output;
  EXPECT_EQ(count(assess.output, "bootstrap intervals rest on only 12 test rows (fewer than 30)"), 1u)
      << assess.output;
  EXPECT_EQ(count(assess.output, "fitted on only 6 validation rows (fewer than 50)"), 1u) << assess.output;
}

}  // namespace
}  // namespace credence
