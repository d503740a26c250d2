// read_table: CSV bytes -> columns of numbers or interned text, with header checks.
#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <cstdio>
#include <fmt/format.h>
#include <memory>
#include <numeric>
#include <string>
#include <unordered_map>
#include <utility>

#include "credence/data.h"
#include "data/cells.h"
#include "data/closest_name.h"
#include "data/csv_reader.h"
#include "data/row_pass.h"

namespace credence {

int Table::find_column(std::string_view name) const {
  for (std::size_t j = 0; j < columns.size(); ++j) {
    if (columns[j].name == name) return static_cast<int>(j);
  }
  return -1;
}

std::string Table::cell_location(std::int64_t row, int column) const {
  assert(row >= 0 && row < rows());
  assert(column >= 0 && static_cast<std::size_t>(column) < columns.size());
  return fmt::format("{}:{}:{}", source, row_lines[static_cast<std::size_t>(row)], column + 1);
}

std::string Table::column_list() const {
  std::string out;
  for (const TableColumn& column : columns) {
    if (!out.empty()) out += ", ";
    out += "'" + column.name + "'";
  }
  return out;
}

std::string Table::column_hint(std::string_view name) const {
  std::vector<std::string> names;
  for (const TableColumn& column : columns) names.push_back(column.name);
  // One column whose name holds another common delimiter: the file is split differently.
  if (names.size() == 1) {
    constexpr std::pair<char, std::string_view> kOthers[] = {{';', ";"}, {'\t', "tab"}, {'|', "|"}};
    for (const auto& [byte, label] : kOthers) {
      if (names[0].find(byte) != std::string::npos) {
        return fmt::format(
            "the header reads as one column '{}'; if '{}' separates the fields, pass "
            "--delimiter '{}'",
            names[0], label, label);
      }
    }
  }
  if (const int k = data::closest_name(names, name); k >= 0) {
    return fmt::format("did you mean '{}'?", names[static_cast<std::size_t>(k)]);
  }
  // A long header: its first and last names (the class is often last), and a count.
  constexpr std::size_t kFirst = 6;
  constexpr std::size_t kLast = 2;
  if (names.size() <= kFirst + kLast + 2) return "available columns: " + column_list();
  std::string out = "available columns: ";
  for (std::size_t k = 0; k < kFirst; ++k) out += "'" + names[k] + "', ";
  out += fmt::format("... ({} more), ", names.size() - kFirst - kLast);
  for (std::size_t k = names.size() - kLast; k < names.size(); ++k) {
    out += "'" + names[k] + (k + 1 < names.size() ? "', " : "'");
  }
  return out + fmt::format(" ('credence schema {}' lists them all)", source);
}

namespace {

using data::cell_text;
using data::CsvRecord;
using data::CsvScanner;
using data::NaMatcher;

// UTF-16/32 text and binary files hold NUL bytes (or open with a UTF-16 byte-order mark);
// without this check they surface as a confusing ragged row far into the file.
Status check_text_encoding(std::string_view bytes, const std::string& source,
                           std::int64_t data_first_line) {
  constexpr const char* kWhatToDo =
      "save the table as UTF-8 (or ASCII) CSV, e.g. 'CSV UTF-8' in a spreadsheet or "
      "iconv -f UTF-16 -t UTF-8";
  if (bytes.size() >= 2 && ((bytes[0] == '\xFF' && bytes[1] == '\xFE') ||
                            (bytes[0] == '\xFE' && bytes[1] == '\xFF'))) {
    return Status::invalid_input(fmt::format(
        "{}: the file starts with a UTF-16 byte-order mark; credence reads UTF-8 text: {}",
        source, kWhatToDo));
  }
  const std::size_t nul = bytes.find('\0');
  if (nul == std::string_view::npos) return Status::ok_status();
  const std::string_view before = bytes.substr(0, nul);
  std::int64_t line = 1 + std::count(before.begin(), before.end(), '\n');
  const std::size_t line_start = before.rfind('\n');
  const std::size_t column = line_start == std::string_view::npos ? nul + 1 : nul - line_start;
  // A piece behind a copy of the header: its second line is data_first_line.
  if (data_first_line > 0 && line > 1) line += data_first_line - 2;
  return Status::invalid_input(fmt::format(
      "{}:{}:{}: a NUL byte: this is binary data or UTF-16/UTF-32 text, not a CSV file; {}",
      source, line, column, kWhatToDo));
}

struct TransparentHash {
  using is_transparent = void;
  std::size_t operator()(std::string_view text) const { return std::hash<std::string_view>{}(text); }
};
using LevelIndex = std::unordered_map<std::string, std::int32_t, TransparentHash, std::equal_to<>>;

Status check_header(const CsvRecord& header, const std::string& source, Table& table) {
  bool all_numbers = true;
  double ignored = 0.0;
  std::unordered_map<std::string_view, std::size_t> seen;
  for (std::size_t j = 0; j < header.fields.size(); ++j) {
    std::string_view name = cell_text(header, j);
    if (name.empty()) {
      return Status::invalid_input(fmt::format(
          "{}:{}:{}: column {} has no name in the header row; every column needs a name "
          "(the --target, --drop and --categorical options refer to columns by name)",
          source, header.line, j + 1, j + 1));
    }
    if (auto [it, inserted] = seen.emplace(name, j); !inserted) {
      return Status::invalid_input(fmt::format(
          "{}:{}:{}: column name '{}' appears twice in the header (columns {} and {}); give "
          "each column its own name",
          source, header.line, j + 1, name, it->second + 1, j + 1));
    }
    all_numbers = all_numbers && data::parse_number(name, ignored);
    table.columns.emplace_back().name = std::string(name);
  }
  if (all_numbers) {
    return Status::invalid_input(fmt::format(
        "{}:{}: the first line holds only numbers, so it looks like data rather than a header; "
        "add a header row naming the columns",
        source, header.line));
  }
  return Status::ok_status();
}

// Second pass: the text of every cell of the text columns, interned as sorted levels.
Status intern_text_columns(std::string_view bytes, const std::string& source,
                           const ReadOptions& options, Table& table) {
  std::vector<std::size_t> text_columns;
  for (std::size_t j = 0; j < table.columns.size(); ++j) {
    if (table.columns[j].is_text) text_columns.push_back(j);
  }
  if (text_columns.empty()) return Status::ok_status();
  const std::size_t n = static_cast<std::size_t>(table.rows());
  NaMatcher na(options.na_tokens);
  std::vector<LevelIndex> indices(table.columns.size());
  for (std::size_t j : text_columns) table.columns[j].codes.assign(n, -1);

  CsvScanner scanner(bytes, options.delimiter, source);
  CsvRecord record;
  bool got = false;
  CREDENCE_RETURN_IF_ERROR(scanner.next(record, got));  // the header
  if (options.data_first_line > 0) scanner.set_line(options.data_first_line);
  for (std::size_t row = 0; row < n; ++row) {
    CREDENCE_RETURN_IF_ERROR(scanner.next(record, got));
    if (!got) return Status::internal("CSV second pass ended early");
    for (std::size_t j : text_columns) {
      std::string_view cell = cell_text(record, j);
      if (na.matches(cell)) continue;
      TableColumn& column = table.columns[j];
      LevelIndex& index = indices[j];
      auto it = index.find(cell);
      if (it == index.end()) {
        it = index.emplace(std::string(cell), static_cast<std::int32_t>(column.levels.size())).first;
        column.levels.emplace_back(cell);
      }
      column.codes[row] = it->second;
    }
  }
  // Sort levels bytewise so that codes do not depend on the order rows appear in.
  for (std::size_t j : text_columns) {
    TableColumn& column = table.columns[j];
    std::vector<std::int32_t> order(column.levels.size());
    std::iota(order.begin(), order.end(), 0);
    std::sort(order.begin(), order.end(), [&](std::int32_t a, std::int32_t b) {
      return column.levels[static_cast<std::size_t>(a)] <
             column.levels[static_cast<std::size_t>(b)];
    });
    std::vector<std::int32_t> new_code(order.size());
    std::vector<std::string> sorted(order.size());
    for (std::size_t k = 0; k < order.size(); ++k) {
      new_code[static_cast<std::size_t>(order[k])] = static_cast<std::int32_t>(k);
      sorted[k] = std::move(column.levels[static_cast<std::size_t>(order[k])]);
    }
    column.levels = std::move(sorted);
    column.level_counts.assign(column.levels.size(), 0);
    for (std::int32_t& code : column.codes) {
      if (code < 0) continue;
      code = new_code[static_cast<std::size_t>(code)];
      ++column.level_counts[static_cast<std::size_t>(code)];
    }
  }
  return Status::ok_status();
}

}  // namespace

Result<Table> parse_table(std::string_view bytes, const std::string& source,
                          const ReadOptions& options) {
  CREDENCE_RETURN_IF_ERROR(check_text_encoding(bytes, source, options.data_first_line));
  Table table;
  table.source = source;
  CsvScanner scanner(bytes, options.delimiter, source);
  CsvRecord record;
  bool got = false;
  CREDENCE_RETURN_IF_ERROR(scanner.next(record, got));
  if (!got) {
    return Status::invalid_input(fmt::format(
        "{}: the file is empty; credence needs a header row naming the columns, then one row "
        "per case",
        source));
  }
  CREDENCE_RETURN_IF_ERROR(check_header(record, source, table));
  if (options.data_first_line > 0) scanner.set_line(options.data_first_line);
  const std::size_t width = table.columns.size();

  std::vector<std::uint8_t> forced_text(width, 0);
  for (const std::string& name : options.text_columns) {
    if (int j = table.find_column(name); j >= 0) forced_text[static_cast<std::size_t>(j)] = 1;
  }

  const data::NaMatcher na(options.na_tokens);
  data::RowPassInput rows_in;
  rows_in.bytes = bytes;
  rows_in.data_start = scanner.position();
  rows_in.data_line = scanner.line();
  rows_in.source = &source;
  rows_in.delimiter = options.delimiter;
  rows_in.na = &na;
  rows_in.forced_text = &forced_text;
  rows_in.parallel_above_bytes = options.parallel_above_bytes;
  CREDENCE_RETURN_IF_ERROR(data::read_rows(rows_in, table));
  if (table.rows() == 0) {
    return Status::invalid_input(fmt::format(
        "{}: the file has a header row but no data rows; add one row per case", source));
  }
  for (std::size_t j = 0; j < width; ++j) {
    TableColumn& column = table.columns[j];
    column.is_text = forced_text[j] || column.first_text_row >= 0;
    if (column.is_text) {
      column.numbers.clear();
      column.numbers.shrink_to_fit();
    }
  }
  CREDENCE_RETURN_IF_ERROR(intern_text_columns(bytes, source, options, table));
  return table;
}

Result<Table> read_table(const std::string& path, const ReadOptions& options) {
  // Read the file in one go: the scanner then runs over one contiguous buffer.
  std::unique_ptr<std::FILE, int (*)(std::FILE*)> file(std::fopen(path.c_str(), "rb"), &std::fclose);
  if (!file) {
    const int error = errno;
    if (error == ENOENT) {
      return Status::invalid_input(fmt::format("{}: no such file; check the path", path));
    }
    return Status::io_error(fmt::format("{}: cannot open the file for reading: {}", path,
                                        std::strerror(error)));
  }
  std::string bytes;
  if (std::fseek(file.get(), 0, SEEK_END) == 0) {
    const long size = std::ftell(file.get());
    std::fseek(file.get(), 0, SEEK_SET);
    if (size > 0) {  // one read into a buffer of the file's size
      bytes.resize(static_cast<std::size_t>(size));
      bytes.resize(std::fread(bytes.data(), 1, bytes.size(), file.get()));
    }
  }
  char buffer[1 << 16];  // pipes and files that grew: read whatever remains
  std::size_t got = 0;
  while ((got = std::fread(buffer, 1, sizeof buffer, file.get())) > 0) bytes.append(buffer, got);
  if (std::ferror(file.get())) {
    return Status::io_error(fmt::format("{}: reading the file failed", path));
  }
  return parse_table(bytes, path, options);
}

}  // namespace credence
