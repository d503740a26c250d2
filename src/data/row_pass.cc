// First pass over a table's data rows; two runs in parallel on large unquoted tables.
#include "data/row_pass.h"

#include <algorithm>
#include <cstring>
#include <fmt/format.h>
#include <limits>
#include <new>
#include <omp.h>
#include <utility>

#include "data/csv_reader.h"

namespace credence::data {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

struct ColumnTally {
  std::int64_t missing = 0;
  std::int64_t first_missing_row = -1;
  std::int64_t numeric_cells = 0;
  std::int64_t first_text_row = -1;
  std::string first_text;
};

// The rows in bytes [from, to), which start on physical line `line`. Row r of the run is
// written at index first + r of the table's preallocated arrays, of which the run may use
// `capacity`; tally rows count from the run's own first row.
struct RowRun {
  std::size_t from = 0;
  std::size_t to = 0;
  std::int64_t line = 1;
  std::size_t first = 0;
  std::size_t capacity = 0;
  std::int64_t rows = 0;
  std::vector<ColumnTally> tally;
  Status status;
};

RowRun run_of(std::size_t from, std::size_t to, std::int64_t line, std::size_t first,
              std::size_t capacity) {
  RowRun run;
  run.from = from;
  run.to = to;
  run.line = line;
  run.first = first;
  run.capacity = capacity;
  return run;
}

Status ragged_row(const std::string& source, const CsvRecord& record, std::int64_t row,
                  const Table& table) {
  const std::size_t got = record.fields.size();
  const std::size_t expected = table.columns.size();
  std::string what_to_do =
      got > expected ? "quote any field that contains the delimiter, or remove the extra field"
                     : "add the missing field (leave it empty if the value is unknown)";
  // A header of one column that holds ';' (or a tab, or '|'), above rows split by commas:
  // most likely a file with another delimiter, and decimal commas in its numbers.
  if (expected == 1 && got > 1) {
    constexpr std::pair<char, std::string_view> kOthers[] = {{';', ";"}, {'\t', "tab"}, {'|', "|"}};
    for (const auto& [byte, label] : kOthers) {
      if (table.columns[0].name.find(byte) != std::string::npos) {
        what_to_do = fmt::format(
            "the header reads as one column, so the fields are probably separated by '{}': "
            "pass --delimiter '{}' (and if its numbers hold decimal commas, save the table "
            "again with points as decimal marks)",
            label, label);
      }
    }
  }
  return Status::invalid_input(fmt::format(
      "{}:{}:{}: row {} has {} field{} but the header has {}; {}", source, record.line,
      std::min(got, expected) + 1, row + 1, got, got == 1 ? "" : "s", expected, what_to_do));
}

// Line breaks in bytes [from, to). Counted in blocks of 255 into a byte-wide sum, which the
// compiler turns into byte-lane vector adds; std::count widens every lane to 64 bits and
// took 46 ms against 12 on 90 MB here, all of it before the threads start.
std::size_t count_newlines(std::string_view bytes, std::size_t from, std::size_t to) {
  const auto* p = reinterpret_cast<const unsigned char*>(bytes.data()) + from;
  std::size_t left = to - from;
  std::size_t total = 0;
  while (left > 0) {
    const std::size_t block = std::min<std::size_t>(left, 255);
    unsigned char in_block = 0;
    for (std::size_t k = 0; k < block; ++k) {
      in_block = static_cast<unsigned char>(in_block + (p[k] == '\n'));
    }
    total += in_block;
    p += block;
    left -= block;
  }
  return total;
}

// A row of `width` plain numbers (parse_plain_number) separated by the delimiter and
// ending at LF, CRLF or the end of the data: nearly every row of a numeric table, read
// here without building the scanner's field list and without reading each cell twice.
// Returns the position after the row, or nullptr for any other row (blank, quoted, with
// blanks around a cell, a missing or text cell, a number the fast path cannot read...),
// which the scanner then reads as usual.
const char* plain_row(const char* p, const char* end, char delimiter, std::size_t width,
                      double* values) {
  for (std::size_t j = 0; j + 1 < width; ++j) {
    p = parse_plain_number(p, end, values[j]);
    if (p == nullptr || p == end || *p != delimiter) return nullptr;
    ++p;
  }
  p = parse_plain_number(p, end, values[width - 1]);
  if (p == nullptr || p == end) return p;
  if (*p == '\n') return p + 1;
  if (*p == '\r' && end - p >= 2 && p[1] == '\n') return p + 2;
  return nullptr;
}

// Whether plain_row may stand in for the scanner: not when the delimiter could be read as
// part of a number, nor when a missing-value token is itself a number (such a cell must
// count as missing).
bool plain_rows_allowed(const RowPassInput& in) {
  const char d = in.delimiter;
  if ((d >= '0' && d <= '9') || d == '.' || d == '-' || d == '+' || d == 'e' || d == 'E') {
    return false;
  }
  double ignored = 0;
  for (const std::string& token : in.na->tokens()) {
    if (parse_number(token, ignored)) return false;
  }
  return true;
}

Status scan_run(const RowPassInput& in, RowRun& run, Table& table) {
  const std::size_t width = table.columns.size();
  run.tally.assign(width, ColumnTally{});
  std::vector<double*> numbers(width, nullptr);
  for (std::size_t j = 0; j < width; ++j) {
    if (!(*in.forced_text)[j]) numbers[j] = table.columns[j].numbers.data() + run.first;
  }
  std::int64_t* lines = table.row_lines.data() + run.first;

  CsvScanner scanner(in.bytes.substr(0, run.to), in.delimiter, *in.source);
  scanner.seek(run.from, run.line);
  CsvRecord record;
  bool got = false;
  const bool plain = width > 0 && plain_rows_allowed(in);
  const char* const data = in.bytes.data();
  const char* const end = data + run.to;
  std::vector<double> values(width);
  while (true) {
    if (plain && scanner.position() < run.to) {
      const char* row_start = data + scanner.position();
      if (const char* next = plain_row(row_start, end, in.delimiter, width, values.data())) {
        const auto row = static_cast<std::size_t>(run.rows);
        if (row == run.capacity) return Status::internal("CSV rows outnumber the line breaks");
        lines[row] = scanner.line();
        for (std::size_t j = 0; j < width; ++j) {
          ++run.tally[j].numeric_cells;
          if (numbers[j] != nullptr) numbers[j][row] = values[j];
        }
        ++run.rows;
        scanner.seek(static_cast<std::size_t>(next - data), scanner.line() + (next[-1] == '\n'));
        continue;
      }
    }
    CREDENCE_RETURN_IF_ERROR(scanner.next(record, got));
    if (!got) return Status::ok_status();
    if (record.fields.size() != width) return ragged_row(*in.source, record, run.rows, table);
    const auto row = static_cast<std::size_t>(run.rows);
    if (row == run.capacity) return Status::internal("CSV rows outnumber the line breaks");
    lines[row] = record.line;
    for (std::size_t j = 0; j < width; ++j) {
      ColumnTally& tally = run.tally[j];
      const std::string_view cell = cell_text(record, j);
      double value = kNaN;
      if (in.na->matches(cell)) {
        if (tally.missing++ == 0) tally.first_missing_row = run.rows;
      } else if (parse_number(cell, value)) {
        ++tally.numeric_cells;
      } else {
        value = kNaN;
        if (tally.first_text_row < 0) {
          tally.first_text_row = run.rows;
          tally.first_text = std::string(cell);
        }
      }
      if (numbers[j] != nullptr) numbers[j][row] = value;
    }
    ++run.rows;
  }
}

// scan_run for a worker thread: an exception must not leave an OpenMP region.
void scan_run_caught(const RowPassInput& in, RowRun& run, Table& table) {
  try {
    run.status = scan_run(in, run, table);
  } catch (const std::bad_alloc&) {
    run.status = Status::io_error(fmt::format(
        "{}: out of memory while reading the table; lower the table's size or free memory",
        *in.source));
  }
}

void allocate(const RowPassInput& in, std::size_t capacity, Table& table) {
  table.row_lines.resize(capacity);
  for (std::size_t j = 0; j < table.columns.size(); ++j) {
    if (!(*in.forced_text)[j]) table.columns[j].numbers.resize(capacity);
  }
}

// Moves `run`'s rows down to `to` (runs are written with a gap, since the first run's
// row count is known only when it ends) and cuts the arrays to `size` rows.
void close_gap(const RowRun& run, std::size_t to, std::size_t size, Table& table) {
  const auto rows = static_cast<std::ptrdiff_t>(run.rows);
  auto move = [&](auto& values) {
    if (run.first != to) {
      std::copy(values.begin() + static_cast<std::ptrdiff_t>(run.first),
                values.begin() + static_cast<std::ptrdiff_t>(run.first) + rows,
                values.begin() + static_cast<std::ptrdiff_t>(to));
    }
    values.resize(size);
  };
  move(table.row_lines);
  for (TableColumn& column : table.columns) {
    if (!column.numbers.empty()) move(column.numbers);
  }
}

// Copies tallies into the columns; `later`'s rows come after `earlier`'s.
void store_tallies(const RowRun& earlier, const RowRun* later, Table& table) {
  for (std::size_t j = 0; j < table.columns.size(); ++j) {
    TableColumn& column = table.columns[j];
    const ColumnTally& a = earlier.tally[j];
    column.missing = a.missing;
    column.first_missing_row = a.first_missing_row;
    column.numeric_cells = a.numeric_cells;
    column.first_text_row = a.first_text_row;
    column.first_text = a.first_text;
    if (later == nullptr) continue;
    const ColumnTally& b = later->tally[j];
    column.missing += b.missing;
    column.numeric_cells += b.numeric_cells;
    if (column.first_missing_row < 0 && b.first_missing_row >= 0) {
      column.first_missing_row = earlier.rows + b.first_missing_row;
    }
    if (column.first_text_row < 0 && b.first_text_row >= 0) {
      column.first_text_row = earlier.rows + b.first_text_row;
      column.first_text = b.first_text;
    }
  }
}

Status read_in_one_run(const RowPassInput& in, Table& table) {
  RowRun run = run_of(in.data_start, in.bytes.size(), in.data_line, 0,
                      count_newlines(in.bytes, in.data_start, in.bytes.size()) + 1);
  allocate(in, run.capacity, table);
  CREDENCE_RETURN_IF_ERROR(scan_run(in, run, table));
  close_gap(run, 0, static_cast<std::size_t>(run.rows), table);
  store_tallies(run, nullptr, table);
  return Status::ok_status();
}

}  // namespace

