// Counts of the positive-class decisions at every distinct threshold, shared by the
// curves and the threshold rules.
#pragma once

#include <cstdint>
#include <span>
#include <vector>

namespace credence {

// From the highest distinct q down: once the rows with q >= thresholds[j] are called
// positive, tp[j] of them are positive and fp[j] negative. Counts are doubles (exact up
// to 2^53) because every use divides them.
struct Cumulative {
  std::vector<double> thresholds;
  std::vector<double> tp;
  std::vector<double> fp;
};

// REQUIRES: q.size() == positive.size(); q not NaN. O(n log n), ties in q grouped.
Cumulative cumulate(std::span<const double> q, std::span<const std::uint8_t> positive);

}  // namespace credence
