// CsvScanner: splits CSV bytes into records of fields (RFC 4180), tracking line numbers.
#pragma once

#include <cstdint>
#include <deque>
#include <string>
#include <string_view>
#include <vector>

#include "credence/status.h"

namespace credence::data {

/// One record: views of its fields and the physical line where it starts.
/// The views stay valid until the next call to CsvScanner::next.
struct CsvRecord {
  std::vector<std::string_view> fields;
  std::vector<std::uint8_t> quoted;  // 1 where the field was written in quotes
  std::int64_t line = 0;             // 1-based physical line of the record's first byte
};

/// Walks a buffer record by record. Blank lines are skipped (but counted); a UTF-8
/// byte-order mark at the very start is skipped; a record ends at LF or CRLF outside
/// quotes. Quoted fields may hold delimiters, doubled quotes and line breaks.
/// The buffer must outlive the scanner.
class CsvScanner {
 public:
  CsvScanner(std::string_view bytes, char delimiter, std::string source);

  /// Reads the next record into `record`. Sets `got` false at the end of the data.
  /// Returns kInvalidInput (with file:line:column) for an unterminated quote or
  /// text after a closing quote.
  Status next(CsvRecord& record, bool& got);

  /// Makes the next byte count as physical line `line` (for a piece of a larger file
  /// whose header was prepended).
  void set_line(std::int64_t line) { line_ = line; }

  /// Continues from byte `pos`, the start of a record on physical line `line` (for a
  /// second thread that reads from the middle of an unquoted table).
  void seek(std::size_t pos, std::int64_t line) {
    pos_ = pos;
    line_ = line;
  }

  /// The next byte to read and its physical line.
  std::size_t position() const { return pos_; }
  std::int64_t line() const { return line_; }

 private:
  Status read_quoted(CsvRecord& record, std::size_t field_index);

  std::string_view bytes_;
  char delimiter_;
  std::string source_;
  std::size_t pos_ = 0;
  std::int64_t line_ = 1;
  // Per field slot: text of a field with doubled quotes. A deque, because growing it must
  // not move the strings that earlier fields of the same record still point into.
  std::deque<std::string> unescaped_;
};

/// Parses a finite decimal number (optional sign, digits, point, exponent) that fills
/// the whole of `text`, without locale or allocation. Returns false otherwise.
bool parse_number(std::string_view text, double& value);

/// Whether `text` is a number written with a decimal comma ("3,14", "-0,5", "1.234,5":
/// points may only separate groups of three digits before the comma), as spreadsheets in
/// many locales save CSV. parse_number refuses such text.
bool decimal_comma_number(std::string_view text);

/// The number that starts at `p` (optional '-', digits, optional point and digits,
/// optional exponent), read as far as it goes; returns the first byte after it. nullptr
/// when no such number starts there or it needs more than the fast path (over 15
/// significant digits, or a power of ten past 1e22): parse_number then decides. A number
/// it reads gets the same bits from parse_number.
const char* parse_plain_number(const char* p, const char* end, double& value);

/// `text` without leading and trailing spaces and tabs. Inline: it runs on every cell.
inline std::string_view trim_blanks(std::string_view text) {
  std::size_t begin = 0;
  std::size_t end = text.size();
  while (begin < end && (text[begin] == ' ' || text[begin] == '\t')) ++begin;
  while (end > begin && (text[end - 1] == ' ' || text[end - 1] == '\t')) --end;
  return text.substr(begin, end - begin);
}

}  // namespace credence::data
