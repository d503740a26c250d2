// Preprocessing: fit standardisation and one-hot encoding on training rows, apply to any table.
#include <algorithm>
#include <cmath>
#include <fmt/format.h>
#include <unordered_map>

#include "credence/data.h"
#include "data/csv_reader.h"
#include "util/log.h"

namespace credence {

std::string_view unseen_name(UnseenPolicy policy) {
  return policy == UnseenPolicy::kError ? "error" : "ignore";
}

bool FeatureEncoding::operator==(const FeatureEncoding& other) const {
  const bool same_impute = (std::isnan(impute_value) && std::isnan(other.impute_value)) ||
                           impute_value == other.impute_value;
  return name == other.name && type == other.type && offset == other.offset &&
         width == other.width && mean == other.mean && scale == other.scale &&
         constant == other.constant && same_impute && categories == other.categories;
}

namespace {

double median_of(std::vector<double> values) {
  // REQUIRES: values not empty. The mean of the two middle values for an even count, as numpy.
  const std::size_t mid = values.size() / 2;
  std::nth_element(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(mid), values.end());
  const double upper = values[mid];
  if (values.size() % 2 == 1) return upper;
  const double lower = *std::max_element(values.begin(), values.begin() + static_cast<std::ptrdiff_t>(mid));
  return 0.5 * (lower + upper);
}

Status fit_numeric(const Table& table, int j, std::span<const std::int64_t> rows,
                   ImputeMethod impute, FeatureEncoding& f) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  std::vector<double> present;
  present.reserve(rows.size());
  for (std::int64_t r : rows) {
    const double v = column.numbers[static_cast<std::size_t>(r)];
    if (!std::isnan(v)) present.push_back(v);
  }
  if (present.empty()) {
    return Status::invalid_input(fmt::format(
        "{}: numeric column '{}' (column {}) has no value in any of the {} training rows; drop "
        "it with --drop '{}'",
        table.source, column.name, j + 1, rows.size(), column.name));
  }
  if (impute == ImputeMethod::kMedian) f.impute_value = median_of(present);
  // Statistics after imputation, as an impute-then-scale pipeline computes them; two
  // passes in double for an accurate variance.
  const double fill = impute == ImputeMethod::kMedian ? f.impute_value : 0.0;
  const auto n = static_cast<double>(rows.size());
  double sum = 0.0;
  for (std::int64_t r : rows) {
    const double v = column.numbers[static_cast<std::size_t>(r)];
    sum += std::isnan(v) ? fill : v;
  }
  f.mean = sum / n;
  double squares = 0.0;
  for (std::int64_t r : rows) {
    const double v = column.numbers[static_cast<std::size_t>(r)];
    const double d = (std::isnan(v) ? fill : v) - f.mean;
    squares += d * d;
  }
  const double sd = std::sqrt(squares / n);  // ddof = 0, numpy.std's default
  f.constant = !(sd > 1e-12 * std::max(1.0, std::abs(f.mean)));
  f.scale = f.constant ? 1.0 : sd;
  if (f.constant) {
    log().warn("{}: numeric column '{}' is constant ({}) in the training rows; it is kept, "
               "centred to zero, and carries no information",
               table.source, column.name, f.mean);
  }
  return Status::ok_status();
}

void fit_categorical(const Table& table, int j, std::span<const std::int64_t> rows,
                     ImputeMethod impute, FeatureEncoding& f) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  std::vector<std::uint8_t> seen(column.levels.size(), 0);
  for (std::int64_t r : rows) {
    const std::int32_t code = column.codes[static_cast<std::size_t>(r)];
    if (code >= 0) seen[static_cast<std::size_t>(code)] = 1;
  }
  for (std::size_t k = 0; k < seen.size(); ++k) {
    if (seen[k]) f.categories.push_back(column.levels[k]);
  }
  if (impute == ImputeMethod::kMedian &&
      std::find(f.categories.begin(), f.categories.end(), kMissingLevel) == f.categories.end()) {
    f.categories.emplace_back(kMissingLevel);
    std::sort(f.categories.begin(), f.categories.end());
  }
  f.width = static_cast<std::int64_t>(f.categories.size());
}

