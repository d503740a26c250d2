// credence's own help layout: one heading style, flags grouped in the order of the work
// (data, network, method, budget, output), and worked examples at the end of every page.
#pragma once

#include <CLI/CLI.hpp>
#include <string>
#include <string_view>
#include <vector>

namespace credence::cli {

/// The help sections in the order they are printed. A flag's section comes from a table
/// of flag names in help_layout.cc (per command where the same flag means different
/// things); a flag missing from it falls under "other".
inline constexpr std::string_view kHelpSections[] = {
    "usage", "commands", "arguments", "data",  "network", "method",
    "budget", "output",  "other",     "general", "examples"};

/// Renders help pages for `credence` and its commands. Install it on the top App before
/// adding the commands: CLI11 copies a parent's formatter into each new subcommand.
class HelpLayout : public CLI::FormatterBase {
 public:
  std::string make_help(const CLI::App* app, std::string name,
                        CLI::AppFormatMode mode) const override;
};

/// The example command lines shown at the end of a command's help ("" is the top page),
/// each with a one-line comment; empty for an unknown command.
struct HelpExample {
  std::string_view comment;
  std::string_view command;
};
std::vector<HelpExample> help_examples(std::string_view command);

}  // namespace credence::cli
