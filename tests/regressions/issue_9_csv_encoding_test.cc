// Issue 9: UTF-16 and binary "CSV" files were reported as a ragged row deep in the file;
// the reader now names the encoding problem, where it is, and what to do.
#include <gtest/gtest.h>

#include <string>

#include "credence/data.h"

namespace credence {
namespace {

// "a,b,y\n1,2,x\n" as UTF-16 little endian with its byte-order mark, written out by hand
// from the Unicode standard's UTF-16 encoding form (ASCII code units followed by 0x00).
std::string utf16le(const std::string& ascii) {
  std::string out = "\xFF\xFE";
  for (char c : ascii) {
    out.push_back(c);
    out.push_back('\0');
  }
  return out;
}

TEST(Issue9CsvEncoding, Utf16ByteOrderMarkIsNamed) {
  Result<Table> table = parse_table(utf16le("a,b,y\n1,2,x\n"), "wide.csv", ReadOptions{});
  ASSERT_FALSE(table.ok());
  EXPECT_EQ(table.status().code(), StatusCode::kInvalidInput);
  EXPECT_NE(
      table.status().message().find("wide.csv: the file starts with a UTF-16 byte-order mark"),
      std::string::npos)
      << table.status().message();
  EXPECT_NE(table.status().message().find("UTF-8"), std::string::npos);
}

TEST(Issue9CsvEncoding, NulBytesAreLocated) {
  // Without a byte-order mark (big-endian UTF-16 from some exporters, or binary data).
  const std::string bytes = std::string("a,b\n1,2\n3,") + '\0' + "4\n";
  Result<Table> table = parse_table(bytes, "bin.csv", ReadOptions{});
  ASSERT_FALSE(table.ok());
  // Line 3, column 3: the NUL is the third byte of "3,\0" (counted by hand).
  EXPECT_EQ(table.status().message().rfind("bin.csv:3:3: a NUL byte", 0), 0u)
      << table.status().message();
}

TEST(Issue9CsvEncoding, PieceBehindAHeaderKeepsFileLines) {
  // A piece of a larger file: its first data line is physical line 100.
  ReadOptions options;
  options.data_first_line = 100;
  const std::string bytes = std::string("a,b\n1,2\n3,4\n") + '\0' + "\n";
  Result<Table> table = parse_table(bytes, "big.csv", options);
  ASSERT_FALSE(table.ok());
  EXPECT_EQ(table.status().message().rfind("big.csv:102:1: a NUL byte", 0), 0u)
      << table.status().message();
}

TEST(Issue9CsvEncoding, Utf8TextStillReads) {
  // A UTF-8 byte-order mark and non-ASCII levels are fine (RFC 4180 with UTF-8).
  Result<Table> table = parse_table(
      "\xEF\xBB\xBF"
      "a,city\n1,K\xC3\xB6ln\n2,Gen\xC3\xA8ve\n",
      "ok.csv", ReadOptions{});
  ASSERT_TRUE(table.ok()) << table.status().message();
  EXPECT_EQ(table->rows(), 2);
}

}  // namespace
}  // namespace credence
