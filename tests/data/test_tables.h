// Helpers for the data tests: parse CSV text in memory and check error messages.
#pragma once

#include <gtest/gtest.h>

#include <initializer_list>
#include <string>
#include <string_view>

#include "credence/data.h"

namespace credence::testing {

/// parse_table on `csv` as if it were the file "data.csv".
inline Result<Table> parse(std::string_view csv, ReadOptions options = {}) {
  return parse_table(csv, "data.csv", options);
}

/// Schema options naming the target column, all else default.
inline SchemaOptions target(std::string name) {
  SchemaOptions options;
  options.target = std::move(name);
  return options;
}

/// Reads `csv` with the target (and categorical overrides) as text, then infers the schema.
inline Result<Schema> schema_of(std::string_view csv, SchemaOptions options,
                                ReadOptions read = {}) {
  read.text_columns.push_back(options.target);
  for (const std::string& name : options.categorical) read.text_columns.push_back(name);
  Result<Table> table = parse(csv, read);
  if (!table.ok()) return table.status();
  return infer_schema(*table, options);
}

/// Asserts that `status` failed with kInvalidInput and that its message holds every piece.
inline void expect_invalid(const Status& status, std::initializer_list<std::string_view> pieces) {
  ASSERT_FALSE(status.ok()) << "expected a failure";
  EXPECT_EQ(status.code(), StatusCode::kInvalidInput) << status.to_string();
  for (std::string_view piece : pieces) {
    EXPECT_NE(status.message().find(piece), std::string::npos)
        << "message lacks \"" << piece << "\":\n" << status.message();
  }
}

}  // namespace credence::testing
