// Reading a table with two threads (one per half of the data) must give the very table, and
// the very refusals, that one thread gives. The reference is the one-thread read, which the
// other data tests check against RFC 4180 (IETF, 2005) and strtod; a few cells are also
// checked against values worked out by hand from how each test table is written.
#include <gtest/gtest.h>
#include <omp.h>

#include <cstdint>
#include <cstring>
#include <random>
#include <string>

#include "data/cells.h"
#include "data/row_pass.h"
#include "data/test_tables.h"

namespace credence {
namespace {

using testing::parse;

// Two OpenMP threads whatever the machine has, so the split is taken on one core too.
class TwoThreadRead : public ::testing::Test {
 protected:
  void SetUp() override {
    saved_ = omp_get_max_threads();
    omp_set_num_threads(2);
  }
  void TearDown() override { omp_set_num_threads(saved_); }

 private:
  int saved_ = 1;
};

Result<Table> read_with(std::string_view csv, bool two_threads) {
  ReadOptions options;
  options.parallel_above_bytes = two_threads ? 0 : SIZE_MAX;
  return parse(csv, options);
}

// Where the second thread would start, as read_table computes it (0: no split).
std::size_t split_of(std::string_view csv, std::size_t threshold = 0) {
  const std::string source = "data.csv";
  const std::vector<std::string> no_tokens;
  const data::NaMatcher na(no_tokens);
  const std::vector<std::uint8_t> forced;
  data::RowPassInput in;
  in.bytes = csv;
  in.data_start = csv.find('\n') + 1;
  in.source = &source;
  in.na = &na;
  in.forced_text = &forced;
  in.parallel_above_bytes = threshold;
  return data::split_point(in);
}

bool same_bits(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

void expect_same_table(const Table& two, const Table& one) {
  EXPECT_EQ(two.row_lines, one.row_lines);
  ASSERT_EQ(two.columns.size(), one.columns.size());
  for (std::size_t j = 0; j < one.columns.size(); ++j) {
    const TableColumn& a = two.columns[j];
    const TableColumn& b = one.columns[j];
    SCOPED_TRACE(b.name);
    EXPECT_EQ(a.is_text, b.is_text);
    EXPECT_TRUE(same_bits(a.numbers, b.numbers));
    EXPECT_EQ(a.codes, b.codes);
    EXPECT_EQ(a.levels, b.levels);
    EXPECT_EQ(a.level_counts, b.level_counts);
    EXPECT_EQ(a.missing, b.missing);
    EXPECT_EQ(a.first_missing_row, b.first_missing_row);
    EXPECT_EQ(a.numeric_cells, b.numeric_cells);
    EXPECT_EQ(a.first_text_row, b.first_text_row);
    EXPECT_EQ(a.first_text, b.first_text);
  }
}

// 2,000 rows: numbers, missing tokens, blank lines in both halves (so the second half's
// rows move down to close the gap), CRLF on some lines, a text column, a column that turns
// to text only at row 1,500 and one whose first missing cell is at row 1,700; no final
// line break.
std::string mixed_table() {
  std::mt19937 random(11);
  std::normal_distribution<double> normal;
  std::string csv = "x,y,kind,late_text,late_missing\n";
  char cell[64];
  for (int r = 0; r < 2000; ++r) {
    if (r % 97 == 5) csv += "\n";  // a blank line before this row
    std::snprintf(cell, sizeof cell, "%.9g", normal(random));
    csv += cell;
    csv += ",";
    csv += (r % 13 == 0) ? "NA" : std::to_string(r);
    csv += (r % 3 == 0) ? ",red," : ",blue,";
    csv += (r == 1500) ? "n/a" : std::to_string(r % 7);
    csv += ",";
    csv += (r == 1700) ? "" : "1.5";
    if (r != 1999) csv += (r % 5 == 0) ? "\r\n" : "\n";
  }
  return csv;
}

TEST_F(TwoThreadRead, MixedTableIsTheOneThreadTable) {
  const std::string csv = mixed_table();
  ASSERT_GT(split_of(csv), csv.size() / 3) << "the test needs the split to be taken";
  auto two = read_with(csv, true);
  auto one = read_with(csv, false);
  ASSERT_TRUE(two.ok()) << two.status().to_string();
  ASSERT_TRUE(one.ok()) << one.status().to_string();
  expect_same_table(*two, *one);

  // By hand from mixed_table(): 2,000 rows; blank lines before rows 5, 102, ..., 1945
  // (21 of them), so the last row stands on line 1 + 2000 + 21 = 2022.
  ASSERT_EQ(two->rows(), 2000);
  EXPECT_EQ(two->row_lines.back(), 2022);
  const TableColumn& late_text = two->columns[3];
  EXPECT_TRUE(late_text.is_text);
  EXPECT_EQ(late_text.first_text_row, 1500);
  EXPECT_EQ(late_text.first_text, "n/a");
  const TableColumn& late_missing = two->columns[4];
  EXPECT_EQ(late_missing.missing, 1);
  EXPECT_EQ(late_missing.first_missing_row, 1700);
  EXPECT_EQ(two->columns[1].missing, 154);  // r % 13 == 0 for r < 2000: 0, 13, ..., 1989
  EXPECT_EQ(two->columns[1].numbers[1999], 1999.0);
}

TEST_F(TwoThreadRead, RaggedRowInTheSecondHalfIsNamedAsTheFileNumbersIt) {
  std::string csv = "a,b\n";
  for (int r = 0; r < 1000; ++r) csv += std::to_string(r) + (r == 800 ? "\n" : ",1\n");
  ASSERT_GT(split_of(csv), 0u);
  auto two = read_with(csv, true);
  auto one = read_with(csv, false);
  ASSERT_FALSE(two.ok());
  ASSERT_FALSE(one.ok());
  EXPECT_EQ(two.status().message(), one.status().message());
  // Row 801 of the data stands on line 802 and lacks its second field.
  EXPECT_NE(two.status().message().find("data.csv:802:2: row 801 has 1 field"), std::string::npos)
      << two.status().message();
}

TEST_F(TwoThreadRead, RaggedRowInTheFirstHalfWinsOverOneInTheSecond) {
  std::string csv = "a,b\n";
  for (int r = 0; r < 1000; ++r) {
    csv += std::to_string(r) + ((r == 100 || r == 900) ? ",1,2\n" : ",1\n");
  }
  auto two = read_with(csv, true);
  auto one = read_with(csv, false);
  ASSERT_FALSE(two.ok());
  EXPECT_EQ(two.status().message(), one.status().message());
  EXPECT_NE(two.status().message().find("row 101 has 3 fields"), std::string::npos)
      << two.status().message();
}

TEST_F(TwoThreadRead, QuotesSmallDataAndOneThreadKeepOneRun) {
  std::string plain = "a,b\n";
  for (int r = 0; r < 1000; ++r) plain += std::to_string(r) + ",1\n";
  EXPECT_GT(split_of(plain), 0u);
  EXPECT_EQ(split_of(plain, plain.size()), 0u);  // not above the threshold
  // A quoted field may hold a line break, so a quote anywhere in the data keeps one run.
  std::string quoted = plain + "1,\"two\nlines\"\n";
  EXPECT_EQ(split_of(quoted), 0u);
  omp_set_num_threads(1);
  EXPECT_EQ(split_of(plain), 0u);
}

}  // namespace
}  // namespace credence
