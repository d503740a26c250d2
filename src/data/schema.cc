// infer_schema: roles, types, missing values and classes of a table, with refusals by name.
#include <algorithm>
#include <fmt/format.h>
#include <map>
#include <numeric>

#include "credence/data.h"
#include "data/csv_reader.h"

namespace credence {

std::string_view role_name(ColumnRole role) {
  switch (role) {
    case ColumnRole::kFeature: return "feature";
    case ColumnRole::kTarget: return "target";
    case ColumnRole::kId: return "id";
    case ColumnRole::kDropped: return "dropped";
  }
  return "?";
}

std::string_view type_name(ColumnType type) {
  return type == ColumnType::kNumeric ? "numeric" : "categorical";
}

std::string_view impute_name(ImputeMethod method) {
  return method == ImputeMethod::kNone ? "none" : "median";
}

namespace {

bool contains(const std::vector<std::string>& names, std::string_view name) {
  return std::find(names.begin(), names.end(), name) != names.end();
}

Status check_names(const Table& table, const std::vector<std::string>& names,
                   std::string_view option) {
  for (const std::string& name : names) {
    if (table.find_column(name) < 0) {
      return Status::invalid_input(fmt::format(
          "{}: {} names column '{}', which is not in the header; {}", table.source, option,
          name, table.column_hint(name)));
    }
  }
  return Status::ok_status();
}

std::int64_t line_of(const Table& table, std::int64_t row) {
  return table.row_lines[static_cast<std::size_t>(row)];
}

// How many bad cells one message names; the rest are counted.
constexpr std::size_t kCellsListed = 5;

// A feature that is mostly numbers with a few cells that are not is almost always a
// typo; silently turning it into hundreds of categories would hide it. The message names
// the first kCellsListed such cells and counts all of them, so one run finds them all.
Status check_numeric_typo(const Table& table, int j, const SchemaOptions& options) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  const std::int64_t present = table.rows() - column.missing;
  if (column.first_text_row < 0 || contains(options.categorical, column.name)) {
    return Status::ok_status();
  }
  if (2 * column.numeric_cells < present) return Status::ok_status();
  const std::int64_t bad = present - column.numeric_cells;
  std::string others;
  if (bad > 1 && column.is_text) {
    std::vector<char> level_is_number(column.levels.size());
    double ignored = 0;
    for (std::size_t k = 0; k < column.levels.size(); ++k) {
      level_is_number[k] = data::parse_number(column.levels[k], ignored);
    }
    std::size_t listed = 0;
    for (std::int64_t r = column.first_text_row + 1; r < table.rows() && listed < kCellsListed - 1; ++r) {
      const std::int32_t code = column.codes[static_cast<std::size_t>(r)];
      if (code < 0 || level_is_number[static_cast<std::size_t>(code)]) continue;
      others += fmt::format("{}row {} '{}' (line {})", listed == 0 ? "" : ", ", r + 1,
                            column.levels[static_cast<std::size_t>(code)], line_of(table, r));
      ++listed;
    }
    const std::int64_t unlisted = bad - 1 - static_cast<std::int64_t>(listed);
    others = fmt::format("; {} more cell{} of the column {} not numbers: {}{}", bad - 1,
                         bad == 2 ? "" : "s", bad == 2 ? "is" : "are", others,
                         unlisted > 0 ? fmt::format(" and {} more", unlisted) : "");
  }
  return Status::invalid_input(fmt::format(
      "{}: '{}' is not a number in column '{}' (row {}; {} of the column's {} values are "
      "numbers){}; fix the cell{}, list {} with --na if {} missing, or mark the column "
      "categorical with --categorical '{}'",
      table.cell_location(column.first_text_row, j), column.first_text, column.name,
      column.first_text_row + 1, column.numeric_cells, present, others, bad > 1 ? "s" : "",
      bad > 1 ? "them" : "it", bad > 1 ? "they mean" : "it means", column.name));
}

// A column of numbers written with decimal commas reads as text, and would otherwise
// become a category per distinct value (or fail later on a value never seen in training).
Status check_decimal_comma(const Table& table, int j, const SchemaOptions& options) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  if (!column.is_text || contains(options.categorical, column.name)) return Status::ok_status();
  std::int64_t comma_cells = 0;
  std::int64_t first_row = -1;
  for (std::size_t k = 0; k < column.levels.size(); ++k) {
    if (data::decimal_comma_number(column.levels[k])) comma_cells += column.level_counts[k];
  }
  const std::int64_t present = table.rows() - column.missing;
  if (comma_cells == 0 || 2 * (comma_cells + column.numeric_cells) < present) {
    return Status::ok_status();
  }
  for (std::int64_t r = 0; r < table.rows() && first_row < 0; ++r) {
    const std::int32_t code = column.codes[static_cast<std::size_t>(r)];
    if (code >= 0 && data::decimal_comma_number(column.levels[static_cast<std::size_t>(code)])) {
      first_row = r;
    }
  }
  return Status::invalid_input(fmt::format(
      "{}: column '{}' holds numbers written with a comma ('{}' in row {}; {} of its {} "
      "values), which look like decimal commas; credence reads numbers with a point as the "
      "decimal mark and no thousands separator: save the table again with points as decimal "
      "marks (in a spreadsheet, a CSV export in an English-language locale), or pass "
      "--categorical '{}' if these are labels rather than numbers",
      table.cell_location(first_row, j), column.name,
      column.levels[static_cast<std::size_t>(column.codes[static_cast<std::size_t>(first_row)])],
      first_row + 1, comma_cells, present, column.name));
}

