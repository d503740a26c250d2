// The executable's frame: help, version and usage errors (exit codes of DESIGN.md section 4).
#include <gtest/gtest.h>

#include "credence/version.h"
#include "testing/run_command.h"

namespace credence {
namespace {

using testing::run_credence;

TEST(CliMain, HelpListsTheCommands) {
  auto out = run_credence("--help");
  EXPECT_EQ(out.exit_code, 0);
  EXPECT_NE(out.output.find("schema"), std::string::npos) << out.output;
}

TEST(CliMain, VersionPrintsTheBuildVersion) {
  auto out = run_credence("--version");
  EXPECT_EQ(out.exit_code, 0);
  EXPECT_NE(out.output.find(kVersion), std::string::npos) << out.output;
}

TEST(CliMain, UnknownCommandIsAUsageError) {
  auto out = run_credence("frobnicate");
  EXPECT_EQ(out.exit_code, 2) << out.output;
  EXPECT_NE(out.output.find("--help"), std::string::npos) << out.output;
}

TEST(CliMain, NoCommandIsAUsageError) {
  auto out = run_credence("");
  EXPECT_EQ(out.exit_code, 2) << out.output;
}

}  // namespace
}  // namespace credence
