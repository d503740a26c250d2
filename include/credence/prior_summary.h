// prior_summary: what a learned prior settled on. A run with `prior gaussian scale=auto`
// records, with every kept sample, each block's precision lambda (layer l's weights,
// then its biases; docs/run-file.md, samples/prior_precision). This summarises them per
// block over the kept samples: mean, a central 90% interval, and the prior standard
// deviation 1/sqrt(lambda) they imply, for diagnose's text and JSON.
//
// Usage:
//   Result<Eigen::MatrixXd> lam = reader.prior_precisions();      // (2L, S)
//   std::vector<BlockPrecision> blocks = summarize_prior_precisions(*lam);
//   if (blocks.empty()) ...;  // the prior was fixed: nothing was learned
#pragma once

#include <Eigen/Core>
#include <cstdint>
#include <vector>

namespace credence {

/// One block's learned precision over the kept samples.
struct BlockPrecision {
  int layer = 0;            // 1-based, as docs/run-file.md counts layers
  bool biases = false;      // false: the layer's weights
  bool linear_path = false; // the layer is the linear path (after the output layer)
  std::int64_t samples = 0; // kept samples with a finite precision
  double mean = 0;          // mean of lambda
  double lo = 0;            // 5% quantile of lambda (numpy.quantile's linear rule)
  double hi = 0;            // 95% quantile
  /// The prior standard deviation at the mean precision, 1 / sqrt(mean).
  double sd_at_mean() const;
};

/// The central interval's coverage (90%: the 5% and 95% quantiles).
inline constexpr double kPrecisionIntervalLow = 0.05;
inline constexpr double kPrecisionIntervalHigh = 0.95;

/// One entry per block (2L rows of `precisions`, weights then biases of each layer) that
/// has a finite precision in at least one kept sample; empty when the prior was fixed
/// (every entry NaN) or no samples were kept. Columns are kept samples, any chain order.
std::vector<BlockPrecision> summarize_prior_precisions(const Eigen::MatrixXd& precisions);

}  // namespace credence
