// Shared data flags: CLI11 bindings and their conversion into DataOptions.
#include "cli/data_options.h"

#include <fmt/format.h>

namespace credence::cli {

void add_data_options(CLI::App& command, DataFlags& flags) {
  DataOptions& o = flags.options;
  // Required, but checked in resolve_data_options: `train --resume` takes it from the run.
  command.add_option("--target", o.schema.target, "Class column, by name (required)")
      ->group("Data");
  command.add_option("--positive-class", o.schema.positive_class,
                     "Two classes: the class decisions, curves and intervals are about "
                     "(default: the class that sorts second)")
      ->group("Data");
  command.add_option("--delimiter", flags.delimiter, "Field separator: one character, or 'tab'")
      ->capture_default_str()
      ->group("Data");
  command
      .add_option_function<std::string>(
          "--na",
          [&flags](const std::string& text) {
            flags.na = text;
            flags.na_given = true;
          },
          "Comma-separated cell texts that mean missing (an empty item is an empty cell); "
          "default: empty, NA, NaN, null, ?")
      ->group("Data");
  command.add_option("--categorical", o.schema.categorical,
                     "Columns to treat as categorical even when they hold numbers")
      ->delimiter(',')
      ->group("Data");
  command.add_option("--drop", o.schema.drop, "Columns to ignore")->delimiter(',')->group("Data");
  command.add_option("--id", o.schema.id, "Identifier columns: not inputs, passed through to "
                     "predictions")
      ->delimiter(',')
      ->group("Data");
  command.add_option("--impute", flags.impute, "Missing values: none (refuse) or median "
                     "(numeric: training median; categorical: a '(missing)' level)")
      ->capture_default_str()
      ->group("Data");
  command.add_option("--unseen", flags.unseen, "A category the training rows never showed: "
                     "error, or ignore (all zeros, with a warning)")
      ->capture_default_str()
      ->group("Data");
  command.add_option("--test-fraction", o.split.test_fraction,
                     "Fraction of each class held out for testing")
      ->capture_default_str()
      ->group("Split");
  command.add_option("--val-fraction", o.split.val_fraction,
                     "Fraction of each class held out for validation")
      ->capture_default_str()
      ->group("Split");
  command.add_option("--seed", o.split.seed, "Seed of the split's shuffle")
      ->capture_default_str()
      ->group("Split");
}

Result<DataOptions> resolve_data_options(const DataFlags& flags) {
  DataOptions o = flags.options;
  if (o.schema.target.empty()) {
    return Status::invalid_input("--target is required: name the class column (--target COLUMN)");
  }
  if (flags.delimiter == "tab" || flags.delimiter == "\\t") {
    o.read.delimiter = '\t';
  } else if (flags.delimiter.size() == 1 && flags.delimiter[0] != '"' &&
             flags.delimiter[0] != '\n' && flags.delimiter[0] != '\r') {
    o.read.delimiter = flags.delimiter[0];
  } else {
    return Status::invalid_input(fmt::format(
        "--delimiter '{}' must be one character other than a quote or a line break (or 'tab')",
        flags.delimiter));
  }
  if (flags.na_given) {
    o.read.na_tokens.clear();
    std::size_t start = 0;
    while (true) {
      const std::size_t comma = flags.na.find(',', start);
      o.read.na_tokens.push_back(flags.na.substr(start, comma - start));
      if (comma == std::string::npos) break;
      start = comma + 1;
    }
  }
  if (flags.impute == "none") {
    o.schema.impute = ImputeMethod::kNone;
  } else if (flags.impute == "median") {
    o.schema.impute = ImputeMethod::kMedian;
  } else {
    return Status::invalid_input(
        fmt::format("--impute '{}' is not one of: none, median", flags.impute));
  }
  Result<UnseenPolicy> unseen = parse_unseen_flag(flags.unseen);
  if (!unseen.ok()) return unseen.status();
  o.preprocess.unseen = *unseen;
  return o;
}

Result<UnseenPolicy> parse_unseen_flag(const std::string& text) {
  if (text == "error") return UnseenPolicy::kError;
  if (text == "ignore") return UnseenPolicy::kIgnore;
  return Status::invalid_input(fmt::format("--unseen '{}' is not one of: error, ignore", text));
}

}  // namespace credence::cli
