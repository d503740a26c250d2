// The name in a list that a mistyped name most likely meant, by edit distance.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>
#include <vector>

namespace credence::data {

/// Levenshtein distance (insertions, deletions and substitutions, each costing 1) between
/// `a` and `b` compared byte by byte without regard to ASCII case.
std::size_t edit_distance(std::string_view a, std::string_view b);

/// Index of the name in `names` closest to `typed`, or -1 when none is close enough to be
/// a likely typo: at most a third of the longer name's length (and at least 1) edits, or
/// `typed` a case-insensitive prefix or suffix of a name at least 3 bytes long. Ties go
/// to the earlier name.
int closest_name(const std::vector<std::string>& names, std::string_view typed);

}  // namespace credence::data
