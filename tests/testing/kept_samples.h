// A run file's kept samples as (chain, step, theta), sorted, so runs can be compared
// whatever order the writer saw them in (resume tests).
#pragma once

#include <gtest/gtest.h>

#include <algorithm>
#include <cstdint>
#include <string>
#include <tuple>
#include <vector>

#include "credence/ensemble.h"

namespace credence::testing {

struct KeptSamples {
  std::vector<std::tuple<int, std::int64_t, std::vector<float>>> rows;
  std::vector<std::string> reasons;  // per chain
};

inline KeptSamples read_kept_samples(const std::string& run) {
  KeptSamples out;
  auto reader = RunReader::open(run);
  EXPECT_TRUE(reader.ok()) << reader.status().message();
  if (!reader.ok()) return out;
  auto theta = (*reader)->samples();
  auto chains = (*reader)->sample_chains();
  auto steps = (*reader)->sample_steps();
  EXPECT_TRUE(theta.ok() && chains.ok() && steps.ok());
  if (!theta.ok() || !chains.ok() || !steps.ok()) return out;
  for (Eigen::Index s = 0; s < theta->cols(); ++s) {
    out.rows.emplace_back((*chains)[static_cast<std::size_t>(s)],
                          (*steps)[static_cast<std::size_t>(s)],
                          std::vector<float>(theta->col(s).data(),
                                             theta->col(s).data() + theta->rows()));
  }
  std::sort(out.rows.begin(), out.rows.end());
  out.reasons = (*reader)->summary().chain_reason;
  return out;
}

}  // namespace credence::testing
