// load_dataset: read, type, split, fit and encode a table in one call.
#include <fmt/format.h>

#include <algorithm>

#include "credence/data.h"

namespace credence {

Result<Dataset> load_dataset(const std::string& path, const DataOptions& options) {
  ReadOptions read = options.read;
  for (const std::string& name : options.schema.categorical) read.text_columns.push_back(name);
  if (!options.schema.target.empty()) read.text_columns.push_back(options.schema.target);

  Dataset data;
  Result<Table> table = read_table(path, read);
  if (!table.ok()) return table.status();
  data.table = std::move(*table);

  Result<Schema> schema = infer_schema(data.table, options.schema);
  if (!schema.ok()) return schema.status();
  data.schema = std::move(*schema);
  if (const std::string& positive = options.schema.positive_class; !positive.empty()) {
    const std::vector<std::string>& names = data.schema.class_names;
    if (names.size() != 2 || std::find(names.begin(), names.end(), positive) == names.end()) {
      std::string list;
      for (const std::string& n : names) list += (list.empty() ? "'" : ", '") + n + "'";
      return Status::invalid_input(fmt::format(
          "{}: --positive-class '{}': {}", path, positive,
          names.size() != 2
              ? fmt::format("a positive class applies to two-class targets; '{}' has {} classes",
                            options.schema.target, names.size())
              : fmt::format("not a class of '{}'; name one of {}", options.schema.target, list)));
    }
  }

  Result<Split> split = stratified_split(data.schema.labels, data.schema.num_classes(), options.split);
  if (!split.ok()) return split.status().with_context(data.table.source);
  data.split = std::move(*split);
  cover_levels_in_train(data.split, data.table, data.schema);
  warn_small_data(data.schema, data.split, data.table.source);

  Result<Preprocessing> fitted =
      fit_preprocessing(data.table, data.schema, data.split.train, options.preprocess);
  if (!fitted.ok()) return fitted.status();
  data.preprocessing = std::move(*fitted);

  Result<Eigen::MatrixXf> x = transform_table(data.preprocessing, data.table);
  if (!x.ok()) return x.status();
  data.x = std::move(*x);
  data.labels = data.schema.labels;
  return data;
}

}  // namespace credence
