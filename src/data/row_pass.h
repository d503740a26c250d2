// The first pass of read_table over the data rows. Large tables without quotes are read
// by two threads, one per half, when OpenMP allows two.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "credence/data.h"
#include "data/cells.h"

namespace credence::data {

/// What the first pass needs to know about the bytes after the header.
struct RowPassInput {
  std::string_view bytes;       // the whole CSV text, header included
  std::size_t data_start = 0;   // first byte after the header
  std::int64_t data_line = 1;   // physical line that byte stands on
  const std::string* source = nullptr;
  char delimiter = ',';
  const NaMatcher* na = nullptr;
  const std::vector<std::uint8_t>* forced_text = nullptr;  // per column: kept as text
  std::size_t parallel_above_bytes = 0;                     // ReadOptions' threshold
};

/// Where a second thread may start: just after the line break nearest past the middle of
/// the data. 0 when the data is one run: no larger than the threshold, fewer than two
/// OpenMP threads or already inside a parallel region, or a quote anywhere in the data (a
/// quoted field may hold a line break, so only a scan from the top knows where records end).
std::size_t split_point(const RowPassInput& in);

/// Fills table.row_lines and every column's numbers (columns not forced to text: the
/// cell's number, NaN where missing or text), missing, first_missing_row, numeric_cells,
/// first_text_row and first_text. Refuses ragged rows and malformed quoting with the same
/// message, naming the same row, whether one thread or two read the table.
Status read_rows(const RowPassInput& in, Table& table);

}  // namespace credence::data
