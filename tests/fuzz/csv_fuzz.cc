// libFuzzer target: the CSV reader (parse_table) on arbitrary bytes.
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

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

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view bytes(reinterpret_cast<const char*>(data), size);
  credence::ReadOptions options;
  credence::Result<credence::Table> table = credence::parse_table(bytes, "fuzz.csv", options);
  if (table.ok()) check_table(*table);
  // The same bytes as a piece of a larger file behind its header, with a text column.
  options.data_first_line = 7;
  options.delimiter = ';';
  options.text_columns = {"a"};
  table = credence::parse_table(bytes, "fuzz.csv", options);
  if (table.ok()) check_table(*table);
  return 0;
}
