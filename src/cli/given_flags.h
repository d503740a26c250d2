// The flags a user typed, by long name, for the method-flag rules (credence/method_flags.h).
#pragma once

#include <CLI/CLI.hpp>
#include <set>
#include <string>

namespace credence::cli {

/// The long names ("--lr") of the options of `command` the user gave.
std::set<std::string> given_flags(const CLI::App& command);

}  // namespace credence::cli
