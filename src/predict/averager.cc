// EnsembleAverager: model average, predictive and expected entropy, mutual information.
#include <cassert>
#include <cmath>

#include "credence/predict.h"

namespace credence {

void EnsembleAverager::reset(Index num_classes, Index rows) {
  accumulator_.reset(num_classes, rows);
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs) {
  accumulator_.add_member(log_probs);
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXd>& log_probs) {
  accumulator_.add_member(log_probs);
}

void EnsembleAverager::finish(Prediction& out) const {
  assert(members() >= 1);
  accumulator_.finish(split_);
  out.probabilities = split_.log_mean.array().exp().matrix();
  out.entropy = split_.total;
  out.expected_entropy = split_.expected;
  out.mutual_information = split_.mutual_info;
  out.clamped = split_.clamped_rows;
  const Index rows = out.probabilities.cols();
  out.confidence.resize(rows);
  out.predicted.resize(static_cast<std::size_t>(rows));
  for (Index b = 0; b < rows; ++b) {
    Index best = 0;
    for (Index k = 1; k < out.probabilities.rows(); ++k) {
      if (out.probabilities(k, b) > out.probabilities(best, b)) best = k;  // ties: lowest index
    }
    out.predicted[static_cast<std::size_t>(b)] = static_cast<std::int32_t>(best);
    out.confidence(b) = out.probabilities(best, b);
  }
}

std::vector<Index> spread_samples(Index available, Index wanted) {
  if (wanted <= 0 || wanted >= available) wanted = available;
  std::vector<Index> indices(static_cast<std::size_t>(wanted));
  for (Index i = 0; i < wanted; ++i) indices[static_cast<std::size_t>(i)] = i * available / wanted;
  return indices;
}

}  // namespace credence
