// summarize_prior_precisions: mean and central interval of each block's learned precision.
#include "credence/prior_summary.h"

#include <algorithm>
#include <cmath>

namespace credence {
namespace {

// numpy.quantile's default ("linear"): position p (n - 1) between order statistics.
double quantile_of_sorted(const std::vector<double>& sorted, double p) {
  const double position = p * static_cast<double>(sorted.size() - 1);
  const auto below = static_cast<std::size_t>(std::floor(position));
  const std::size_t above = std::min(below + 1, sorted.size() - 1);
  const double fraction = position - static_cast<double>(below);
  return sorted[below] + fraction * (sorted[above] - sorted[below]);
}

}  // namespace

double BlockPrecision::sd_at_mean() const { return mean > 0 ? 1 / std::sqrt(mean) : NAN; }

std::vector<BlockPrecision> summarize_prior_precisions(const Eigen::MatrixXd& precisions) {
  std::vector<BlockPrecision> blocks;
  for (Eigen::Index row = 0; row < precisions.rows(); ++row) {
    std::vector<double> values;
    for (Eigen::Index s = 0; s < precisions.cols(); ++s) {
      if (std::isfinite(precisions(row, s))) values.push_back(precisions(row, s));
    }
    if (values.empty()) continue;
    std::sort(values.begin(), values.end());
    BlockPrecision b;
    b.layer = static_cast<int>(row / 2) + 1;
    b.biases = row % 2 == 1;
    b.samples = static_cast<std::int64_t>(values.size());
    double sum = 0;
    for (double v : values) sum += v;
    b.mean = sum / static_cast<double>(values.size());
    b.lo = quantile_of_sorted(values, kPrecisionIntervalLow);
    b.hi = quantile_of_sorted(values, kPrecisionIntervalHigh);
    blocks.push_back(b);
  }
  return blocks;
}

}  // namespace credence
