// stratified_split: seeded per-class shuffles cut by largest remainders.
#include <algorithm>
#include <cmath>
#include <fmt/format.h>

#include "credence/data.h"
#include "data/shuffle.h"
#include "util/log.h"

namespace credence {

namespace {

// Per-class counts for one held-out part: each within one row of counts[k] * fraction,
// and summing to round(N * fraction) (largest-remainder rounding).
std::vector<std::int64_t> part_counts(const std::vector<std::int64_t>& counts, double fraction) {
  std::int64_t total = 0;
  for (std::int64_t c : counts) total += c;
  const auto wanted = static_cast<std::int64_t>(std::llround(static_cast<double>(total) * fraction));
  std::vector<std::int64_t> out(counts.size());
  std::vector<std::pair<double, std::size_t>> remainders;
  std::int64_t assigned = 0;
  for (std::size_t k = 0; k < counts.size(); ++k) {
    const double exact = static_cast<double>(counts[k]) * fraction;
    out[k] = static_cast<std::int64_t>(std::floor(exact));
    assigned += out[k];
    remainders.emplace_back(exact - static_cast<double>(out[k]), k);
  }
  // Larger remainder first; ties go to the smaller class index so the result is deterministic.
  std::sort(remainders.begin(), remainders.end(), [](const auto& a, const auto& b) {
    return a.first != b.first ? a.first > b.first : a.second < b.second;
  });
  for (std::size_t i = 0; i < remainders.size() && assigned < wanted; ++i) {
    const std::size_t k = remainders[i].second;
    if (out[k] < counts[k]) {
      ++out[k];
      ++assigned;
    }
  }
  return out;
}

}  // namespace

Result<Split> stratified_split(std::span<const std::int32_t> labels, int num_classes,
                               const SplitOptions& options) {
  const double test = options.test_fraction;
  const double val = options.val_fraction;
  if (!(test >= 0.0 && test < 1.0) || !(val >= 0.0 && val < 1.0) || !(test + val < 1.0)) {
    return Status::invalid_input(fmt::format(
        "--test-fraction {} and --val-fraction {} must each lie in [0, 1) and sum to less "
        "than 1, leaving rows to train on",
        test, val));
  }
  const auto k_count = static_cast<std::size_t>(num_classes);
  std::vector<std::vector<std::int64_t>> by_class(k_count);
  for (std::size_t i = 0; i < labels.size(); ++i) {
    assert(labels[i] >= 0 && labels[i] < num_classes);
    by_class[static_cast<std::size_t>(labels[i])].push_back(static_cast<std::int64_t>(i));
  }
  std::vector<std::int64_t> counts(k_count);
  for (std::size_t k = 0; k < k_count; ++k) counts[k] = static_cast<std::int64_t>(by_class[k].size());
  const std::vector<std::int64_t> test_counts = part_counts(counts, test);
  std::vector<std::int64_t> val_counts = part_counts(counts, val);
  for (std::size_t k = 0; k < k_count; ++k) {  // tiny classes: never take more than exist
    val_counts[k] = std::min(val_counts[k], counts[k] - test_counts[k]);
  }

  Split split;
  std::uint64_t state = options.seed;
  for (std::size_t k = 0; k < k_count; ++k) {
    std::span<std::int64_t> rows(by_class[k]);
    data::shuffle_in_place(rows, state);
    const auto n_test = static_cast<std::size_t>(test_counts[k]);
    const auto n_val = static_cast<std::size_t>(val_counts[k]);
    split.test.insert(split.test.end(), rows.begin(), rows.begin() + static_cast<std::ptrdiff_t>(n_test));
    split.validation.insert(split.validation.end(), rows.begin() + static_cast<std::ptrdiff_t>(n_test),
                            rows.begin() + static_cast<std::ptrdiff_t>(n_test + n_val));
    split.train.insert(split.train.end(), rows.begin() + static_cast<std::ptrdiff_t>(n_test + n_val),
                       rows.end());
  }
  std::sort(split.train.begin(), split.train.end());
  std::sort(split.validation.begin(), split.validation.end());
  std::sort(split.test.begin(), split.test.end());
  if (split.train.empty()) {
    return Status::invalid_input(fmt::format(
        "the split leaves no training rows out of {}; lower --test-fraction or --val-fraction",
        labels.size()));
  }
  return split;
}

}  // namespace credence

namespace credence {

std::int64_t cover_levels_in_train(Split& split, const Table& table, const Schema& schema) {
  std::vector<std::int64_t> moved;
  std::string named;  // the first few column=level pairs, for the log line
  for (const ColumnSchema& c : schema.columns) {
    if (c.role != ColumnRole::kFeature || c.type != ColumnType::kCategorical) continue;
    const TableColumn& column = table.columns[static_cast<std::size_t>(c.index)];
    // Level codes with one slot more for a missing cell (code -1), a level under median
    // imputation.
    const bool missing_is_level = schema.impute == ImputeMethod::kMedian;
    const std::size_t slots = column.levels.size() + 1;
    auto slot_of = [&](std::int64_t row) -> std::ptrdiff_t {
      const std::int32_t code = column.codes[static_cast<std::size_t>(row)];
      if (code >= 0) return code;
      return missing_is_level ? static_cast<std::ptrdiff_t>(column.levels.size()) : -1;
    };
    std::vector<bool> in_train(slots, false);
    for (std::int64_t row : split.train) {
      if (const std::ptrdiff_t s = slot_of(row); s >= 0) in_train[static_cast<std::size_t>(s)] = true;
    }
    for (std::vector<std::int64_t>* part : {&split.validation, &split.test}) {
      for (auto it = part->begin(); it != part->end();) {
        const std::ptrdiff_t s = slot_of(*it);
        if (s < 0 || in_train[static_cast<std::size_t>(s)]) {
          ++it;
          continue;
        }
        in_train[static_cast<std::size_t>(s)] = true;
        if (moved.size() < 3) {
          named += fmt::format("{}'{}' = '{}'", named.empty() ? "" : ", ", column.name,
                               static_cast<std::size_t>(s) < column.levels.size()
                                   ? column.levels[static_cast<std::size_t>(s)]
                                   : std::string(kMissingLevel));
        }
        moved.push_back(*it);
        split.train.insert(std::lower_bound(split.train.begin(), split.train.end(), *it), *it);
        it = part->erase(it);
      }
    }
  }
  if (!moved.empty()) {
    log().info("{}: {} held-out row{} moved into the training rows so that every category level "
               "is seen in training ({}{}); the split had left {} out by chance",
               table.source, moved.size(), moved.size() == 1 ? "" : "s", named,
               moved.size() > 3 ? ", ..." : "", moved.size() == 1 ? "it" : "them");
  }
  return static_cast<std::int64_t>(moved.size());
}

}  // namespace credence