std::size_t split_point(const RowPassInput& in) {
  const std::size_t size = in.bytes.size();
  if (size - in.data_start <= in.parallel_above_bytes) return 0;
  if (omp_in_parallel() || omp_get_max_threads() < 2) return 0;
  const char* data = in.bytes.data();
  if (std::memchr(data + in.data_start, '"', size - in.data_start) != nullptr) return 0;
  const std::size_t middle = in.data_start + (size - in.data_start) / 2;
  const void* newline = std::memchr(data + middle, '\n', size - middle);
  if (newline == nullptr) return 0;
  const std::size_t split = static_cast<std::size_t>(static_cast<const char*>(newline) - data) + 1;
  return split < size ? split : 0;
}

Status read_rows(const RowPassInput& in, Table& table) {
  const std::size_t split = split_point(in);
  if (split == 0) return read_in_one_run(in, table);

  // Each run gets room for one row per line break it holds (plus an unterminated last
  // line): the first run's rows are written from 0, the second's from just past that room.
  const std::size_t size = in.bytes.size();
  const std::size_t first_breaks = count_newlines(in.bytes, in.data_start, split);
  RowRun head = run_of(in.data_start, split, in.data_line, 0, first_breaks);
  RowRun tail = run_of(split, size, in.data_line + static_cast<std::int64_t>(first_breaks),
                             first_breaks, count_newlines(in.bytes, split, size) + 1);
  allocate(in, head.capacity + tail.capacity, table);
#pragma omp parallel sections num_threads(2)
  {
#pragma omp section
    scan_run_caught(in, head, table);
#pragma omp section
    scan_run_caught(in, tail, table);
  }
  if (!head.status.ok()) return head.status;
  if (!tail.status.ok()) {
    // The second run counts rows from its own start; read again from the top so that the
    // refusal names the row as the file numbers it.
    return read_in_one_run(in, table);
  }
  const auto rows = static_cast<std::size_t>(head.rows + tail.rows);
  close_gap(tail, static_cast<std::size_t>(head.rows), rows, table);
  store_tallies(head, &tail, table);
  return Status::ok_status();
}

}  // namespace credence::data
