// Cell-level helpers shared by the passes of read_table: missing-value tokens and the text
// a cell stands for.
#pragma once

#include <algorithm>
#include <array>
#include <string>
#include <string_view>
#include <vector>

#include "data/csv_reader.h"

namespace credence::data {

/// Missing-value tokens, checked with a length filter first since most cells are not missing.
class NaMatcher {
 public:
  explicit NaMatcher(const std::vector<std::string>& tokens) : tokens_(tokens) {
    for (const std::string& token : tokens_) {
      max_length_ = std::max(max_length_, token.size());
      if (!token.empty()) first_chars_[static_cast<unsigned char>(token[0])] = true;
    }
  }
  bool matches(std::string_view cell) const {
    // Most cells are numbers longer than any token, or start with a digit no token has.
    if (cell.size() > max_length_) return false;
    if (!cell.empty() && !first_chars_[static_cast<unsigned char>(cell[0])]) return false;
    for (const std::string& token : tokens_) {
      if (cell == token) return true;
    }
    return false;
  }
  const std::vector<std::string>& tokens() const { return tokens_; }

 private:
  const std::vector<std::string>& tokens_;
  std::size_t max_length_ = 0;
  std::array<bool, 256> first_chars_{};
};

/// A quoted field as written; an unquoted one without blanks around it.
inline std::string_view cell_text(const CsvRecord& record, std::size_t j) {
  return record.quoted[j] ? record.fields[j] : trim_blanks(record.fields[j]);
}

}  // namespace credence::data
