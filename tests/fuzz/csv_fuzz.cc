// libFuzzer target: the CSV reader (parse_table) on arbitrary bytes.
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "credence/data.h"

namespace {

// A table the reader accepts must be rectangular and index its own levels; anything
// else would send later stages out of bounds.
void check_table(const credence::Table& table) {
  const auto rows = static_cast<std::size_t>(table.rows());
  for (const credence::TableColumn& column : table.columns) {
    if (column.is_text) {
      if (column.codes.size() != rows) __builtin_trap();
      for (std::int32_t code : column.codes) {
        if (code < -1 || code >= static_cast<std::int32_t>(column.levels.size())) __builtin_trap();
      }
    } else if (column.numbers.size() != rows) {
      __builtin_trap();
    }
  }
  if (rows > 0 && !table.columns.empty()) {
    (void)table.cell_location(table.rows() - 1, static_cast<int>(table.columns.size()) - 1);
  }
  (void)table.column_list();
}

bool same_numbers(const std::vector<double>& a, const std::vector<double>& b) {
  return a.size() == b.size() &&
         (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(double)) == 0);
}

// Two threads (each half of the data) must read what one thread reads, refusals included.
void check_same(const credence::Result<credence::Table>& two,
                const credence::Result<credence::Table>& one) {
  if (two.ok() != one.ok()) __builtin_trap();
  if (!one.ok()) {
    if (two.status().message() != one.status().message()) __builtin_trap();
    return;
  }
  if (two->row_lines != one->row_lines || two->columns.size() != one->columns.size()) {
    __builtin_trap();
  }
  for (std::size_t j = 0; j < one->columns.size(); ++j) {
    const credence::TableColumn& a = two->columns[j];
    const credence::TableColumn& b = one->columns[j];
    if (a.is_text != b.is_text || !same_numbers(a.numbers, b.numbers) || a.codes != b.codes ||
        a.levels != b.levels || a.missing != b.missing ||
        a.first_missing_row != b.first_missing_row || a.numeric_cells != b.numeric_cells ||
        a.first_text_row != b.first_text_row || a.first_text != b.first_text) {
      __builtin_trap();
    }
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view bytes(reinterpret_cast<const char*>(data), size);
  credence::ReadOptions options;
  credence::Result<credence::Table> table = credence::parse_table(bytes, "fuzz.csv", options);
  if (table.ok()) check_table(*table);
  credence::ReadOptions split = options;
  split.parallel_above_bytes = 0;
  check_same(credence::parse_table(bytes, "fuzz.csv", split), table);
  // The same bytes as a piece of a larger file behind its header, with a text column.
  options.data_first_line = 7;
  options.delimiter = ';';
  options.text_columns = {"a"};
  table = credence::parse_table(bytes, "fuzz.csv", options);
  if (table.ok()) check_table(*table);
  return 0;
}
