// CSV tokenizer: one pass over an in-memory buffer, memchr scans, no allocation per field.
#include "data/csv_reader.h"

#include <algorithm>
#include <bit>
#include <cstdint>
#include <charconv>
#include <cmath>
#include <cstring>
#include <fmt/format.h>

namespace credence::data {

namespace {

constexpr std::string_view kByteOrderMark = "\xEF\xBB\xBF";

std::int64_t count_newlines(std::string_view text) {
  return static_cast<std::int64_t>(std::count(text.begin(), text.end(), '\n'));
}

// The first delimiter or '\n' at or after `p`, else n. Eight bytes at a time (SWAR): a
// byte equal to the target becomes zero after the XOR, and (v - 0x01..) & ~v & 0x80..
// sets the top bit of every zero byte, with false positives only above a true zero, so
// the lowest set bit is exact. Numeric fields are about ten bytes, so this replaces
// roughly ten compare-and-branch steps with two.
std::size_t find_field_end(const char* data, std::size_t p, std::size_t n, char delimiter) {
  constexpr std::uint64_t kOnes = 0x0101010101010101ULL;
  constexpr std::uint64_t kHighs = 0x8080808080808080ULL;
  const std::uint64_t delimiters = kOnes * static_cast<unsigned char>(delimiter);
  const std::uint64_t newlines = kOnes * static_cast<unsigned char>('\n');
  static_assert(std::endian::native == std::endian::little, "the byte order below assumes it");
  for (; p + 8 <= n; p += 8) {
    std::uint64_t word;
    std::memcpy(&word, data + p, 8);
    const std::uint64_t a = word ^ delimiters;
    const std::uint64_t b = word ^ newlines;
    const std::uint64_t hits = ((a - kOnes) & ~a & kHighs) | ((b - kOnes) & ~b & kHighs);
    if (hits != 0) return p + static_cast<std::size_t>(std::countr_zero(hits) / 8);
  }
  while (p < n && data[p] != delimiter && data[p] != '\n') ++p;
  return p;
}

}  // namespace

CsvScanner::CsvScanner(std::string_view bytes, char delimiter, std::string source)
    : bytes_(bytes), delimiter_(delimiter), source_(std::move(source)) {
  if (bytes_.starts_with(kByteOrderMark)) pos_ = kByteOrderMark.size();
}

Status CsvScanner::next(CsvRecord& record, bool& got) {
  record.fields.clear();
  record.quoted.clear();
  const char* data = bytes_.data();
  const std::size_t n = bytes_.size();

  // Blank lines separate nothing in a table; skip them but keep counting lines.
  while (pos_ < n) {
    if (data[pos_] == '\n') {
      ++pos_;
      ++line_;
    } else if (data[pos_] == '\r' && pos_ + 1 < n && data[pos_ + 1] == '\n') {
      pos_ += 2;
      ++line_;
    } else {
      break;
    }
  }
  got = pos_ < n;
  if (!got) return Status::ok_status();
  record.line = line_;

  while (true) {
    const std::size_t field_index = record.fields.size();
    if (data[pos_] == '"') {
      CREDENCE_RETURN_IF_ERROR(read_quoted(record, field_index));
    } else {
      // Unquoted: up to the delimiter or the line end, whichever comes first.
      const std::size_t start = pos_;
      std::size_t p = pos_;
      p = find_field_end(data, p, n, delimiter_);
      pos_ = p;
      std::size_t stop = p;
      if ((p == n || data[p] == '\n') && stop > start && data[stop - 1] == '\r') --stop;  // CRLF
      record.fields.emplace_back(data + start, stop - start);
      record.quoted.push_back(0);
    }
    // pos_ is now at a delimiter, a line end (after any CR) or the end of the data.
    if (pos_ >= n) return Status::ok_status();
    if (data[pos_] == delimiter_) {
      ++pos_;
      if (pos_ >= n) {  // a delimiter right at the end of the data: one more empty field
        record.fields.emplace_back();
        record.quoted.push_back(0);
        return Status::ok_status();
      }
      continue;
    }
    if (data[pos_] == '\r') ++pos_;
    if (pos_ >= n) return Status::ok_status();
    if (data[pos_] == '\n') {
      ++pos_;
      ++line_;
      return Status::ok_status();
    }
    return Status::internal("CSV scanner lost its place at byte " + std::to_string(pos_));
  }
}

Status CsvScanner::read_quoted(CsvRecord& record, std::size_t field_index) {
  const char* data = bytes_.data();
  const std::size_t n = bytes_.size();
  const std::int64_t open_line = line_;
  std::size_t start = pos_ + 1;
  bool has_doubled = false;
  std::size_t scan = start;
  std::size_t close = 0;
  while (true) {
    const char* quote = static_cast<const char*>(std::memchr(data + scan, '"', n - scan));
    if (quote == nullptr) {
      return Status::invalid_input(fmt::format(
          "{}:{}:{}: the quoted field that opens here is never closed; close it with a quote "
          "(a quote inside a quoted field is written twice: \"\")",
          source_, open_line, field_index + 1));
    }
    const std::size_t q = static_cast<std::size_t>(quote - data);
    if (q + 1 < n && data[q + 1] == '"') {  // a doubled quote stands for one quote
      has_doubled = true;
      scan = q + 2;
      continue;
    }
    close = q;
    break;
  }
  std::string_view inside(data + start, close - start);
  line_ += count_newlines(inside);
  pos_ = close + 1;
  if (pos_ < n && data[pos_] != delimiter_ && data[pos_] != '\n' &&
      !(data[pos_] == '\r' && (pos_ + 1 == n || data[pos_ + 1] == '\n'))) {
    return Status::invalid_input(fmt::format(
        "{}:{}:{}: text follows the closing quote of a quoted field; quote the whole field and "
        "write any quote inside it twice (\"\")",
        source_, line_, field_index + 1));
  }
  if (has_doubled) {
    if (unescaped_.size() <= field_index) unescaped_.resize(field_index + 1);
    std::string& out = unescaped_[field_index];
    out.clear();
    for (std::size_t i = 0; i < inside.size(); ++i) {
      out.push_back(inside[i]);
      if (inside[i] == '"') ++i;  // skip the second quote of a pair
    }
    record.fields.emplace_back(out);
  } else {
    record.fields.push_back(inside);
  }
  record.quoted.push_back(1);
  return Status::ok_status();
}

namespace {

// Consumes a run of digits into `mantissa`, two at a time: the multiply-add chain through
// the mantissa, not the loads, limits this loop, and pairs halve its length. Zeros before
// the first nonzero digit are skipped and not counted in `digits`. (Past 19 digits the
// mantissa wraps; the caller then sees digits > 15 and does not use it.)
[[gnu::always_inline]] inline const char* take_digits(const char* p, const char* end,
                                                     std::uint64_t& mantissa, int& digits) {
  if (mantissa == 0) {
    while (p != end && *p == '0') ++p;
  }
  const char* run = p;
  while (end - p >= 2) {
    const auto a = static_cast<unsigned>(p[0]) - static_cast<unsigned>('0');
    const auto b = static_cast<unsigned>(p[1]) - static_cast<unsigned>('0');
    if (a >= 10 || b >= 10) break;
    mantissa = mantissa * 100 + a * 10 + b;
    p += 2;
  }
  if (p != end) {
    const auto a = static_cast<unsigned>(*p) - static_cast<unsigned>('0');
    if (a < 10) {
      mantissa = mantissa * 10 + a;
      ++p;
    }
  }
  digits += static_cast<int>(p - run);
  return p;
}

// Clinger's fast path ("How to read floating point numbers accurately", PLDI 1990): when the
// decimal significand fits in 53 bits and |exponent| <= 22, both it and the power of ten are
// exact doubles, so one IEEE multiply or divide gives the correctly rounded value.
// Reads from `p` as far as the number goes and returns where it stopped; nullptr when
// the text there is not of that simple form (the caller then uses std::from_chars).
const char* scan_simple_decimal(const char* p, const char* end, double& value) {
  static constexpr double kPowers[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                       1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                       1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};
  bool negative = false;
  if (p != end && *p == '-') {
    negative = true;
    ++p;
  }
  std::uint64_t mantissa = 0;
  int digits = 0;  // significant digits: leading zeros do not count
  const char* first_digit = p;
  const char* point = nullptr;
  p = take_digits(p, end, mantissa, digits);
  if (p != end && *p == '.') {
    point = p;
    p = take_digits(p + 1, end, mantissa, digits);
  }
  if (digits > 15) return nullptr;  // more than a double holds exactly: from_chars
  const auto length = static_cast<int>(p - first_digit);
  if (length == (point != nullptr ? 1 : 0)) return nullptr;  // no digit at all
  int exponent = point != nullptr ? -static_cast<int>(p - point - 1) : 0;
  if (p != end && (*p == 'e' || *p == 'E')) {
    ++p;
    bool exp_negative = false;
    if (p != end && (*p == '-' || *p == '+')) exp_negative = *p++ == '-';
    if (p == end || *p < '0' || *p > '9') return nullptr;  // an exponent needs a digit
    int e = 0;
    for (; p != end && *p >= '0' && *p <= '9'; ++p) {
      if (e > 1000) return nullptr;
      e = e * 10 + (*p - '0');
    }
    exponent += exp_negative ? -e : e;
  }
  if (exponent < -22 || exponent > 22) return nullptr;
  double v = static_cast<double>(mantissa);  // exact: mantissa < 10^15 < 2^53
  v = exponent < 0 ? v / kPowers[-exponent] : v * kPowers[exponent];
  value = negative ? -v : v;
  return p;
}

}  // namespace

bool parse_number(std::string_view text, double& value) {
  if (text.empty()) return false;
  const char* first = text.data();
  const char* last = text.data() + text.size();
  if (*first == '+') ++first;  // from_chars takes '-' but not '+'
  if (first == last) return false;
  // from_chars would accept "inf" and "nan"; a table cell like that is not a measurement.
  const char* lead = *first == '-' ? first + 1 : first;
  if (lead == last || !((*lead >= '0' && *lead <= '9') || *lead == '.')) return false;
  if (scan_simple_decimal(first, last, value) == last) return true;
  auto [end, error] = std::from_chars(first, last, value, std::chars_format::general);
  return error == std::errc() && end == last && std::isfinite(value);
}

// "3,14", "-0,5", "1.234,5": a number written with a decimal comma (and perhaps points
// between groups of thousands), as spreadsheets in many locales save CSV.
bool decimal_comma_number(std::string_view text) {
  const std::size_t comma = text.find(',');
  if (comma == std::string_view::npos || comma == 0 || comma + 1 == text.size()) return false;
  std::string_view whole = text.substr(0, comma);
  const std::string_view fraction = text.substr(comma + 1);
  if (whole.front() == '-' || whole.front() == '+') whole.remove_prefix(1);
  const auto digits = [](std::string_view s) {
    return !s.empty() && std::all_of(s.begin(), s.end(), [](char c) { return c >= '0' && c <= '9'; });
  };
  if (!digits(fraction)) return false;
  // Groups of thousands: 1-3 digits, then ".ddd" groups.
  std::size_t group_start = 0;
  for (std::size_t dot = whole.find('.'); dot != std::string_view::npos;
       dot = whole.find('.', group_start)) {
    const std::string_view group = whole.substr(group_start, dot - group_start);
    if (!digits(group) || (group_start > 0 ? group.size() != 3 : group.size() > 3)) return false;
    group_start = dot + 1;
  }
  const std::string_view last = whole.substr(group_start);
  return digits(last) && (group_start == 0 || last.size() == 3);
}

const char* parse_plain_number(const char* p, const char* end, double& value) {
  if (p == end || !((*p >= '0' && *p <= '9') || *p == '.' || *p == '-')) return nullptr;
  return scan_simple_decimal(p, end, value);
}

}  // namespace credence::data
