// A run file's kept samples grouped by chain, in kept order.
#include "diagnostics/run_columns.h"

#include <algorithm>

namespace credence::diagnostics {

std::vector<std::vector<Eigen::Index>> columns_by_chain(int chains,
                                                        const std::vector<std::int32_t>& chain_of,
                                                        const std::vector<std::int64_t>& index_of) {
  std::vector<std::vector<Eigen::Index>> columns(static_cast<std::size_t>(chains));
  for (std::size_t s = 0; s < chain_of.size(); ++s) {
    const int c = chain_of[s];
    if (c >= 0 && c < chains) columns[static_cast<std::size_t>(c)].push_back(static_cast<Eigen::Index>(s));
  }
  for (auto& list : columns) {
    std::sort(list.begin(), list.end(), [&](Eigen::Index a, Eigen::Index b) {
      return index_of[static_cast<std::size_t>(a)] < index_of[static_cast<std::size_t>(b)];
    });
  }
  return columns;
}

Chains chains_of_row(const Eigen::MatrixXf& values, Eigen::Index row,
                     const std::vector<std::vector<Eigen::Index>>& columns) {
  Chains out;
  for (const auto& list : columns) {
    std::vector<double> chain;
    chain.reserve(list.size());
    for (Eigen::Index s : list) chain.push_back(static_cast<double>(values(row, s)));
    out.push_back(std::move(chain));
  }
  return out;
}

Chains chains_of(const std::vector<double>& values,
                 const std::vector<std::vector<Eigen::Index>>& columns) {
  Chains out;
  for (const auto& list : columns) {
    std::vector<double> chain;
    chain.reserve(list.size());
    for (Eigen::Index s : list) chain.push_back(values[static_cast<std::size_t>(s)]);
    out.push_back(std::move(chain));
  }
  return out;
}

}  // namespace credence::diagnostics
