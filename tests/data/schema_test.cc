// Column roles and types, missing values and classes: refusals by name and the parsed schema.
// Expected values are worked out by hand from the small tables in each test.
#include <gtest/gtest.h>

#include <string>

#include "credence/data.h"
#include "data/test_tables.h"

namespace credence {
namespace {

using testing::expect_invalid;
using testing::schema_of;

using testing::target;

// 24 rows, two classes, a numeric and a categorical feature: a valid base table.
std::string base_table() {
  std::string csv = "age,city,y\n";
  const char* cities[] = {"north", "south", "east"};
  for (int i = 0; i < 24; ++i) {
    csv += std::to_string(20 + i) + "," + cities[i % 3] + "," + (i % 2 ? "yes" : "no") + "\n";
  }
  return csv;
}

TEST(Schema, ValidTableGetsRolesTypesAndSortedClasses) {
  auto s = schema_of(base_table(), target("y"));
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  ASSERT_EQ(s->columns.size(), 3u);
  EXPECT_EQ(s->columns[0].type, ColumnType::kNumeric);
  EXPECT_EQ(s->columns[1].type, ColumnType::kCategorical);
  EXPECT_EQ(s->columns[1].levels, 3);
  EXPECT_EQ(s->columns[2].role, ColumnRole::kTarget);
  EXPECT_EQ(s->class_names, (std::vector<std::string>{"no", "yes"}));
  EXPECT_FALSE(s->classes_numeric);
  EXPECT_EQ(s->class_counts, (std::vector<std::int64_t>{12, 12}));
  EXPECT_EQ(s->labels[0], 0);
  EXPECT_EQ(s->labels[1], 1);
}

TEST(Schema, UnknownTargetListsTheAvailableColumns) {
  auto s = schema_of(base_table(), target("outcome"));
  expect_invalid(s.status(), {"data.csv:", "'outcome' is not in the header",
                              "available columns: 'age', 'city', 'y'"});
}

TEST(Schema, NoTargetAsksForOne) {
  Result<Table> t = testing::parse(base_table());
  ASSERT_TRUE(t.ok());
  expect_invalid(infer_schema(*t, {}).status(), {"--target", "'age', 'city', 'y'"});
}

TEST(Schema, SingleClassIsRefusedWithColumnAndCount) {
  auto s = schema_of("x,y\n1,a\n2,a\n3,a\n", target("y"));
  expect_invalid(s.status(), {"'y'", "one class only ('a', all 3 rows)"});
}

TEST(Schema, AllMissingColumnIsRefusedByName) {
  auto s = schema_of("x,empty,y\n1,,a\n2,NA,b\n3,,a\n", target("y"));
  expect_invalid(s.status(), {"column 'empty' (column 2)", "no values (all 3 rows",
                              "--drop 'empty'"});
}

TEST(Schema, NumberWithAStrayLetterNamesTheCell) {
  // Row 3 of 'age' sits on line 4, column 1.
  auto s = schema_of("age,y\n31,a\n45,b\n3.5x,a\n52,b\n", target("y"));
  expect_invalid(s.status(), {"data.csv:4:1:", "'3.5x' is not a number in column 'age'",
                              "--categorical 'age'"});
}

TEST(Schema, StrayLetterColumnIsAcceptedWhenMarkedCategorical) {
  SchemaOptions options = target("y");
  options.categorical = {"age"};
  auto s = schema_of("age,y\n31,a\n45,b\n3.5x,a\n31,b\n", options);
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  EXPECT_EQ(s->columns[0].type, ColumnType::kCategorical);
  EXPECT_EQ(s->columns[0].levels, 3);
}

TEST(Schema, MissingValuesAreRefusedListingEachColumn) {
  auto s = schema_of("a,b,c,y\n1,x,5,p\n,x,6,q\n3,?,NA,p\n4,z,7,q\n,x,8,p\n", target("y"));
  expect_invalid(s.status(),
                 {"3 columns have missing values",
                  "column 'a' (column 1): 2 missing, first at data.csv:3 (row 2)",
                  "column 'b' (column 2): 1 missing, first at data.csv:4 (row 3)",
                  "column 'c' (column 3): 1 missing, first at data.csv:4 (row 3)",
                  "--impute median"});
}

TEST(Schema, MissingTargetValueIsRefusedEvenWhenImputing) {
  SchemaOptions options = target("y");
  options.impute = ImputeMethod::kMedian;
  auto s = schema_of("x,y\n1,a\n2,\n3,b\n", options);
  expect_invalid(s.status(), {"data.csv:3:2:", "target column 'y' has 1 missing value"});
}

TEST(Schema, FreeTextColumnIsRefusedByName) {
  std::string csv = "note,x,y\n";
  for (int i = 0; i < 30; ++i) {
    csv += "comment number " + std::to_string(i) + "," + std::to_string(i) + "," +
           (i % 2 ? "a" : "b") + "\n";
  }
  auto s = schema_of(csv, target("y"));
  expect_invalid(s.status(), {"column 'note' (column 1) has 30 distinct values in 30 rows",
                              "identifier or free text", "--id 'note'", "--drop 'note'"});
  SchemaOptions as_id = target("y");
  as_id.id = {"note"};
  auto ok = schema_of(csv, as_id);
  ASSERT_TRUE(ok.ok()) << ok.status().to_string();
  EXPECT_EQ(ok->columns[0].role, ColumnRole::kId);
}

TEST(Schema, MoreThanAThousandLevelsIsRefused) {
  std::string csv = "code,y\n";
  for (int i = 0; i < 3000; ++i) {
    csv.append("c").append(std::to_string(i % 1500)).append(i % 2 ? ",a\n" : ",b\n");
  }
  auto s = schema_of(csv, target("y"));
  expect_invalid(s.status(), {"column 'code' (column 1) has 1500 distinct values"});
}

TEST(Schema, UnknownOverrideNameIsRefused) {
  SchemaOptions options = target("y");
  options.drop = {"agee"};
  auto s = schema_of(base_table(), options);
  expect_invalid(s.status(), {"--drop names column 'agee'", "did you mean 'age'?"});
}

TEST(Schema, NumericClassNamesSortNumerically) {
  auto s = schema_of("x,y\n1,10\n2,9\n3,2\n4,10\n", target("y"));
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  EXPECT_TRUE(s->classes_numeric);
  EXPECT_EQ(s->class_names, (std::vector<std::string>{"2", "9", "10"}));
  EXPECT_EQ(s->labels, (std::vector<std::int32_t>{2, 1, 0, 2}));
  EXPECT_EQ(s->class_counts, (std::vector<std::int64_t>{1, 1, 2}));
}

TEST(Schema, TargetReadAsNumbersStillGetsClasses) {
  Result<Table> t = testing::parse("x,y\n1,1\n2,0\n3,1\n");
  ASSERT_TRUE(t.ok());
  auto s = infer_schema(*t, target("y"));
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  EXPECT_EQ(s->class_names, (std::vector<std::string>{"0", "1"}));
  EXPECT_EQ(s->labels, (std::vector<std::int32_t>{1, 0, 1}));
}

TEST(Schema, DroppedAndIdColumnsAreNotFeatures) {
  SchemaOptions options = target("y");
  options.drop = {"city"};
  options.id = {"age"};
  auto s = schema_of("age,city,z,y\n1,a,5,p\n2,b,6,q\n", options);
  ASSERT_TRUE(s.ok()) << s.status().to_string();
  EXPECT_EQ(s->columns[0].role, ColumnRole::kId);
  EXPECT_EQ(s->columns[1].role, ColumnRole::kDropped);
  EXPECT_EQ(s->columns[2].role, ColumnRole::kFeature);
}

TEST(Schema, NoFeatureLeftIsRefused) {
  SchemaOptions options = target("y");
  options.drop = {"x"};
  expect_invalid(schema_of("x,y\n1,a\n2,b\n", options).status(), {"no feature columns"});
}

}  // namespace
}  // namespace credence
