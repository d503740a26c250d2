// Edit distance and the closest name, for "did you mean" hints on column names.
#include "data/closest_name.h"

#include <algorithm>
#include <numeric>

namespace credence::data {

namespace {

char lower(char c) { return c >= 'A' && c <= 'Z' ? static_cast<char>(c - 'A' + 'a') : c; }

bool affix_of(std::string_view part, std::string_view whole) {
  if (part.size() < 3 || part.size() >= whole.size()) return false;
  const auto same = [](char x, char y) { return lower(x) == lower(y); };
  return std::equal(part.begin(), part.end(), whole.begin(), same) ||
         std::equal(part.rbegin(), part.rend(), whole.rbegin(), same);
}

}  // namespace

std::size_t edit_distance(std::string_view a, std::string_view b) {
  // One row of the dynamic-programming table (the Wagner-Fischer algorithm).
  std::vector<std::size_t> row(b.size() + 1);
  std::iota(row.begin(), row.end(), std::size_t{0});
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      const std::size_t substitute = diagonal + (lower(a[i - 1]) == lower(b[j - 1]) ? 0 : 1);
      row[j] = std::min({above + 1, row[j - 1] + 1, substitute});
      diagonal = above;
    }
  }
  return row[b.size()];
}

int closest_name(const std::vector<std::string>& names, std::string_view typed) {
  int best = -1;
  std::size_t best_distance = 0;
  for (std::size_t k = 0; k < names.size(); ++k) {
    const std::size_t d = edit_distance(typed, names[k]);
    const std::size_t longer = std::max(typed.size(), names[k].size());
    const bool close = d <= std::max<std::size_t>(1, longer / 3) || affix_of(typed, names[k]);
    if (close && (best < 0 || d < best_distance)) {
      best = static_cast<int>(k);
      best_distance = d;
    }
  }
  return best;
}

}  // namespace credence::data