Status encode_numeric(const FeatureEncoding& f, const Preprocessing& p, const Table& table, int j,
                      std::span<const std::int64_t> rows, Eigen::MatrixXf& x) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  const auto row_out = static_cast<Eigen::Index>(f.offset);
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const auto r = static_cast<std::size_t>(rows[i]);
    double v = std::numeric_limits<double>::quiet_NaN();
    if (column.is_text) {
      // A table read with this column as text (a caller's choice): parse each level.
      const std::int32_t code = column.codes[r];
      if (code >= 0 && !data::parse_number(column.levels[static_cast<std::size_t>(code)], v)) {
        return Status::invalid_input(fmt::format(
            "{}: '{}' is not a number in column '{}' (row {}), which the model reads as numeric; "
            "{}",
            table.cell_location(rows[i], j), column.levels[static_cast<std::size_t>(code)],
            column.name, rows[i] + 1,
            data::decimal_comma_number(column.levels[static_cast<std::size_t>(code)])
                ? "it looks like a decimal comma: save the table with points as decimal marks"
                : "fix the cell"));
      }
    } else {
      v = column.numbers[r];
    }
    if (std::isnan(v)) {
      if (p.impute != ImputeMethod::kMedian) {
        return Status::invalid_input(fmt::format(
            "{}: missing value in column '{}' (row {}); the model was fitted without "
            "imputation, so every value is needed: fill it in",
            table.cell_location(rows[i], j), column.name, rows[i] + 1));
      }
      v = f.impute_value;
    }
    x(row_out, static_cast<Eigen::Index>(i)) = static_cast<float>((v - f.mean) / f.scale);
  }
  return Status::ok_status();
}

Status encode_categorical(const FeatureEncoding& f, const Preprocessing& p, const Table& table,
                          int j, std::span<const std::int64_t> rows, Eigen::MatrixXf& x,
                          std::vector<UnseenCategories>* tally) {
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  if (!column.is_text) {
    return Status::internal(fmt::format(
        "categorical column '{}' was read as numbers; read the table with "
        "text_columns_of(preprocessing) in ReadOptions::text_columns",
        column.name));
  }
  // Table level -> category index, -1 for a level the training rows never showed.
  std::vector<std::int64_t> to_category(column.levels.size(), -1);
  for (std::size_t k = 0; k < column.levels.size(); ++k) {
    auto it = std::lower_bound(f.categories.begin(), f.categories.end(), column.levels[k]);
    if (it != f.categories.end() && *it == column.levels[k]) to_category[k] = it - f.categories.begin();
  }
  std::int64_t missing_category = -1;
  if (auto it = std::lower_bound(f.categories.begin(), f.categories.end(), kMissingLevel);
      it != f.categories.end() && *it == kMissingLevel) {
    missing_category = it - f.categories.begin();
  }
  std::int64_t unseen = 0;
  std::int64_t first_unseen = -1;
  for (std::size_t i = 0; i < rows.size(); ++i) {
    const std::int32_t code = column.codes[static_cast<std::size_t>(rows[i])];
    std::int64_t category = -1;
    if (code < 0) {
      if (p.impute != ImputeMethod::kMedian || missing_category < 0) {
        return Status::invalid_input(fmt::format(
            "{}: missing value in column '{}' (row {}); the model was fitted without "
            "imputation, so every value is needed: fill it in",
            table.cell_location(rows[i], j), column.name, rows[i] + 1));
      }
      category = missing_category;
    } else {
      category = to_category[static_cast<std::size_t>(code)];
      if (category < 0) {
        const std::string& value = column.levels[static_cast<std::size_t>(code)];
        if (p.unseen == UnseenPolicy::kError) {
          return Status::invalid_input(fmt::format(
              "{}: category '{}' in column '{}' (row {}) never occurs in the training rows, so "
              "the model has no encoding for it; fix the value, or pass --unseen ignore to "
              "encode unseen categories as all zeros",
              table.cell_location(rows[i], j), value, column.name, rows[i] + 1));
        }
        if (unseen++ == 0) first_unseen = rows[i];
        continue;  // all zeros
      }
    }
    x(static_cast<Eigen::Index>(f.offset + category), static_cast<Eigen::Index>(i)) = 1.0f;
  }
  if (unseen > 0 && tally != nullptr) {
    tally->push_back({column.name, unseen, table.cell_location(first_unseen, j)});
  } else if (unseen > 0) {
    log_unseen(table.source, {column.name, unseen, table.cell_location(first_unseen, j)});
  }
  return Status::ok_status();
}

}  // namespace

void log_unseen(std::string_view source, const UnseenCategories& unseen) {
  log().warn("{}: column '{}' has {} value{} never seen in the training rows (first at {}); "
             "encoded as all zeros",
             source, unseen.column, unseen.count, unseen.count == 1 ? "" : "s", unseen.first_at);
}

