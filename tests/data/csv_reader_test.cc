// Reading CSV text: RFC 4180 quoting, line ends, byte-order mark, header checks, and the
// messages of malformed input. Expected values are the RFC 4180 rules (IETF, 2005) applied by
// hand unless a test says otherwise.
#include "data/csv_reader.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <random>

#include "testing/temp_dir.h"
#include "data/test_tables.h"

namespace credence {
namespace {

using testing::expect_invalid;
using testing::parse;

const TableColumn& column(const Table& table, std::string_view name) {
  const int j = table.find_column(name);
  EXPECT_GE(j, 0) << name;
  return table.columns[static_cast<std::size_t>(j)];
}

std::string level_of(const TableColumn& c, std::size_t row) {
  return c.codes[row] < 0 ? std::string("<missing>") : c.levels[static_cast<std::size_t>(c.codes[row])];
}

// --- malformed input: each message names file, line, column and what to do ---

TEST(CsvReader, RaggedRowWithTooManyFieldsNamesLineAndColumn) {
  // RFC 4180 section 2.4: every record has the same number of fields.
  auto t = parse("a,b,c\n1,2,3\n4,5,6,7\n");
  expect_invalid(t.status(), {"data.csv:3:4:", "row 2 has 4 fields but the header has 3",
                              "quote any field that contains the delimiter"});
}

TEST(CsvReader, RaggedRowWithTooFewFieldsNamesLineAndColumn) {
  auto t = parse("a,b,c\n1,2,3\n4,5\n");
  expect_invalid(t.status(), {"data.csv:3:3:", "row 2 has 2 fields", "add the missing field"});
}

TEST(CsvReader, UnterminatedQuoteNamesTheLineWhereItOpened) {
  // RFC 4180 section 2.5-2.7: a quoted field ends with a quote not followed by another.
  auto t = parse("a,b\n1,\"open\n2,3\n4,5\n");
  expect_invalid(t.status(), {"data.csv:2:2:", "never closed", "written twice"});
}

TEST(CsvReader, TextAfterClosingQuoteIsRefused) {
  auto t = parse("a,b\n1,\"x\"y\n");
  expect_invalid(t.status(), {"data.csv:2:2:", "text follows the closing quote"});
}

TEST(CsvReader, EmptyFileIsRefused) {
  expect_invalid(parse("").status(), {"data.csv:", "the file is empty", "header row"});
}

TEST(CsvReader, FileWithOnlyAByteOrderMarkAndBlankLinesIsEmpty) {
  expect_invalid(parse("\xEF\xBB\xBF\n\r\n").status(), {"data.csv:", "the file is empty"});
}

TEST(CsvReader, HeaderWithoutRowsIsRefused) {
  expect_invalid(parse("a,b,c\n").status(), {"data.csv:", "header row but no data rows"});
}

TEST(CsvReader, DuplicateColumnNamesAreRefused) {
  auto t = parse("age,income,age\n1,2,3\n");
  expect_invalid(t.status(), {"data.csv:1:3:", "'age' appears twice", "columns 1 and 3"});
}

TEST(CsvReader, EmptyColumnNameIsRefused) {
  auto t = parse("a,,c\n1,2,3\n");
  expect_invalid(t.status(), {"data.csv:1:2:", "column 2 has no name"});
}

TEST(CsvReader, HeaderOfNumbersLooksLikeData) {
  auto t = parse("1,2,3\n4,5,6\n");
  expect_invalid(t.status(), {"data.csv:1:", "looks like data", "add a header row"});
}

TEST(CsvReader, LineNumbersCountEmbeddedNewlinesAndBlankLines) {
  // Row 3 starts on physical line 6: line 3 holds a quoted field spanning lines 3-4 and
  // line 5 is blank.
  auto t = parse("a,b\n1,x\n2,\"multi\nline\"\n\n3,y,extra\n");
  expect_invalid(t.status(), {"data.csv:6:3:", "row 3 has 3 fields"});
}

TEST(CsvReader, MissingFileIsInvalidInputNamingThePath) {
  auto t = read_table("/nonexistent/dir/data.csv", {});
  expect_invalid(t.status(), {"/nonexistent/dir/data.csv", "no such file"});
}

// --- awkward but valid input: the parsed values ---

TEST(CsvReader, QuotedFieldsHoldDelimitersEscapedQuotesAndNewlines) {
  // RFC 4180 section 2.6 (line breaks, commas in quotes) and 2.7 (doubled quotes).
  ReadOptions options;
  options.text_columns = {"text"};
  auto t = parse("id,text\n1,\"a, b\"\n2,\"say \"\"hi\"\"\"\n3,\"two\nlines\"\n4,\"\"\"\"\n",
                 options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  const TableColumn& text = column(*t, "text");
  EXPECT_EQ(level_of(text, 0), "a, b");
  EXPECT_EQ(level_of(text, 1), "say \"hi\"");
  EXPECT_EQ(level_of(text, 2), "two\nlines");
  EXPECT_EQ(level_of(text, 3), "\"");
  EXPECT_EQ(t->row_lines, (std::vector<std::int64_t>{2, 3, 4, 6}));
}

TEST(CsvReader, CrlfLineEndsLeaveNoCarriageReturnInValues) {
  // RFC 4180 section 2.1: records end with CRLF.
  ReadOptions options;
  options.text_columns = {"b"};
  auto t = parse("a,b\r\n1.5,x\r\n2.5,\"y\"\r\n3.5,z", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "a").numbers, (std::vector<double>{1.5, 2.5, 3.5}));
  EXPECT_EQ(column(*t, "b").levels, (std::vector<std::string>{"x", "y", "z"}));
}

TEST(CsvReader, ByteOrderMarkIsNotPartOfTheFirstName) {
  auto t = parse("\xEF\xBB\xBF" "age,y\n30,a\n");
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(t->columns[0].name, "age");
  EXPECT_EQ(t->columns[0].numbers, (std::vector<double>{30}));
}

TEST(CsvReader, CustomDelimiterSplitsOnlyOnIt) {
  ReadOptions options;
  options.delimiter = ';';
  options.text_columns = {"name"};
  auto t = parse("name;score\nSmith, J;1.25\n\"a;b\";2\n", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "name").levels, (std::vector<std::string>{"Smith, J", "a;b"}));
  EXPECT_EQ(column(*t, "score").numbers, (std::vector<double>{1.25, 2}));
}

TEST(CsvReader, TabDelimiterWithTrailingEmptyField) {
  ReadOptions options;
  options.delimiter = '\t';
  auto t = parse("a\tb\tc\n1\t2\t\n", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "b").numbers, (std::vector<double>{2}));
  EXPECT_TRUE(std::isnan(column(*t, "c").numbers[0]));
  EXPECT_EQ(column(*t, "c").missing, 1);
}

