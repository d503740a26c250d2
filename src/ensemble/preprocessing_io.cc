// The Preprocessing struct stored field by field under /preprocessing, and read back.
#include <cstdint>
#include <string>
#include <vector>

#include "ensemble/h5_util.h"
#include "ensemble/layout.h"
#include "ensemble/run_file.h"

namespace credence::run_file {
namespace {

using namespace credence::layout;

template <typename Enum, typename NameFn>
Enum parse_enum(const std::string& text, std::initializer_list<Enum> values, NameFn name,
                const char* what) {
  for (Enum value : values) {
    if (name(value) == text) return value;
  }
  throw h5::FileDamage("read_preprocessing", std::string("unknown ") + what + " '" + text + "'");
}

ColumnRole parse_role(const std::string& text) {
  return parse_enum(
      text, {ColumnRole::kFeature, ColumnRole::kTarget, ColumnRole::kId, ColumnRole::kDropped},
      role_name, "column role");
}
ColumnType parse_type(const std::string& text) {
  return parse_enum(text, {ColumnType::kNumeric, ColumnType::kCategorical}, type_name,
                    "column type");
}

template <typename T>
void write_vec(H5::Group& group, const char* name, const std::vector<T>& values) {
  h5::write_array<T>(group, name, std::span<const T>(values));
}

void check_length(std::size_t found, std::size_t expected, const char* group, const char* name) {
  if (found != expected) {
    throw h5::FileDamage("read_preprocessing", std::string(kPreprocessing) + "/" + group + "/" + name +
                                                   " has " + std::to_string(found) +
                                                   " entries, expected " +
                                                   std::to_string(expected));
  }
}

}  // namespace

void write_preprocessing(H5::Group& group, const Preprocessing& p) {
  h5::write_attr(group, kTarget, p.target);
  h5::write_attr(group, kClassesNumeric, std::int64_t{p.classes_numeric ? 1 : 0});
  h5::write_attr(group, kImpute, std::string(impute_name(p.impute)));
  h5::write_attr(group, kUnseen, std::string(unseen_name(p.unseen)));
  h5::write_attr(group, kInputWidth, p.input_width);
  h5::write_strings(group, kClassNames, p.class_names);

  H5::Group columns = group.createGroup(kColumns);
  std::vector<std::string> names, roles, types;
  for (const ColumnSpec& column : p.columns) {
    names.push_back(column.name);
    roles.emplace_back(role_name(column.role));
    types.emplace_back(type_name(column.type));
  }
  h5::write_strings(columns, kName, names);
  h5::write_strings(columns, kRole, roles);
  h5::write_strings(columns, kType, types);

  H5::Group features = group.createGroup(kFeatures);
  std::vector<std::string> feature_names, feature_types, categories;
  std::vector<std::int64_t> offsets, widths, starts, counts;
  std::vector<double> means, scales, impute_values;
  std::vector<std::int8_t> constants;
  for (const FeatureEncoding& f : p.features) {
    feature_names.push_back(f.name);
    feature_types.emplace_back(type_name(f.type));
    offsets.push_back(f.offset);
    widths.push_back(f.width);
    means.push_back(f.mean);
    scales.push_back(f.scale);
    constants.push_back(f.constant ? 1 : 0);
    impute_values.push_back(f.impute_value);
    starts.push_back(static_cast<std::int64_t>(categories.size()));
    counts.push_back(static_cast<std::int64_t>(f.categories.size()));
    categories.insert(categories.end(), f.categories.begin(), f.categories.end());
  }
  h5::write_strings(features, kName, feature_names);
  h5::write_strings(features, kType, feature_types);
  write_vec(features, kOffset, offsets);
  write_vec(features, kWidth, widths);
  write_vec(features, kMean, means);
  write_vec(features, kScale, scales);
  write_vec(features, kConstant, constants);
  write_vec(features, kImputeValue, impute_values);
  write_vec(features, kCategoryStart, starts);
  write_vec(features, kCategoryCount, counts);
  h5::write_strings(features, kCategories, categories);
}

Preprocessing read_preprocessing(const H5::Group& group) {
  Preprocessing p;
  p.target = h5::read_attr_string(group, kTarget);
  p.classes_numeric = h5::read_attr_i64(group, kClassesNumeric) != 0;
  p.impute = parse_enum(h5::read_attr_string(group, kImpute),
                        {ImputeMethod::kNone, ImputeMethod::kMedian}, impute_name, "impute method");
  p.unseen =
      parse_enum(h5::read_attr_string(group, kUnseen),
                 {UnseenPolicy::kError, UnseenPolicy::kIgnore}, unseen_name, "unseen policy");
  p.input_width = h5::read_attr_i64(group, kInputWidth);
  p.class_names = h5::read_strings(group, kClassNames);

  H5::Group columns = group.openGroup(kColumns);
  std::vector<std::string> names = h5::read_strings(columns, kName);
  std::vector<std::string> roles = h5::read_strings(columns, kRole);
  std::vector<std::string> types = h5::read_strings(columns, kType);
  check_length(roles.size(), names.size(), kColumns, kRole);
  check_length(types.size(), names.size(), kColumns, kType);
  for (std::size_t i = 0; i < names.size(); ++i) {
    p.columns.push_back({names[i], parse_role(roles[i]), parse_type(types[i])});
  }

  H5::Group features = group.openGroup(kFeatures);
  std::vector<std::string> feature_names = h5::read_strings(features, kName);
  const std::size_t f_count = feature_names.size();
  std::vector<std::string> feature_types = h5::read_strings(features, kType);
  auto offsets = h5::read_array<std::int64_t>(features, kOffset);
  auto widths = h5::read_array<std::int64_t>(features, kWidth);
  auto means = h5::read_array<double>(features, kMean);
  auto scales = h5::read_array<double>(features, kScale);
  auto constants = h5::read_array<std::int8_t>(features, kConstant);
  auto impute_values = h5::read_array<double>(features, kImputeValue);
  auto starts = h5::read_array<std::int64_t>(features, kCategoryStart);
  auto counts = h5::read_array<std::int64_t>(features, kCategoryCount);
  std::vector<std::string> categories = h5::read_strings(features, kCategories);
  check_length(feature_types.size(), f_count, kFeatures, kType);
  check_length(offsets.size(), f_count, kFeatures, kOffset);
  check_length(widths.size(), f_count, kFeatures, kWidth);
  check_length(means.size(), f_count, kFeatures, kMean);
  check_length(scales.size(), f_count, kFeatures, kScale);
  check_length(constants.size(), f_count, kFeatures, kConstant);
  check_length(impute_values.size(), f_count, kFeatures, kImputeValue);
  check_length(starts.size(), f_count, kFeatures, kCategoryStart);
  check_length(counts.size(), f_count, kFeatures, kCategoryCount);
  for (std::size_t i = 0; i < f_count; ++i) {
    FeatureEncoding f;
    f.name = feature_names[i];
    f.type = parse_type(feature_types[i]);
    f.offset = offsets[i];
    f.width = widths[i];
    f.mean = means[i];
    f.scale = scales[i];
    f.constant = constants[i] != 0;
    f.impute_value = impute_values[i];
    // Compared without adding: a damaged start and count may overflow any sum.
    const auto listed = static_cast<std::int64_t>(categories.size());
    if (starts[i] < 0 || counts[i] < 0 || starts[i] > listed || counts[i] > listed - starts[i]) {
      throw h5::FileDamage(
          "read_preprocessing",
          "the category range of feature '" + f.name + "' (" + kPreprocessing + "/" + kFeatures +
              "/" + kCategoryStart + "[" + std::to_string(i) + "] = " +
              std::to_string(starts[i]) + ", " + kCategoryCount + "[" + std::to_string(i) +
              "] = " + std::to_string(counts[i]) + ") lies outside the " +
              std::to_string(listed) + " stored categories");
    }
    f.categories.assign(categories.begin() + starts[i], categories.begin() + starts[i] + counts[i]);
    p.features.push_back(std::move(f));
  }
  return p;
}

}  // namespace credence::run_file
