// linear_quantile: numpy.quantile's default rule, shared by the diagnostics' folding, tail
// indicators and the learned-precision summary.
#pragma once

#include <vector>

namespace credence {

/// The `p`-quantile of `values` by linear interpolation between order statistics at
/// position p (n - 1). REQUIRES: values non-empty, 0 <= p <= 1.
double linear_quantile(std::vector<double> values, double p);

}  // namespace credence
