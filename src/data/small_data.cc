// warn_small_data: classes and split parts too small to trust, named with their counts.
#include <fmt/format.h>

#include "credence/data.h"
#include "util/warn_once.h"

namespace credence {

void warn_small_data(const Schema& schema, const Split& split, std::string_view source) {
  for (int k = 0; k < schema.num_classes(); ++k) {
    const std::int64_t count = schema.class_counts[static_cast<std::size_t>(k)];
    if (count < kFewClassRows) {
      warn_once(fmt::format("{}: class '{}' has only {} row{} (fewer than {}): its predicted "
                            "probabilities and scores rest on too few examples to trust",
                            source, schema.class_names[static_cast<std::size_t>(k)], count,
                            count == 1 ? "" : "s", kFewClassRows));
    }
  }
  const std::pair<const char*, const std::vector<std::int64_t>*> parts[] = {
      {"training", &split.train}, {"validation", &split.validation}, {"test", &split.test}};
  for (const auto& [name, rows] : parts) {
    if (rows->empty()) continue;  // a part not asked for lacks nothing
    std::vector<std::int64_t> per_class(static_cast<std::size_t>(schema.num_classes()), 0);
    for (std::int64_t row : *rows) ++per_class[static_cast<std::size_t>(schema.labels[static_cast<std::size_t>(row)])];
    for (int k = 0; k < schema.num_classes(); ++k) {
      if (per_class[static_cast<std::size_t>(k)] > 0) continue;
      warn_once(fmt::format("{}: the {} rows ({}) hold no row of class '{}' ({} in the whole "
                            "table), so scores on them say nothing about that class",
                            source, name, rows->size(), schema.class_names[static_cast<std::size_t>(k)],
                            schema.class_counts[static_cast<std::size_t>(k)]));
    }
  }
}

}  // namespace credence
