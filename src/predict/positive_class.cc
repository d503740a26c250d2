// resolve_positive_class: which of two classes decisions and intervals are about.
#include <fmt/format.h>

#include <algorithm>

#include "credence/predict.h"

namespace credence {
namespace {

std::string class_list(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& n : names) out += (out.empty() ? "'" : ", '") + n + "'";
  return out;
}

// The stored setting (absent from runs written before it existed, and when train chose
// the default).
std::optional<std::string> stored_name(const Settings& settings) {
  for (const auto& [key, value] : settings) {
    if (key == "positive_class" && std::holds_alternative<std::string>(value)) {
      return std::get<std::string>(value);
    }
  }
  return std::nullopt;
}

}  // namespace

Result<std::optional<PositiveClass>> resolve_positive_class(
    const Preprocessing& preprocessing, const Settings& settings,
    const std::optional<std::string>& requested) {
  const std::vector<std::string>& classes = preprocessing.class_names;
  const std::optional<std::string> stored = stored_name(settings);
  if (classes.size() != 2) {
    if (requested) {
      return Status::invalid_input(fmt::format(
          "--positive-class '{}': a positive class applies to two-class targets; '{}' has {} "
          "classes ({})",
          *requested, preprocessing.target, classes.size(), class_list(classes)));
    }
    return std::optional<PositiveClass>();
  }
  const std::optional<std::string>& wanted = requested ? requested : stored;
  PositiveClass p;
  if (wanted && !wanted->empty()) {
    const auto it = std::find(classes.begin(), classes.end(), *wanted);
    if (it == classes.end()) {
      return Status::invalid_input(fmt::format(
          "{}'{}' is not a class of '{}'; name one of {}",
          requested ? "--positive-class " : "the run's positive class ", *wanted,
          preprocessing.target, class_list(classes)));
    }
    p.index = static_cast<int>(it - classes.begin());
    p.chosen_by = requested ? "--positive-class" : "the run's setting";
  } else {
    p.index = 1;
    p.chosen_by = "default: the class that sorts second";
  }
  p.name = classes[static_cast<std::size_t>(p.index)];
  return std::optional<PositiveClass>(p);
}

}  // namespace credence