Status check_free_text(const Table& table, int j, const SchemaOptions& options) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  const auto levels = static_cast<std::int64_t>(column.levels.size());
  const std::int64_t present = table.rows() - column.missing;
  const bool too_many = levels > options.max_levels;
  const bool nearly_unique = present >= 20 &&
      static_cast<double>(levels) >= options.max_distinct_fraction * static_cast<double>(present);
  if (!too_many && !nearly_unique) return Status::ok_status();
  return Status::invalid_input(fmt::format(
      "{}: column '{}' (column {}) has {} distinct values in {} rows, so it looks like an "
      "identifier or free text rather than a category; pass --id '{}' to carry it through to "
      "predictions, or --drop '{}' to ignore it",
      table.source, column.name, j + 1, levels, present, column.name, column.name));
}

Status refuse_missing(const Table& table, const Schema& schema) {
  std::string listing;
  int count = 0;
  for (const ColumnSchema& c : schema.columns) {
    if (c.role != ColumnRole::kFeature || c.missing == 0) continue;
    ++count;
    listing += fmt::format("\n  column '{}' (column {}): {} missing, first at {}:{} (row {})",
                           c.name, c.index + 1, c.missing, table.source,
                           line_of(table, c.first_missing_row), c.first_missing_row + 1);
  }
  if (count == 0) return Status::ok_status();
  return Status::invalid_input(fmt::format(
      "{}: {} column{} missing values (cells that are empty or one of the --na tokens):{}\n"
      "Fill them in, drop the column with --drop, or pass --impute median (numeric columns "
      "take the training rows' median, categorical ones the level '{}')",
      table.source, count, count == 1 ? " has" : "s have", listing, kMissingLevel));
}

// Class names from the target column, sorted numerically when all are numbers.
Status read_classes(const Table& table, int j, const SchemaOptions& options, Schema& schema) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  if (column.missing > 0) {
    return Status::invalid_input(fmt::format(
        "{}: the target column '{}' has {} missing value{}, the first in row {}; every row "
        "needs a class: fill them in or remove those rows",
        table.cell_location(column.first_missing_row, j), column.name, column.missing,
        column.missing == 1 ? "" : "s", column.first_missing_row + 1));
  }
  const auto n = static_cast<std::size_t>(table.rows());
  std::vector<std::string> names;
  std::vector<std::int32_t> codes(n);
  if (column.is_text) {
    names = column.levels;
    codes = column.codes;
  } else {
    std::map<double, std::int32_t> values;
    for (double v : column.numbers) values.emplace(v, 0);
    for (auto& [value, code] : values) {
      code = static_cast<std::int32_t>(names.size());
      names.push_back(fmt::format("{}", value));
    }
    for (std::size_t i = 0; i < n; ++i) codes[i] = values[column.numbers[i]];
  }
  std::vector<double> numeric(names.size());
  bool all_numbers = true;
  for (std::size_t k = 0; k < names.size(); ++k) {
    all_numbers = all_numbers && data::parse_number(names[k], numeric[k]);
  }
  std::vector<std::int32_t> order(names.size());
  std::iota(order.begin(), order.end(), 0);
  if (all_numbers) {  // levels are already bytewise sorted; a stable sort keeps that for ties
    std::stable_sort(order.begin(), order.end(), [&](std::int32_t a, std::int32_t b) {
      return numeric[static_cast<std::size_t>(a)] < numeric[static_cast<std::size_t>(b)];
    });
  }
  std::vector<std::int32_t> new_code(names.size());
  schema.class_names.clear();
  for (std::size_t k = 0; k < order.size(); ++k) {
    new_code[static_cast<std::size_t>(order[k])] = static_cast<std::int32_t>(k);
    schema.class_names.push_back(names[static_cast<std::size_t>(order[k])]);
  }
  schema.classes_numeric = all_numbers;
  schema.class_counts.assign(names.size(), 0);
  schema.labels.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    schema.labels[i] = new_code[static_cast<std::size_t>(codes[i])];
    ++schema.class_counts[static_cast<std::size_t>(schema.labels[i])];
  }
  const auto k = static_cast<std::int64_t>(names.size());
  if (k == 1) {
    return Status::invalid_input(fmt::format(
        "{}: the target column '{}' holds one class only ('{}', all {} rows); a classifier "
        "needs at least two classes: check --target",
        table.source, column.name, schema.class_names[0], n));
  }
  if (k > options.max_classes) {
    return Status::invalid_input(fmt::format(
        "{}: the target column '{}' has {} distinct values, more than the {} classes credence "
        "accepts; it looks like a measurement rather than a class: check --target, or bin the "
        "values into classes",
        table.source, column.name, k, options.max_classes));
  }
  return Status::ok_status();
}

}  // namespace

