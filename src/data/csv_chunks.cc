// CsvChunkReader: a CSV file in pieces of whole records, each parsed behind the header.
#include <fmt/format.h>

#include <algorithm>
#include <cerrno>
#include <cstring>

#include "credence/data.h"

namespace credence {
namespace {

constexpr std::size_t kReadBytes = std::size_t{1} << 20;

// One past the line end that closes the last whole record starting in bytes[0, limit),
// or, when no record ends before `limit`, the first record end after it; npos when no
// line end outside quotes exists at all. A quote toggles the quoted state, so a doubled
// quote inside a quoted field toggles it twice and leaves it unchanged (RFC 4180).
std::size_t record_boundary(std::string_view bytes, std::size_t limit) {
  bool quoted = false;
  std::size_t last = std::string_view::npos;
  for (std::size_t i = 0; i < bytes.size(); ++i) {
    const char c = bytes[i];
    if (c == '"') {
      quoted = !quoted;
    } else if (c == '\n' && !quoted) {
      if (i + 1 > limit && last != std::string_view::npos) return last;
      last = i + 1;
      if (last >= limit) return last;
    }
  }
  return last;
}

bool blank(std::string_view bytes) {
  return std::all_of(bytes.begin(), bytes.end(),
                     [](char c) { return c == '\n' || c == '\r' || c == ' ' || c == '\t'; });
}

std::int64_t newlines(std::string_view bytes) {
  return static_cast<std::int64_t>(std::count(bytes.begin(), bytes.end(), '\n'));
}

}  // namespace

Result<CsvChunkReader> CsvChunkReader::open(const std::string& path, const ReadOptions& options,
                                            std::int64_t chunk_bytes) {
  CsvChunkReader reader;
  reader.path_ = path;
  reader.options_ = options;
  reader.chunk_bytes_ = std::max<std::int64_t>(1, chunk_bytes);
  std::FILE* file = std::fopen(path.c_str(), "rb");
  if (file == nullptr) {
    const int error = errno;
    if (error == ENOENT) {
      return Status::invalid_input(fmt::format("{}: no such file; check the path", path));
    }
    return Status::io_error(
        fmt::format("{}: cannot open the file for reading: {}", path, std::strerror(error)));
  }
  reader.file_ = std::shared_ptr<std::FILE>(file, &std::fclose);
  // The header: read until its record ends (or the file does).
  std::size_t end = std::string_view::npos;
  while (true) {
    CREDENCE_RETURN_IF_ERROR(reader.fill());
    end = record_boundary(reader.buffer_, 1);
    if (end != std::string_view::npos || reader.eof_) break;
  }
  if (end == std::string_view::npos) end = reader.buffer_.size();
  reader.header_ = reader.buffer_.substr(0, end);
  reader.buffer_.erase(0, end);
  reader.header_lines_ = newlines(reader.header_);
  reader.next_line_ = 1 + reader.header_lines_;
  // Let the ordinary parser judge the header (and an empty file) with its own messages.
  while (!reader.eof_ && blank(reader.buffer_)) CREDENCE_RETURN_IF_ERROR(reader.fill());
  if (blank(reader.buffer_)) {
    Result<Table> alone = parse_table(reader.header_ + reader.buffer_, path, options);
    if (!alone.ok()) return alone.status();
  }
  return reader;
}

Status CsvChunkReader::fill() {
  std::size_t old = buffer_.size();
  buffer_.resize(old + kReadBytes);
  const std::size_t got = std::fread(buffer_.data() + old, 1, kReadBytes, file_.get());
  buffer_.resize(old + got);
  if (got < kReadBytes) {
    if (std::ferror(file_.get())) {
      return Status::io_error(fmt::format("{}: reading the file failed", path_));
    }
    eof_ = true;
  }
  return Status::ok_status();
}

Status CsvChunkReader::next(Table& table, bool& got) {
  got = false;
  const auto limit = static_cast<std::size_t>(chunk_bytes_);
  while (true) {
    while (!eof_ && buffer_.size() < limit) CREDENCE_RETURN_IF_ERROR(fill());
    // At the end of the file, whatever is left and fits is one piece (its last record
    // may lack a line end).
    std::size_t end = eof_ && buffer_.size() <= limit ? buffer_.size()
                                                      : record_boundary(buffer_, limit);
    while (end == std::string_view::npos && !eof_) {  // one record longer than a chunk
      CREDENCE_RETURN_IF_ERROR(fill());
      end = record_boundary(buffer_, limit);
    }
    if (end == std::string_view::npos) end = buffer_.size();  // the last record, no line end
    if (end == 0) return Status::ok_status();                 // nothing left
    const std::string_view piece(buffer_.data(), end);
    if (!blank(piece)) {
      ReadOptions options = options_;
      options.data_first_line = next_line_;
      Result<Table> parsed = parse_table(header_ + std::string(piece), path_, options);
      if (!parsed.ok()) return parsed.status();
      table = std::move(*parsed);
      got = true;
      rows_read_ += table.rows();
    }
    next_line_ += newlines(piece);
    buffer_.erase(0, end);
    if (got) return Status::ok_status();
  }
}

}  // namespace credence
