// complete_compare_request, compare_entry: what a comparison reads, checked before any
// training starts.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <sstream>

#include "credence/compare.h"

namespace credence {
namespace {

Result<std::vector<Method>> parse_compare_methods(const std::string& list, bool full_batch_allowed) {
  std::vector<Method> methods;
  std::stringstream stream(list);
  for (std::string name; std::getline(stream, name, ',');) {
    Result<Method> method = parse_method(name);
    if (!method.ok()) return method.status().with_context("--methods");
    if (is_full_batch(*method) && !full_batch_allowed) {
      return Status::invalid_input(fmt::format(
          "--methods: {} uses the full data per step, so it has no minibatch budget to share; "
          "train it on its own with credence train",
          name));
    }
    methods.push_back(*method);
  }
  if (methods.empty()) return Status::invalid_input("--methods: give at least one method");
  return methods;
}

Result<std::vector<Index>> parse_hidden_widths(const std::string& text) {
  std::vector<Index> hidden;
  if (text == "none") return hidden;
  std::stringstream widths(text);
  for (std::string piece; std::getline(widths, piece, ',');) {
    char* end = nullptr;
    const long long width = std::strtoll(piece.c_str(), &end, 10);
    if (piece.empty() || *end != '\0' || width < 1) {
      return Status::invalid_input(
          fmt::format("--hidden '{}': write positive widths like 32,32", text));
    }
    hidden.push_back(static_cast<Index>(width));
  }
  return hidden;
}

}  // namespace

CompareEntry compare_entry(Method method) {
  const std::string name(method_name(method));
  return {method, std::nullopt, name, name};
}

Result<std::vector<Method>> complete_compare_request(CompareRequest& r, const CompareLists& lists) {
  if (r.data.schema.target.empty()) {
    return Status::invalid_input("give --target COLUMN (the class column)");
  }
  Result<std::vector<Method>> methods = parse_compare_methods(lists.methods, lists.full_batch_allowed);
  if (!methods.ok()) return methods.status();
  // A flag no chosen method reads is refused, as in train (method_flags.h).
  if (r.samples_given && std::none_of(methods->begin(), methods->end(), is_sampler)) {
    return Status::invalid_input(fmt::format(
        "--samples is not read by --methods {}: optimizers keep one final iterate per chain; "
        "add a sampler or drop --samples",
        lists.methods));
  }
  r.hidden.clear();
  if (r.net_path.empty()) {
    Result<std::vector<Index>> hidden = parse_hidden_widths(lists.hidden);
    if (!hidden.ok()) return hidden.status();
    r.hidden = std::move(*hidden);
  }
  if (r.linear_path && !r.net_path.empty()) {
    return Status::invalid_input(
        "--linear-path is not read with --net: write 'linear_path on' in the net file instead");
  }
  if (r.linear_path && r.hidden.empty()) {
    return Status::invalid_input(
        "--linear-path on needs hidden layers: with --hidden none the output layer is already "
        "the linear model; drop one of the two");
  }
  if (lists.extend_given && r.epochs > 0) {
    return Status::invalid_input(
        "--extend-seconds is not read with --epochs: a budget given in passes is kept as "
        "given; drop one of them");
  }
  if (!(r.extend_seconds >= 0) || !std::isfinite(r.extend_seconds)) {
    return Status::invalid_input("--extend-seconds: give 0 (never) or a positive number of seconds");
  }
  if (r.epochs < 0) return Status::invalid_input("--epochs: give a positive number of passes");
  if (r.chains < 1 || r.batch_rows < 1 || r.samples < 1 || r.bootstrap < 0) {
    return Status::invalid_input(
        "--chains, --batch and --samples need at least 1, and --bootstrap at least 0");
  }
  return methods;
}

}  // namespace credence
