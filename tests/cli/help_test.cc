// Help pages (issue 19, item 5): credence's own layout. Every page uses one heading style
// (a lowercase word on its own line, no punctuation), its sections come in the order of
// the work (data, network, method, budget, output), every flag is placed in a section,
// no line runs past 88 columns, and each page ends with examples of its own command.
#include <gtest/gtest.h>

#include <algorithm>
#include <sstream>
#include <string>
#include <vector>

#include "cli/help_layout.h"
#include "testing/run_command.h"

namespace credence {
namespace {

using testing::run_credence;

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> lines;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);) lines.push_back(line);
  return lines;
}

// A heading is a line that starts at column 1; the first line is the page's title.
std::vector<std::string> headings(const std::vector<std::string>& lines) {
  std::vector<std::string> out;
  for (std::size_t i = 1; i < lines.size(); ++i) {
    if (!lines[i].empty() && lines[i][0] != ' ') out.push_back(lines[i]);
  }
  return out;
}

std::vector<std::string> commands() {
  auto out = run_credence("--help");
  std::vector<std::string> names;
  bool inside = false;
  for (const std::string& line : lines_of(out.output)) {
    if (!line.empty() && line[0] != ' ') inside = line == "commands";
    if (inside && line.size() > 2 && line[0] == ' ' && line[2] != ' ') {
      names.push_back(line.substr(2, line.find(' ', 2) - 2));
    }
  }
  return names;
}

void check_page(const std::string& command) {
  SCOPED_TRACE("credence " + command + " --help");
  auto out = run_credence(command + " --help");
  ASSERT_EQ(out.exit_code, 0) << out.output;
  const std::vector<std::string> lines = lines_of(out.output);
  ASSERT_FALSE(lines.empty());
  EXPECT_EQ(lines[0].rfind("credence" + std::string(command.empty() ? "" : " ") + command + ": ", 0), 0u)
      << lines[0];
  std::size_t last = 0;
  for (const std::string& h : headings(lines)) {
    const auto* begin = std::begin(cli::kHelpSections);
    const auto* at = std::find(begin, std::end(cli::kHelpSections), h);
    ASSERT_NE(at, std::end(cli::kHelpSections)) << "not one of credence's headings: '" << h << "'";
    const auto index = static_cast<std::size_t>(at - begin);
    EXPECT_GT(index + 1, last) << "'" << h << "' is out of the workflow order";
    last = index + 1;
    EXPECT_NE(h, "other") << "a flag has no section: add it to flag_sections()\n" << out.output;
  }
  const std::vector<std::string> found = headings(lines);
  ASSERT_FALSE(found.empty());
  EXPECT_EQ(found.front(), "usage");
  EXPECT_EQ(found.back(), "examples");
  const std::string example = "\n  credence " + command + (command.empty() ? "" : " ");
  EXPECT_NE(out.output.find(example), std::string::npos) << out.output;
  for (const std::string& line : lines) EXPECT_LE(line.size(), 88u) << line;
  // CLI11's own layout, which mixed two heading styles, is gone.
  EXPECT_EQ(out.output.find("OPTIONS:"), std::string::npos) << out.output;
  EXPECT_EQ(out.output.find("[Option Group"), std::string::npos) << out.output;
}

TEST(Help, TopPageListsTheCommandsInWorkflowOrder) {
  const std::vector<std::string> names = commands();
  ASSERT_GE(names.size(), 11u);
  EXPECT_EQ(names[0], "synth");
  EXPECT_EQ(names[1], "schema");
  EXPECT_EQ(names[2], "train");
  check_page("");
}

TEST(Help, EveryCommandHasOneHeadingStyleSectionsInOrderAndExamples) {
  for (const std::string& command : commands()) check_page(command);
}

TEST(Help, TrainGroupsItsFlagsByTheWork) {
  auto out = run_credence("train --help");
  const std::vector<std::string> h = headings(lines_of(out.output));
  const std::vector<std::string> expected = {"usage", "arguments", "data", "network", "method",
                                             "budget", "output", "general", "examples"};
  EXPECT_EQ(h, expected) << out.output;
  // A flag sits under its section: --hidden under network, --epochs under budget.
  const std::size_t network = out.output.find("\nnetwork\n");
  const std::size_t method = out.output.find("\nmethod\n");
  const std::size_t budget = out.output.find("\nbudget\n");
  const std::size_t output = out.output.find("\noutput\n");
  const std::size_t hidden = out.output.find("  --hidden ");
  const std::size_t epochs = out.output.find("  --epochs ");
  EXPECT_TRUE(network < hidden && hidden < method) << out.output;
  EXPECT_TRUE(budget < epochs && epochs < output) << out.output;
}

}  // namespace
}  // namespace credence
