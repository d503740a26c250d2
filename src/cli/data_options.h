// The data flags shared by every command that reads a labelled table (schema, train, ...).
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "credence/data.h"

namespace credence::cli {

/// What the data flags bind to: the library's settings plus the raw text of the flags
/// that need converting after parsing.
struct DataFlags {
  DataOptions options;            // --target, --categorical, --drop, --id, fractions, --seed
  std::string delimiter = ",";    // --delimiter: one character, or "tab"
  std::string na;                 // --na: comma-separated missing-value tokens; empty = defaults
  bool na_given = false;          // --na was passed (so an empty list means "only empty cells")
  std::string impute = "none";    // --impute: none or median
  std::string unseen = "error";   // --unseen: error or ignore
};

/// Adds --target, --delimiter, --na, --categorical, --drop, --id, --impute, --unseen,
/// --test-fraction, --val-fraction and --seed to `command`, bound to `flags`.
void add_data_options(CLI::App& command, DataFlags& flags);

/// --unseen's text: "error" or "ignore"; kInvalidInput otherwise.
Result<UnseenPolicy> parse_unseen_flag(const std::string& text);

/// Converts the raw flag texts into `flags.options`; kInvalidInput names a bad flag.
Result<DataOptions> resolve_data_options(const DataFlags& flags);

}  // namespace credence::cli
