// EnsembleAverager: model average, predictive and expected entropy, mutual information.
#include <cassert>
#include <cmath>

#include "credence/predict.h"

namespace credence {

void EnsembleAverager::reset(Index num_classes, Index rows, double temperature) {
  assert(temperature > 0);
  accumulator_.reset(num_classes, rows);
  temperature_ = temperature;
  if (temperature_ != 1.0) tempered_.resize(num_classes, rows);
}

namespace {
// tempered = log softmax(log_probs / tau), column by column.
template <typename Derived>
void temper(const Eigen::MatrixBase<Derived>& log_probs, double temperature,
            Eigen::MatrixXd& tempered) {
  tempered = log_probs.template cast<double>() / temperature;
  for (Index b = 0; b < tempered.cols(); ++b) {
    const double top = tempered.col(b).maxCoeff();
    tempered.col(b).array() -= top + std::log((tempered.col(b).array() - top).exp().sum());
  }
}
}  // namespace

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs) {
  if (temperature_ == 1.0) {
    accumulator_.add_member(log_probs);
    return;
  }
  temper(log_probs, temperature_, tempered_);
  accumulator_.add_member(tempered_);
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXd>& log_probs) {
  if (temperature_ == 1.0) {
    accumulator_.add_member(log_probs);
    return;
  }
  temper(log_probs, temperature_, tempered_);
  accumulator_.add_member(tempered_);
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
