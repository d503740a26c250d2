// `credence schema`: how the tool reads a table: roles, types, missing values, classes, splits.
#include <cerrno>
#include <cstdio>
#include <cstring>
#include <fmt/format.h>
#include <string>
#include <unistd.h>

#include "cli/commands.h"
#include "cli/data_options.h"
#include "util/json.h"
#include "cli/memory_option.h"
#include "util/memory_guard.h"
#include "credence/data.h"
#include "util/atomic_file.h"

namespace credence::cli {

namespace {

struct SchemaSettings {
  std::string data_path;  // DATA.csv
  std::string json_path;  // --json FILE; empty = none
  DataFlags data;
  std::string max_memory;  // --max-memory; empty: the default share of physical memory
};

// Column names are user text of any width; padding by hand keeps the table aligned.
std::string pad_right(std::string text, std::size_t width) {
  if (text.size() < width) text.append(width - text.size(), ' ');
  return text;
}

// Rows of each class in one part of the split.
std::vector<std::int64_t> class_counts_in(const Dataset& data, const std::vector<std::int64_t>& rows) {
  std::vector<std::int64_t> counts(static_cast<std::size_t>(data.schema.num_classes()), 0);
  for (std::int64_t r : rows) ++counts[static_cast<std::size_t>(data.labels[static_cast<std::size_t>(r)])];
  return counts;
}

std::pair<int, int> feature_type_counts(const Schema& schema) {
  int numeric = 0;
  int categorical = 0;
  for (const ColumnSchema& c : schema.columns) {
    if (c.role != ColumnRole::kFeature) continue;
    (c.type == ColumnType::kNumeric ? numeric : categorical) += 1;
  }
  return {numeric, categorical};
}

std::string text_report(const Dataset& data, const DataOptions& options) {
  const Schema& schema = data.schema;
  const Table& table = data.table;
  auto [numeric, categorical] = feature_type_counts(schema);
  std::string out = fmt::format("{}: {} rows, {} columns\n", table.source, table.rows(),
                                table.columns.size());
  out += fmt::format("inputs: {} numeric and {} categorical columns, {} values per row after "
                     "encoding\n\n",
                     numeric, categorical, data.preprocessing.input_width);
  std::size_t name_width = 6;
  for (const ColumnSchema& c : schema.columns) name_width = std::max(name_width, c.name.size());
  out += "   #  " + pad_right("column", name_width) + "  role     type          missing  levels\n";
  for (const ColumnSchema& c : schema.columns) {
    std::string levels;
    if (c.type == ColumnType::kCategorical) {
      levels = std::to_string(c.levels);
      const TableColumn& column = table.columns[static_cast<std::size_t>(c.index)];
      if (c.role == ColumnRole::kFeature && !column.levels.empty() && column.levels.size() <= 6) {
        std::string names;
        for (const std::string& level : column.levels) names += (names.empty() ? "" : ", ") + level;
        levels += " (" + names + ")";
      }
    }
    std::string line = fmt::format("{:4d}  {}  {} {} {:8d}  {}", c.index + 1,
                                   pad_right(c.name, name_width),
                                   pad_right(std::string(role_name(c.role)), 8),
                                   pad_right(std::string(type_name(c.type)), 12), c.missing, levels);
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  const auto n = static_cast<double>(table.rows());
  out += fmt::format("\nclasses of '{}' (index order: {}):\n", data.preprocessing.target,
                     schema.classes_numeric ? "numeric" : "lexicographic");
  for (int k = 0; k < schema.num_classes(); ++k) {
    const std::int64_t count = schema.class_counts[static_cast<std::size_t>(k)];
    out += fmt::format("  {:3d}  {} {:8d} rows  {:5.1f}%\n", k,
                       pad_right(schema.class_names[static_cast<std::size_t>(k)], 20), count,
                       100.0 * static_cast<double>(count) / n);
  }
  out += fmt::format("\nsplit (stratified, seed {}, test fraction {}, validation fraction {}):\n",
                     options.split.seed, options.split.test_fraction, options.split.val_fraction);
  const std::vector<std::pair<const char*, const std::vector<std::int64_t>*>> parts = {
      {"train", &data.split.train}, {"validation", &data.split.validation}, {"test", &data.split.test}};
  for (const auto& [name, rows] : parts) {
    const std::vector<std::int64_t> counts = class_counts_in(data, *rows);
    std::string per_class;
    for (int k = 0; k < schema.num_classes(); ++k) {
      per_class += fmt::format("{}{} {}", k == 0 ? "" : ", ",
                               schema.class_names[static_cast<std::size_t>(k)],
                               counts[static_cast<std::size_t>(k)]);
    }
    out += fmt::format("  {}{:8d} rows  ({})\n", pad_right(name, 11), rows->size(), per_class);
  }
  return out;
}

std::string json_report(const Dataset& data, const DataOptions& options) {
  const Schema& schema = data.schema;
  const Table& table = data.table;
  auto [numeric, categorical] = feature_type_counts(schema);
  std::string out = "{\n";
  out += fmt::format("  \"file\": {},\n  \"rows\": {},\n", json_string(table.source), table.rows());
  out += "  \"columns\": [\n";
  for (std::size_t j = 0; j < schema.columns.size(); ++j) {
    const ColumnSchema& c = schema.columns[j];
    std::string levels = "null";
    if (c.type == ColumnType::kCategorical && c.role != ColumnRole::kTarget) {
      levels = "[";
      for (const std::string& level : table.columns[j].levels) {
        levels += (levels.size() > 1 ? ", " : "") + json_string(level);
      }
      levels += "]";
    }
    const std::string first_missing =
        c.missing > 0 ? std::to_string(table.row_lines[static_cast<std::size_t>(c.first_missing_row)])
                      : "null";
    out += fmt::format(
        "    {{\"index\": {}, \"name\": {}, \"role\": \"{}\", \"type\": \"{}\", \"missing\": {}, "
        "\"first_missing_line\": {}, \"level_count\": {}, \"levels\": {}}}{}\n",
        c.index + 1, json_string(c.name), role_name(c.role), type_name(c.type), c.missing,
        first_missing, c.type == ColumnType::kCategorical ? std::to_string(c.levels) : "null",
        levels, j + 1 < schema.columns.size() ? "," : "");
  }
  out += "  ],\n";
  out += fmt::format(
      "  \"inputs\": {{\"numeric_columns\": {}, \"categorical_columns\": {}, \"width\": {}}},\n",
      numeric, categorical, data.preprocessing.input_width);
  out += fmt::format("  \"target\": {},\n  \"class_order\": \"{}\",\n  \"classes\": [\n",
                     json_string(data.preprocessing.target),
                     schema.classes_numeric ? "numeric" : "lexicographic");
  for (int k = 0; k < schema.num_classes(); ++k) {
    out += fmt::format("    {{\"index\": {}, \"name\": {}, \"rows\": {}}}{}\n", k,
                       json_string(schema.class_names[static_cast<std::size_t>(k)]),
                       schema.class_counts[static_cast<std::size_t>(k)],
                       k + 1 < schema.num_classes() ? "," : "");
  }
  out += "  ],\n";
  out += fmt::format(
      "  \"split\": {{\"stratified\": true, \"seed\": {}, \"test_fraction\": {}, "
      "\"val_fraction\": {}, \"train\": {}, \"validation\": {}, \"test\": {}}}\n",
      options.split.seed, options.split.test_fraction, options.split.val_fraction,
      data.split.train.size(), data.split.validation.size(), data.split.test.size());
  out += "}\n";
  return out;
}

Status run_schema(const SchemaSettings& settings) {
  Result<DataOptions> options = resolve_data_options(settings.data);
  if (!options.ok()) return options.status();
  Result<MemoryLimit> limit = memory_limit_from_flag(settings.max_memory);
  if (!limit.ok()) return limit.status();
  const std::uint64_t file_bytes = file_bytes_or_zero(settings.data_path);
  CREDENCE_RETURN_IF_ERROR(check_memory(
      fmt::format("{}: reading a table of {}", settings.data_path, format_bytes(file_bytes)),
      estimate_table_bytes(file_bytes), *limit));
  Result<Dataset> data = load_dataset(settings.data_path, *options);
  if (!data.ok()) return data.status();
  const std::string report = text_report(*data, *options);
  std::fwrite(report.data(), 1, report.size(), stdout);
  std::fflush(stdout);
  if (!settings.json_path.empty()) {
    CREDENCE_RETURN_IF_ERROR(write_file_atomically(settings.json_path, json_report(*data, *options)));
  }
  return Status::ok_status();
}

}  // namespace

void add_schema_command(CLI::App& app, const GlobalOptions&, CommandList& commands) {
  auto settings = std::make_shared<SchemaSettings>();
  auto* sub = app.add_subcommand(
      "schema", "How credence reads a table: each column's role, type, missing values and "
                "levels, the classes and the split sizes");
  sub->add_option("DATA.csv", settings->data_path, "The table (CSV with a header row)")->required();
  sub->add_option("--json", settings->json_path, "Also write the facts as JSON to this file");
  add_data_options(*sub, settings->data);
  add_max_memory_option(*sub, settings->max_memory);
  commands.push_back({sub, [settings] { return run_schema(*settings); }});
}

}  // namespace credence::cli
