// Regression (issue 9, found by the CSV fuzzer): a record with several quoted fields that
// hold doubled quotes kept views into per-field buffers that moved when a later field
// needed a new buffer, so the header's names were read from freed memory (AddressSanitizer:
// heap-use-after-free in check_header). RFC 4180 section 2.7 defines the doubled quote.
#include <gtest/gtest.h>

#include <string>

#include "credence/data.h"

namespace credence {
namespace {

TEST(Issue9, ManyQuotedFieldsWithDoubledQuotesKeepTheirText) {
  std::string header, row;
  for (int j = 0; j < 24; ++j) {
    header += (j ? "," : "") + std::string("\"c") + std::to_string(j) + "\"\"\"";
    row += (j ? "," : "") + std::string("\"v\"\"") + std::to_string(j) + "\"";
  }
  Result<Table> table = parse_table(header + "\n" + row + "\n", "quotes.csv", ReadOptions{});
  ASSERT_TRUE(table.ok()) << table.status().to_string();
  ASSERT_EQ(table->columns.size(), 24u);
  for (int j = 0; j < 24; ++j) {
    const TableColumn& c = table->columns[static_cast<std::size_t>(j)];
    EXPECT_EQ(c.name, "c" + std::to_string(j) + "\"");
    ASSERT_TRUE(c.is_text);
    EXPECT_EQ(c.levels.at(0), "v\"" + std::to_string(j));
  }
}

TEST(Issue9, TheFuzzersInputIsRefusedCleanly) {
  // The crashing input, byte for byte (tests/fuzz/corpus/csv/crash-quoted-header).
  const std::string bytes =
      "x;y;3,\"msaid \"\"hi\"\"\",NA,no3,\"msaid \"\"hi\"\"\",NA,no\nz1;16\"\x02? \n";
  Result<Table> table = parse_table(bytes, "fuzz.csv", ReadOptions{});
  EXPECT_FALSE(table.ok());
}

}  // namespace
}  // namespace credence
