// Private helpers shared by diagnose_run and gather_run_evidence: a run file's kept
// samples grouped by chain, and its stored settings by name.
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <optional>
#include <string_view>
#include <variant>
#include <vector>

#include "credence/diagnostics.h"
#include "credence/ensemble.h"

namespace credence::diagnostics {

/// The setting called `name` when it is stored with type T.
template <typename T>
std::optional<T> setting(const Settings& settings, std::string_view name) {
  for (const auto& [key, value] : settings) {
    if (key == name && std::holds_alternative<T>(value)) return std::get<T>(value);
  }
  return std::nullopt;
}

/// Sample columns of each chain, ordered by kept number: (C) lists of column indices.
std::vector<std::vector<Eigen::Index>> columns_by_chain(int chains,
                                                        const std::vector<std::int32_t>& chain_of,
                                                        const std::vector<std::int64_t>& index_of);

/// Row `row` of a (rows, S) matrix, split into chains.
Chains chains_of_row(const Eigen::MatrixXf& values, Eigen::Index row,
                     const std::vector<std::vector<Eigen::Index>>& columns);

/// Values (S) split into chains.
Chains chains_of(const std::vector<double>& values,
                 const std::vector<std::vector<Eigen::Index>>& columns);

}  // namespace credence::diagnostics