TEST(CsvReader, NumbersParseWithoutLocaleAndExactly) {
  // Expected doubles are the C++ literals themselves (round-trip exact).
  auto t = parse("x\n1e3\n-0.5\n+2\n  3.25 \n.5\n6.02214076e23\n");
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "x").numbers, (std::vector<double>{1e3, -0.5, 2, 3.25, .5, 6.02214076e23}));
}

// Reference: the C library's strtod, which rounds correctly (IEEE 754 round to nearest);
// every spelling of 20,000 random doubles must give the same bits through our fast path.
TEST(CsvReader, NumbersMatchStrtodBitForBit) {
  std::mt19937_64 random(20261202);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::uniform_int_distribution<int> power(-30, 30);
  const char* formats[] = {"%g", "%.17g", "%.6e", "%.3f", "%.10f", "%.15g", "%.16g"};
  char text[64];
  for (int i = 0; i < 20000; ++i) {
    const double x = unit(random) * std::pow(10.0, power(random));
    for (const char* format : formats) {
      std::snprintf(text, sizeof text, format, x);
      double ours = 0;
      ASSERT_TRUE(data::parse_number(text, ours)) << text;
      const double reference = std::strtod(text, nullptr);
      ASSERT_EQ(std::memcmp(&ours, &reference, sizeof ours), 0) << text;
    }
  }
  for (const char* edge : {"00012.50", "1.", "-.5", "0.000", "100000000000000000000", "7e-22",
                           "123456789012345", "1234567890123456", "0.1234567890123456789"}) {
    double ours = 0;
    ASSERT_TRUE(data::parse_number(edge, ours)) << edge;
    EXPECT_EQ(ours, std::strtod(edge, nullptr)) << edge;
  }
  double v = 0;
  for (const char* bad : {".", "1.2.3", "-.", "1e", "1e+", "..5"}) {
    EXPECT_FALSE(data::parse_number(bad, v)) << bad;
  }
}

// parse_table reads rows of plain numbers on a fast path and every other row through the
// scanner; both must give strtod's bits. Cells are spelled so that rows of each kind mix:
// plain, 17 significant digits and powers past 1e22 (past the fast path), a '+' sign and
// blanks around a cell (the scanner's rows); CRLF and LF line ends. Reference: strtod.
TEST(CsvReader, TableCellsMatchStrtodOnEveryRowPath) {
  std::mt19937_64 random(20261203);
  std::uniform_real_distribution<double> unit(-1.0, 1.0);
  std::uniform_int_distribution<int> power(-30, 30);
  std::uniform_int_distribution<int> pick(0, 7);
  const char* formats[] = {"%g", "%.6g", "%.17g", "%.3e", "%.9f", "%+.4g", " %g", "%.2e "};
  std::vector<std::string> cells;
  std::string csv = "a,b,c\n";
  char text[64];
  for (int r = 0; r < 3000; ++r) {
    for (int j = 0; j < 3; ++j) {
      const double x = unit(random) * std::pow(10.0, power(random));
      std::snprintf(text, sizeof text, formats[r % 4 == 0 ? pick(random) : pick(random) % 2], x);
      cells.emplace_back(text);
      csv += text;
      csv += j < 2 ? "," : (r % 3 == 0 ? "\r\n" : "\n");
    }
  }
  auto t = parse(csv);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  ASSERT_EQ(t->rows(), 3000);
  for (std::size_t k = 0; k < cells.size(); ++k) {
    const double ours = t->columns[k % 3].numbers[k / 3];
    const double reference = std::strtod(cells[k].c_str(), nullptr);
    ASSERT_EQ(std::memcmp(&ours, &reference, sizeof ours), 0) << "'" << cells[k] << "'";
  }
}

