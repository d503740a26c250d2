// NamedArrays and Settings: state and settings as plain named values.
//
// Samplers, the potential's minibatch position and the run file all describe state
// as named arrays, and settings as named typed values, so the run file can store them
// without knowing what they mean. Plain values; not shared between threads for writing.
#pragma once

#include <cstdint>
#include <map>
#include <string>
#include <utility>
#include <variant>
#include <vector>

namespace credence {

struct NamedArrays {
  std::map<std::string, std::vector<float>> floats;
  std::map<std::string, std::vector<double>> doubles;
  std::map<std::string, std::vector<std::uint64_t>> words;

  bool operator==(const NamedArrays& other) const = default;
};

/// A setting's value; the run file stores each as a typed HDF5 attribute.
using SettingValue = std::variant<std::int64_t, double, std::string>;
/// Settings by name, in a stable order.
using Settings = std::vector<std::pair<std::string, SettingValue>>;

}  // namespace credence
