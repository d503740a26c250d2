// summarize_prior_precisions: mean and central interval of each block's learned precision.
#include "credence/prior_summary.h"

#include <cmath>

#include "diagnostics/quantile.h"

namespace credence {

double BlockPrecision::sd_at_mean() const { return mean > 0 ? 1 / std::sqrt(mean) : NAN; }

std::vector<BlockPrecision> summarize_prior_precisions(const Eigen::MatrixXd& precisions) {
  std::vector<BlockPrecision> blocks;
  for (Eigen::Index row = 0; row < precisions.rows(); ++row) {
    std::vector<double> values;
    for (Eigen::Index s = 0; s < precisions.cols(); ++s) {
      if (std::isfinite(precisions(row, s))) values.push_back(precisions(row, s));
    }
    if (values.empty()) continue;
    BlockPrecision b;
    b.layer = static_cast<int>(row / 2) + 1;
    b.biases = row % 2 == 1;
    b.samples = static_cast<std::int64_t>(values.size());
    double sum = 0;
    for (double v : values) sum += v;
    b.mean = sum / static_cast<double>(values.size());
    b.lo = linear_quantile(values, kPrecisionIntervalLow);
    b.hi = linear_quantile(values, kPrecisionIntervalHigh);
    blocks.push_back(b);
  }
  return blocks;
}

}  // namespace credence
