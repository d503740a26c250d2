// A resolved network layout for tests: hidden widths, activation, D inputs, K classes.
#pragma once

#include <gtest/gtest.h>

#include <vector>

#include "credence/net.h"

namespace credence::testing {

inline ParamLayout make_layout(std::vector<Index> hidden, const char* activation, Index d, Index k,
                               bool linear_path = false) {
  Result<NetSpec> spec = net_spec_from_options(hidden, activation);
  EXPECT_TRUE(spec.ok());
  spec->linear_path = linear_path;
  Result<ParamLayout> layout = resolve_layout(*spec, d, k);
  EXPECT_TRUE(layout.ok());
  return *layout;
}

}  // namespace credence::testing