Result<Preprocessing> fit_preprocessing(const Table& table, const Schema& schema,
                                        std::span<const std::int64_t> train_rows,
                                        const PreprocessOptions& options) {
  assert(!train_rows.empty());
  assert(schema.columns.size() == table.columns.size());
  Preprocessing p;
  p.target = table.columns[static_cast<std::size_t>(schema.target_index)].name;
  p.class_names = schema.class_names;
  p.classes_numeric = schema.classes_numeric;
  p.unseen = options.unseen;
  p.impute = schema.impute;
  for (const ColumnSchema& c : schema.columns) p.columns.push_back({c.name, c.role, c.type});
  std::int64_t offset = 0;
  for (const ColumnSchema& c : schema.columns) {
    if (c.role != ColumnRole::kFeature) continue;
    FeatureEncoding& f = p.features.emplace_back();
    f.name = c.name;
    f.type = c.type;
    f.offset = offset;
    if (c.type == ColumnType::kNumeric) {
      CREDENCE_RETURN_IF_ERROR(fit_numeric(table, c.index, train_rows, p.impute, f));
    } else {
      fit_categorical(table, c.index, train_rows, p.impute, f);
    }
    offset += f.width;
  }
  p.input_width = offset;
  return p;
}

Result<Eigen::MatrixXf> transform_rows(const Preprocessing& p, const Table& table,
                                       std::span<const std::int64_t> rows,
                                       std::vector<UnseenCategories>* unseen) {
  Eigen::MatrixXf x = Eigen::MatrixXf::Zero(static_cast<Eigen::Index>(p.input_width),
                                            static_cast<Eigen::Index>(rows.size()));  // (D, n)
  for (const FeatureEncoding& f : p.features) {
    const int j = table.find_column(f.name);
    if (j < 0) {
      return Status::invalid_input(fmt::format(
          "{}: column '{}', an input of the model, is not in the header; add it ({})",
          table.source, f.name, table.column_hint(f.name)));
    }
    if (f.type == ColumnType::kNumeric) {
      CREDENCE_RETURN_IF_ERROR(encode_numeric(f, p, table, j, rows, x));
    } else {
      CREDENCE_RETURN_IF_ERROR(encode_categorical(f, p, table, j, rows, x, unseen));
    }
  }
  return x;
}

Result<Eigen::MatrixXf> transform_table(const Preprocessing& p, const Table& table) {
  std::vector<std::int64_t> rows(static_cast<std::size_t>(table.rows()));
  for (std::size_t i = 0; i < rows.size(); ++i) rows[i] = static_cast<std::int64_t>(i);
  return transform_rows(p, table, rows);
}

std::vector<std::string> text_columns_of(const Preprocessing& p) {
  std::vector<std::string> names;
  for (const FeatureEncoding& f : p.features) {
    if (f.type == ColumnType::kCategorical) names.push_back(f.name);
  }
  names.push_back(p.target);
  return names;
}

Result<std::vector<std::int32_t>> encode_labels(const Preprocessing& p, const Table& table) {
  const int j = table.find_column(p.target);
  if (j < 0) {
    return Status::invalid_input(fmt::format(
        "{}: the target column '{}' is not in the header; labelled rows need it ({})",
        table.source, p.target, table.column_hint(p.target)));
  }
  const TableColumn& column = table.columns[static_cast<std::size_t>(j)];
  std::unordered_map<std::string, std::int32_t> index;
  for (std::size_t k = 0; k < p.class_names.size(); ++k) {
    index.emplace(p.class_names[k], static_cast<std::int32_t>(k));
  }
  std::vector<std::int32_t> labels(static_cast<std::size_t>(table.rows()));
  for (std::int64_t r = 0; r < table.rows(); ++r) {
    const auto i = static_cast<std::size_t>(r);
    std::string name;
    bool missing = false;
    if (column.is_text) {
      missing = column.codes[i] < 0;
      if (!missing) name = column.levels[static_cast<std::size_t>(column.codes[i])];
    } else {
      missing = std::isnan(column.numbers[i]);
      if (!missing) name = fmt::format("{}", column.numbers[i]);
    }
    if (missing) {
      return Status::invalid_input(fmt::format(
          "{}: the target column '{}' is missing in row {}; every labelled row needs a class",
          table.cell_location(r, j), p.target, r + 1));
    }
    auto it = index.find(name);
    if (it == index.end()) {
      std::string known;
      for (const std::string& c : p.class_names) known += (known.empty() ? "'" : ", '") + c + "'";
      return Status::invalid_input(fmt::format(
          "{}: class '{}' in column '{}' (row {}) is not one the model was trained on ({})",
          table.cell_location(r, j), name, p.target, r + 1, known));
    }
    labels[i] = it->second;
  }
  return labels;
}

}  // namespace credence
