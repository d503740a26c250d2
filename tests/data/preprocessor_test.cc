// Preprocessing: standardisation and one-hot encoding fitted on training rows, imputation,
// unseen categories and encoding new tables by column name. Expected numbers are worked by
// hand (population standard deviation, ddof = 0, as numpy.std's default).
#include <gtest/gtest.h>

#include <cmath>

#include "credence/data.h"
#include "data/test_tables.h"

namespace credence {
namespace {

using testing::expect_invalid;

struct Fitted {
  Table table;
  Schema schema;
  Preprocessing prep;
};

// Reads `csv`, infers the schema and fits on `train` rows.
Result<Fitted> fit(std::string_view csv, std::vector<std::int64_t> train, SchemaOptions options,
                   PreprocessOptions pre = {}) {
  ReadOptions read;
  read.text_columns = {options.target};
  for (const std::string& c : options.categorical) read.text_columns.push_back(c);
  Result<Table> table = testing::parse(csv, read);
  if (!table.ok()) return table.status();
  Result<Schema> schema = infer_schema(*table, options);
  if (!schema.ok()) return schema.status();
  Result<Preprocessing> prep = fit_preprocessing(*table, *schema, train, pre);
  if (!prep.ok()) return prep.status();
  return Fitted{std::move(*table), std::move(*schema), std::move(*prep)};
}

SchemaOptions target_y() {
  SchemaOptions o;
  o.target = std::string(1, 'y');  // (assigning the literal trips a GCC 12 -Wrestrict false positive)
  return o;
}

constexpr const char* kSmall =
    "x,c,y\n"
    "1,red,a\n"
    "2,blue,b\n"
    "3,red,a\n"
    "6,green,b\n"   // row 3: not a training row below
    "100,red,a\n";  // row 4: not a training row

TEST(Preprocessor, StandardisesWithTrainingRowsOnly) {
  auto f = fit(kSmall, {0, 1, 2}, target_y());
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  const FeatureEncoding& x = f->prep.features[0];
  // Training values 1, 2, 3: mean 2, population variance 2/3.
  EXPECT_DOUBLE_EQ(x.mean, 2.0);
  EXPECT_DOUBLE_EQ(x.scale, std::sqrt(2.0 / 3.0));
  EXPECT_EQ(x.offset, 0);
  // Categories seen in the training rows only: 'green' is not among them.
  const FeatureEncoding& c = f->prep.features[1];
  EXPECT_EQ(c.categories, (std::vector<std::string>{"blue", "red"}));
  EXPECT_EQ(c.offset, 1);
  EXPECT_EQ(f->prep.input_width, 3);
  EXPECT_EQ(f->prep.class_names, (std::vector<std::string>{"a", "b"}));

  std::vector<std::int64_t> rows = {0, 1, 4};
  auto m = transform_rows(f->prep, f->table, rows);
  ASSERT_TRUE(m.ok()) << m.status().to_string();
  ASSERT_EQ(m->rows(), 3);
  ASSERT_EQ(m->cols(), 3);
  const double s = std::sqrt(2.0 / 3.0);
  EXPECT_FLOAT_EQ((*m)(0, 0), static_cast<float>(-1.0 / s));
  EXPECT_FLOAT_EQ((*m)(0, 2), static_cast<float>(98.0 / s));
  EXPECT_EQ((*m)(1, 0), 0.0f);  // red -> (blue, red) = (0, 1)
  EXPECT_EQ((*m)(2, 0), 1.0f);
  EXPECT_EQ((*m)(1, 1), 1.0f);  // blue
  EXPECT_EQ((*m)(2, 1), 0.0f);
}

TEST(Preprocessor, UnseenCategoryIsAnErrorNamingColumnValueAndLine) {
  auto f = fit(kSmall, {0, 1, 2}, target_y());
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  auto m = transform_table(f->prep, f->table);
  // 'green' is row 3, on line 5, column 2.
  expect_invalid(m.status(), {"data.csv:5:2:", "category 'green' in column 'c'",
                              "--unseen ignore"});
}

TEST(Preprocessor, UnseenCategoryIgnoredBecomesAllZeros) {
  PreprocessOptions pre;
  pre.unseen = UnseenPolicy::kIgnore;
  auto f = fit(kSmall, {0, 1, 2}, target_y(), pre);
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  auto m = transform_table(f->prep, f->table);
  ASSERT_TRUE(m.ok()) << m.status().to_string();
  EXPECT_EQ((*m)(1, 3), 0.0f);
  EXPECT_EQ((*m)(2, 3), 0.0f);
}

TEST(Preprocessor, ConstantColumnIsKeptAndCentred) {
  auto f = fit("k,x,y\n5,1,a\n5,2,b\n5,3,a\n", {0, 1, 2}, target_y());
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  EXPECT_TRUE(f->prep.features[0].constant);
  EXPECT_EQ(f->prep.features[0].scale, 1.0);
  auto m = transform_table(f->prep, f->table);
  ASSERT_TRUE(m.ok());
  EXPECT_EQ(m->row(0).cwiseAbs().maxCoeff(), 0.0f);
}

TEST(Preprocessor, ImputeMedianFillsNumbersAndAddsAMissingLevel) {
  SchemaOptions o = target_y();
  o.impute = ImputeMethod::kMedian;
  // Training rows 0-4; x's observed training values 1, 4, 10, 2: median (2 + 4) / 2 = 3,
  // as numpy.median takes the mean of the two middle values.
  auto f = fit("x,c,y\n1,u,a\n4,,b\n10,v,a\nNA,u,b\n2,?,a\n", {0, 1, 2, 3, 4}, o);
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  const FeatureEncoding& x = f->prep.features[0];
  EXPECT_DOUBLE_EQ(x.impute_value, 3.0);
  // Statistics after imputation: values 1, 4, 10, 3, 2 -> mean 4, variance 10.
  EXPECT_DOUBLE_EQ(x.mean, 4.0);
  EXPECT_DOUBLE_EQ(x.scale, std::sqrt(10.0));
  const FeatureEncoding& c = f->prep.features[1];
  EXPECT_EQ(c.categories, (std::vector<std::string>{"(missing)", "u", "v"}));
  auto m = transform_table(f->prep, f->table);
  ASSERT_TRUE(m.ok()) << m.status().to_string();
  EXPECT_FLOAT_EQ((*m)(0, 3), static_cast<float>(-1.0 / std::sqrt(10.0)));
  EXPECT_EQ((*m)(1, 1), 1.0f);  // row 1's empty c -> "(missing)"
  EXPECT_EQ((*m)(1, 4), 1.0f);  // row 4's '?' -> "(missing)"
}

TEST(Preprocessor, NewTableIsEncodedByColumnName) {
  auto f = fit(kSmall, {0, 1, 2, 3, 4}, target_y());
  ASSERT_TRUE(f.ok()) << f.status().to_string();
  ReadOptions read;
  read.text_columns = text_columns_of(f->prep);
  // Columns in another order, an extra column, no target.
  auto fresh = parse_table("extra,c,x\n9,green,2\n", "new.csv", read);
  ASSERT_TRUE(fresh.ok()) << fresh.status().to_string();
  auto m = transform_table(f->prep, *fresh);
  ASSERT_TRUE(m.ok()) << m.status().to_string();
  auto whole = transform_table(f->prep, f->table);
  ASSERT_TRUE(whole.ok());
  // Row 1 of the fitted table has x = 2 too; categories (blue, green, red).
  EXPECT_EQ((*m)(0, 0), (*whole)(0, 1));
  EXPECT_EQ((*m)(2, 0), 1.0f);

  auto missing = parse_table("c\nred\n", "new.csv", read);
  ASSERT_TRUE(missing.ok());
  expect_invalid(transform_table(f->prep, *missing).status(),
                 {"new.csv:", "column 'x', an input of the model, is not in the header"});
}

TEST(Preprocessor, NewTableWithMissingValueOrTextInNumericColumnIsRefused) {
  auto f = fit(kSmall, {0, 1, 2, 3, 4}, target_y());
  ASSERT_TRUE(f.ok());
  ReadOptions read;
  read.text_columns = text_columns_of(f->prep);
  auto gap = parse_table("x,c\n1,red\nNA,red\n", "new.csv", read);
  ASSERT_TRUE(gap.ok());
  expect_invalid(transform_table(f->prep, *gap).status(),
                 {"new.csv:3:1:", "missing value in column 'x'", "without imputation"});
}

TEST(Preprocessor, LabelsOfANewTableAndAnUnknownClass) {
  auto f = fit(kSmall, {0, 1, 2, 3, 4}, target_y());
  ASSERT_TRUE(f.ok());
  ReadOptions read;
  read.text_columns = text_columns_of(f->prep);
  auto labelled = parse_table("x,c,y\n1,red,b\n2,red,a\n", "new.csv", read);
  ASSERT_TRUE(labelled.ok());
  auto labels = encode_labels(f->prep, *labelled);
  ASSERT_TRUE(labels.ok()) << labels.status().to_string();
  EXPECT_EQ(*labels, (std::vector<std::int32_t>{1, 0}));
  auto odd = parse_table("x,c,y\n1,red,zzz\n", "new.csv", read);
  ASSERT_TRUE(odd.ok());
  expect_invalid(encode_labels(f->prep, *odd).status(),
                 {"new.csv:2:3:", "class 'zzz' in column 'y'", "'a', 'b'"});
}

TEST(Preprocessor, PreprocessingIsAPlainComparableValue) {
  auto f = fit(kSmall, {0, 1, 2}, target_y());
  ASSERT_TRUE(f.ok());
  Preprocessing copy = f->prep;
  EXPECT_EQ(copy, f->prep);  // NaN impute values compare equal
  copy.features[0].mean += 1e-9;
  EXPECT_FALSE(copy == f->prep);
  ASSERT_EQ(f->prep.columns.size(), 3u);
  EXPECT_EQ(f->prep.columns[2].role, ColumnRole::kTarget);
}

}  // namespace
}  // namespace credence
