// EnsembleAverager: model average, predictive and expected entropy, mutual information.
#include <cassert>
#include <cmath>
#include <limits>

#include "credence/predict.h"

namespace credence {

void EnsembleAverager::reset(Index num_classes, Index rows) {
  assert(num_classes >= 1 && rows >= 0);
  members_ = 0;
  // resize() keeps the allocation when the size is unchanged, so blocks of equal
  // width reuse it.
  max_log_p_.resize(num_classes, rows);
  scaled_sum_.resize(num_classes, rows);
  entropy_sum_.resize(rows);
  max_log_p_.setConstant(-std::numeric_limits<double>::infinity());
  scaled_sum_.setZero();
  entropy_sum_.setZero();
}

// METHODS.md 9.1. Per row b and class k, a running log-sum-exp over members:
// m = max_s log p_s, sum = sum_s exp(log p_s - m); when a new member raises the max
// the old sum is rescaled. H[p_s] = -sum_k p log p with p = exp(log p), 0 log 0 = 0.
template <typename Derived>
void EnsembleAverager::add(const Eigen::MatrixBase<Derived>& log_probs) {
  assert(log_probs.rows() == max_log_p_.rows() && log_probs.cols() == max_log_p_.cols());
  for (Index b = 0; b < log_probs.cols(); ++b) {
    double member_entropy = 0.0;
    for (Index k = 0; k < log_probs.rows(); ++k) {
      const double l = static_cast<double>(log_probs(k, b));
      const double p = std::exp(l);
      if (p > 0.0) member_entropy -= p * l;
      double& m = max_log_p_(k, b);
      double& sum = scaled_sum_(k, b);
      if (l > m) {
        sum = sum * std::exp(m - l) + 1.0;  // exp(-inf) = 0 on the first member
        m = l;
      } else if (l > -std::numeric_limits<double>::infinity()) {
        sum += std::exp(l - m);
      }
    }
    entropy_sum_(b) += member_entropy;
  }
  ++members_;
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs) {
  add(log_probs);
}

void EnsembleAverager::add_member(const Eigen::Ref<const Eigen::MatrixXd>& log_probs) {
  add(log_probs);
}

void EnsembleAverager::finish(Prediction& out) const {
  assert(members_ >= 1);
  const Index k_count = max_log_p_.rows();
  const Index rows = max_log_p_.cols();
  out.probabilities.resize(k_count, rows);
  out.entropy.resize(rows);
  out.expected_entropy.resize(rows);
  out.mutual_information.resize(rows);
  out.confidence.resize(rows);
  out.predicted.resize(static_cast<std::size_t>(rows));
  out.clamped = 0;
  const double log_members = std::log(static_cast<double>(members_));
  for (Index b = 0; b < rows; ++b) {
    double entropy = 0.0;
    Index best = 0;
    for (Index k = 0; k < k_count; ++k) {
      const double sum = scaled_sum_(k, b);
      const double log_pbar = sum > 0.0 ? max_log_p_(k, b) + std::log(sum) - log_members
                                        : -std::numeric_limits<double>::infinity();
      const double pbar = std::exp(log_pbar);
      if (pbar > 0.0) entropy -= pbar * log_pbar;
      out.probabilities(k, b) = pbar;
      if (pbar > out.probabilities(best, b)) best = k;  // strict: ties keep the lowest index
    }
    const double expected = entropy_sum_(b) / static_cast<double>(members_);
    double mutual = entropy - expected;
    if (mutual < 0.0) {  // rounding only: MI >= 0 by Jensen's inequality
      mutual = 0.0;
      ++out.clamped;
    }
    out.entropy(b) = entropy;
    out.expected_entropy(b) = expected;
    out.mutual_information(b) = mutual;
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
