// Regression (issue 19, item 5): messages about a table's cells and column names.
// - A table saved with decimal commas ("3,14", ';' between fields, or quoted under ',')
//   was read as text: each distinct number became a category, and the run failed later
//   on a category never seen in training. It is now refused up front, saying the numbers
//   look like decimal commas and what to do.
// - A numeric column with several bad cells named only the first, one per run; the
//   message now lists up to five (row, line and text) and counts the rest.
// - A mistyped column name listed every column; it now suggests the closest name (edit
//   distance), and a header that reads as one column hints at the delimiter.
#include <gtest/gtest.h>

#include <cstdint>
#include <string>
#include <vector>

#include "credence/data.h"
#include "data/closest_name.h"
#include "data/csv_reader.h"
#include "data/test_tables.h"

namespace credence {
namespace {

using testing::expect_invalid;
using testing::schema_of;

using testing::target;

// 24 rows; 'pressure' repeats four decimal-comma values, so that as text it is a small
// set of categories (which the old reader accepted) rather than free text.
std::string decimal_comma_table(char delimiter, bool quoted) {
  const char* values[] = {"3,14", "2,5", "-0,75", "1.204,5"};
  const std::string d(1, delimiter);
  std::string csv = "unit" + d + "pressure" + d + "fault\n";
  for (int i = 0; i < 24; ++i) {
    const std::string v = values[i % 4];
    csv += std::to_string(i) + d + (quoted ? "\"" + v + "\"" : v) + d + (i % 3 ? "no" : "yes") + "\n";
  }
  return csv;
}

TEST(Issue19, DecimalCommasUnderASemicolonAreNamedAsSuch) {
  ReadOptions read;
  read.delimiter = ';';
  auto s = schema_of(decimal_comma_table(';', false), target("fault"), read);
  expect_invalid(s.status(), {"data.csv:2:2:", "column 'pressure'", "'3,14' in row 1",
                              "24 of its 24 values", "look like decimal commas",
                              "points as decimal marks", "--categorical 'pressure'"});
}

TEST(Issue19, QuotedDecimalCommasUnderACommaAreNamedAsSuch) {
  auto s = schema_of(decimal_comma_table(',', true), target("fault"));
  expect_invalid(s.status(), {"column 'pressure'", "look like decimal commas"});
}

TEST(Issue19, DecimalCommaColumnMarkedCategoricalIsAccepted) {
  SchemaOptions options = target("fault");
  options.categorical = {"pressure"};
  auto s = schema_of(decimal_comma_table(',', true), options);
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  EXPECT_EQ(s->columns[1].type, ColumnType::kCategorical);
}

TEST(Issue19, SemicolonFileReadWithCommasHintsAtTheDelimiter) {
  // Read with the default ',': the header is one column, the rows split at the commas.
  Result<Table> t = testing::parse(decimal_comma_table(';', false));
  expect_invalid(t.status(), {"data.csv:2:", "the header reads as one column",
                              "--delimiter ';'", "decimal commas"});
}

TEST(Issue19, SemicolonHeaderAboveWholeNumbersHintsAtTheDelimiter) {
  auto s = schema_of("unit;age;fault\n1;40;no\n2;51;yes\n", target("fault"));
  expect_invalid(s.status(), {"'fault' is not in the header", "--delimiter ';'"});
}

TEST(Issue19, DecimalCommaInNewRowsIsNamedAtPredictTime) {
  // Fitted on points; the rows to predict were saved with a decimal comma (quoted).
  const char* csv = "x,y\n1.5,a\n2.5,b\n3.5,a\n4.5,b\n";
  ReadOptions read;
  read.text_columns = {"y"};
  Result<Table> table = testing::parse(csv, read);
  ASSERT_TRUE(table.ok());
  Result<Schema> schema = infer_schema(*table, target("y"));
  ASSERT_TRUE(schema.ok()) << schema.status().to_string();
  const std::vector<std::int64_t> train = {0, 1, 2, 3};
  Result<Preprocessing> prep = fit_preprocessing(*table, *schema, train, {});
  ASSERT_TRUE(prep.ok()) << prep.status().to_string();
  ReadOptions fresh_read;
  fresh_read.text_columns = text_columns_of(*prep);
  Result<Table> fresh = parse_table("x\n2.0\n\"3,25\"\n", "new.csv", fresh_read);
  ASSERT_TRUE(fresh.ok());
  expect_invalid(transform_table(*prep, *fresh).status(),
                 {"new.csv:3:1:", "'3,25' is not a number in column 'x'", "decimal comma",
                  "points as decimal marks"});
}

TEST(Issue19, DecimalCommaNumberShapes) {
  // Common practice for locales with a decimal comma: points group thousands.
  for (const char* yes : {"3,14", "-0,5", "+2,0", "1.234,5", "12.345.678,25", "0,001"}) {
    EXPECT_TRUE(data::decimal_comma_number(yes)) << yes;
  }
  for (const char* no : {"3.14", "3,", ",5", "a,b", "1,2,3", "12.34,5", "1.2345,6", "3,1e2", ""}) {
    EXPECT_FALSE(data::decimal_comma_number(no)) << no;
  }
}

TEST(Issue19, SeveralBadCellsAreListedInOneMessage) {
  // 30 rows; rows 4, 8, ..., 28 (seven cells) are not numbers.
  std::string csv = "age,y\n";
  for (int i = 1; i <= 30; ++i) {
    csv += (i % 4 == 0 ? "x" + std::to_string(i) : std::to_string(20 + i)) + "," +
           (i % 2 ? "a" : "b") + "\n";
  }
  auto s = schema_of(csv, target("y"));
  // Row r stands on line r + 1 (the header is line 1).
  expect_invalid(s.status(),
                 {"data.csv:5:1:", "'x4' is not a number in column 'age'", "(row 4; 23 of",
                  "6 more cells of the column are not numbers",
                  "row 8 'x8' (line 9), row 12 'x12' (line 13), row 16 'x16' (line 17), "
                  "row 20 'x20' (line 21) and 2 more",
                  "fix the cells", "--categorical 'age'"});
}

TEST(Issue19, OneBadCellKeepsTheShortMessage) {
  auto s = schema_of("age,y\n31,a\n45,b\n3.5x,a\n52,b\n", target("y"));
  expect_invalid(s.status(), {"data.csv:4:1:", "'3.5x' is not a number", "fix the cell,"});
  EXPECT_EQ(s.status().message().find("more cell"), std::string::npos);
}

std::string named_table() {
  std::string csv = "unit_id,compressor_age_y,oil_level_pct,site,fault_14d\n";
  for (int i = 0; i < 24; ++i) {
    csv += std::to_string(i) + "," + std::to_string(i % 7) + "," + std::to_string(50 + i) + "," +
           (i % 2 ? "north" : "south") + "," + (i % 3 ? "no" : "yes") + "\n";
  }
  return csv;
}

TEST(Issue19, WrongTargetSuggestsTheClosestColumnOnly) {
  Result<Table> t = testing::parse(named_table(), ReadOptions{});
  ASSERT_TRUE(t.ok());
  for (const char* typed : {"fault14d", "Fault_14D", "fault_14", "fault"}) {
    auto s = infer_schema(*t, target(typed));
    expect_invalid(s.status(), {"is not in the header", "did you mean 'fault_14d'?"});
    EXPECT_EQ(s.status().message().find("oil_level_pct"), std::string::npos)
        << s.status().message();
  }
}

TEST(Issue19, OtherColumnFlagsSuggestTheClosestColumn) {
  Result<Table> t = testing::parse(named_table(), ReadOptions{});
  ASSERT_TRUE(t.ok());
  SchemaOptions drop = target("fault_14d");
  drop.drop = {"oil_level"};
  expect_invalid(infer_schema(*t, drop).status(),
                 {"--drop names column 'oil_level'", "did you mean 'oil_level_pct'?"});
  SchemaOptions id = target("fault_14d");
  id.id = {"unitid"};
  expect_invalid(infer_schema(*t, id).status(), {"--id", "did you mean 'unit_id'?"});
  SchemaOptions categorical = target("fault_14d");
  categorical.categorical = {"sites"};
  expect_invalid(infer_schema(*t, categorical).status(),
                 {"--categorical", "did you mean 'site'?"});
}

TEST(Issue19, NoCloseColumnListsTheHeader) {
  Result<Table> t = testing::parse(named_table(), ReadOptions{});
  ASSERT_TRUE(t.ok());
  auto s = infer_schema(*t, target("outcome"));
  expect_invalid(s.status(), {"available columns: 'unit_id', 'compressor_age_y'"});
}

TEST(Issue19, EditDistanceMatchesWorkedExamples) {
  // The usual textbook examples of Levenshtein distance (from memory): kitten -> sitting
  // takes 3 edits, flaw -> lawn 2; and the empty string is as far as the other's length.
  EXPECT_EQ(data::edit_distance("kitten", "sitting"), 3u);
  EXPECT_EQ(data::edit_distance("flaw", "lawn"), 2u);
  EXPECT_EQ(data::edit_distance("", "abc"), 3u);
  EXPECT_EQ(data::edit_distance("AbC", "abc"), 0u);  // case is ignored
  EXPECT_EQ(data::closest_name({"age", "city", "y"}, "outcome"), -1);
  EXPECT_EQ(data::closest_name({"age", "agent"}, "agee"), 0);  // ties go to the nearer name
}

}  // namespace
}  // namespace credence