Result<Schema> infer_schema(const Table& table, const SchemaOptions& options) {
  if (options.target.empty()) {
    return Status::invalid_input(fmt::format(
        "{}: no target column given; name the class column with --target (available columns: "
        "{})",
        table.source, table.column_list()));
  }
  const int target = table.find_column(options.target);
  if (target < 0) {
    return Status::invalid_input(fmt::format(
        "{}: the target column '{}' is not in the header; {}", table.source, options.target,
        table.column_hint(options.target)));
  }
  CREDENCE_RETURN_IF_ERROR(check_names(table, options.categorical, "--categorical"));
  CREDENCE_RETURN_IF_ERROR(check_names(table, options.drop, "--drop"));
  CREDENCE_RETURN_IF_ERROR(check_names(table, options.id, "--id"));
  if (contains(options.drop, options.target) || contains(options.id, options.target)) {
    return Status::invalid_input(fmt::format(
        "{}: column '{}' is the target and cannot also be dropped or an id", table.source,
        options.target));
  }

  Schema schema;
  schema.target_index = target;
  schema.impute = options.impute;
  for (std::size_t jj = 0; jj < table.columns.size(); ++jj) {
    const int j = static_cast<int>(jj);
    const TableColumn& column = table.columns[jj];
    ColumnSchema& c = schema.columns.emplace_back();
    c.name = column.name;
    c.index = j;
    c.missing = column.missing;
    c.first_missing_row = column.first_missing_row;
    c.type = column.is_text ? ColumnType::kCategorical : ColumnType::kNumeric;
    c.levels = static_cast<std::int64_t>(column.levels.size());
    if (j == target) {
      c.role = ColumnRole::kTarget;
      c.type = ColumnType::kCategorical;
      continue;
    }
    if (contains(options.drop, column.name)) {
      c.role = ColumnRole::kDropped;
      continue;
    }
    if (contains(options.id, column.name)) {
      c.role = ColumnRole::kId;
      continue;
    }
    c.role = ColumnRole::kFeature;
    if (column.missing == table.rows()) {
      return Status::invalid_input(fmt::format(
          "{}: column '{}' (column {}) has no values (all {} rows are missing); drop it with "
          "--drop '{}'",
          table.source, column.name, j + 1, table.rows(), column.name));
    }
    if (contains(options.categorical, column.name) && !column.is_text) {
      return Status::internal(fmt::format(
          "column '{}' is marked categorical but was read as numbers; read the table with it "
          "in ReadOptions::text_columns",
          column.name));
    }
    CREDENCE_RETURN_IF_ERROR(check_decimal_comma(table, j, options));
    CREDENCE_RETURN_IF_ERROR(check_numeric_typo(table, j, options));
    if (c.type == ColumnType::kCategorical) {
      CREDENCE_RETURN_IF_ERROR(check_free_text(table, j, options));
    }
  }
  if (std::none_of(schema.columns.begin(), schema.columns.end(),
                   [](const ColumnSchema& c) { return c.role == ColumnRole::kFeature; })) {
    return Status::invalid_input(fmt::format(
        "{}: no feature columns are left besides the target, ids and dropped columns; keep at "
        "least one input column",
        table.source));
  }
  if (options.impute == ImputeMethod::kNone) {
    CREDENCE_RETURN_IF_ERROR(refuse_missing(table, schema));
  }
  CREDENCE_RETURN_IF_ERROR(read_classes(table, target, options, schema));
  schema.columns[static_cast<std::size_t>(target)].levels = schema.num_classes();
  return schema;
}

}  // namespace credence