TEST(CsvReader, NumericMissingTokenIsMissingInRowsOfNumbers) {
  ReadOptions options;
  options.na_tokens = {"-999"};
  auto t = parse("x,y\n1,-999\n-999,2\n3,4\n", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "x").missing, 1);
  EXPECT_EQ(column(*t, "y").missing, 1);
  EXPECT_TRUE(std::isnan(column(*t, "x").numbers[1]));
  EXPECT_EQ(column(*t, "x").numbers[2], 3.0);
}

TEST(CsvReader, DelimiterThatCouldBelongToANumberSplitsFirst) {
  ReadOptions options;
  options.delimiter = '.';
  auto t = parse("a.b\n1.2\n3.4\n", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "a").numbers, (std::vector<double>{1, 3}));
  EXPECT_EQ(column(*t, "b").numbers, (std::vector<double>{2, 4}));
  // Three fields, not the number 1.5 and then 2.
  expect_invalid(parse("a.b\n1.5.2\n", options).status(), {"data.csv:2:3", "row 1 has 3 fields"});
}

TEST(CsvReader, NonFiniteAndPartialNumbersAreText) {
  double v = 0;
  EXPECT_FALSE(data::parse_number("inf", v));
  EXPECT_FALSE(data::parse_number("-nan", v));
  EXPECT_FALSE(data::parse_number("3.5x", v));
  EXPECT_FALSE(data::parse_number("1e999", v));  // overflows double
  EXPECT_FALSE(data::parse_number("-", v));
  EXPECT_FALSE(data::parse_number("0x10", v));
  EXPECT_TRUE(data::parse_number("-0", v));
}

TEST(CsvReader, DefaultMissingTokensAndCustomOnes) {
  auto t = parse("x,y\n,1\nNA,2\nNaN,3\nnull,4\n?,5\n7,6\n");
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(column(*t, "x").missing, 5);
  EXPECT_EQ(column(*t, "x").first_missing_row, 0);
  EXPECT_EQ(column(*t, "x").numbers[5], 7);

  ReadOptions custom;
  custom.na_tokens = {"-999"};
  auto u = parse("x,y\n-999,1\n5,2\n", custom);
  ASSERT_TRUE(u.ok()) << u.status().to_string();
  EXPECT_EQ(column(*u, "x").missing, 1);
  EXPECT_EQ(column(*u, "x").numbers[1], 5);
}

TEST(CsvReader, TextLevelsAreSortedAndCounted) {
  ReadOptions options;
  options.text_columns = {"c"};
  auto t = parse("c\npear\napple\npear\n\nfig\n", options);
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  const TableColumn& c = column(*t, "c");
  EXPECT_EQ(c.levels, (std::vector<std::string>{"apple", "fig", "pear"}));
  EXPECT_EQ(c.level_counts, (std::vector<std::int64_t>{1, 1, 2}));
  EXPECT_EQ(c.codes, (std::vector<std::int32_t>{2, 0, 2, 1}));
}

TEST(CsvReader, ColumnThatTurnsOutTextKeepsEveryCellsText) {
  // The first cells look numeric; the column becomes text at row 3 and "1" and "1.0" stay
  // distinct levels.
  auto t = parse("k\n1\n1.0\nx\n1\n");
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  const TableColumn& k = column(*t, "k");
  EXPECT_TRUE(k.is_text);
  EXPECT_EQ(k.levels, (std::vector<std::string>{"1", "1.0", "x"}));
  EXPECT_EQ(k.first_text_row, 2);
  EXPECT_EQ(k.first_text, "x");
  EXPECT_EQ(k.numeric_cells, 3);
}

TEST(CsvReader, ReadsAFileFromDisk) {
  testing::TempDir dir;
  std::string path = dir.write("t.csv", "a,b\n1,2\n3,4\n");
  auto t = read_table(path, {});
  ASSERT_TRUE(t.ok()) << t.status().to_string();
  EXPECT_EQ(t->source, path);
  EXPECT_EQ(column(*t, "b").numbers, (std::vector<double>{2, 4}));
}

}  // namespace
}  // namespace credence
