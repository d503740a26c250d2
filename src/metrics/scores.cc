// Proper scores on labelled rows: accuracy, NLL, multi-class and binary Brier (docs/methods.md 9.2).
#include <cassert>
#include <cstddef>

#include "credence/metrics.h"

namespace credence {
namespace {

[[maybe_unused]] bool labels_fit(ProbsRef m, LabelSpan labels) {
  if (m.cols() < 1 || static_cast<std::size_t>(m.cols()) != labels.size()) return false;
  for (std::int32_t y : labels) {
    if (y < 0 || y >= m.rows()) return false;
  }
  return true;
}

std::size_t at(Eigen::Index i) { return static_cast<std::size_t>(i); }

}  // namespace

// argmax_k p_ik; a strict '>' keeps the lowest index among tied classes.
std::vector<std::int32_t> predicted_classes(ProbsRef probs) {
  std::vector<std::int32_t> pred(at(probs.cols()));
  for (Eigen::Index i = 0; i < probs.cols(); ++i) {
    Eigen::Index best = 0;
    for (Eigen::Index k = 1; k < probs.rows(); ++k) {
      if (probs(k, i) > probs(best, i)) best = k;
    }
    pred[at(i)] = static_cast<std::int32_t>(best);
  }
  return pred;
}

Eigen::VectorXd top_confidence(ProbsRef probs) { return probs.colwise().maxCoeff().transpose(); }

std::vector<std::uint8_t> correct_predictions(ProbsRef probs, LabelSpan labels) {
  assert(labels_fit(probs, labels));
  const std::vector<std::int32_t> pred = predicted_classes(probs);
  std::vector<std::uint8_t> correct(pred.size());
  for (std::size_t i = 0; i < pred.size(); ++i) correct[i] = pred[i] == labels[i] ? 1 : 0;
  return correct;
}

// accuracy = mean_i [argmax_k p_ik == y_i]   (docs/methods.md 9.2)
double accuracy_score(ProbsRef probs, LabelSpan labels) {
  const std::vector<std::uint8_t> correct = correct_predictions(probs, labels);
  std::size_t hits = 0;
  for (std::uint8_t c : correct) hits += c;
  return static_cast<double>(hits) / static_cast<double>(correct.size());
}

// NLL = -mean_i log p_i,y_i in nats   (docs/methods.md 9.2; equal to scikit-learn's log_loss)
double negative_log_likelihood(ProbsRef log_probs, LabelSpan labels) {
  assert(labels_fit(log_probs, labels));
  double sum = 0;
  for (Eigen::Index i = 0; i < log_probs.cols(); ++i) sum -= log_probs(labels[at(i)], i);
  return sum / static_cast<double>(log_probs.cols());
}

// Brier = mean_i sum_k (p_ik - [y_i == k])^2, in [0, 2]   (docs/methods.md 9.2; the multi-class
// sum of "Verification of forecasts expressed in terms of probability", Monthly Weather
// Review, 1950)
double brier_score(ProbsRef probs, LabelSpan labels) {
  assert(labels_fit(probs, labels));
  double sum = 0;
  for (Eigen::Index i = 0; i < probs.cols(); ++i) {
    for (Eigen::Index k = 0; k < probs.rows(); ++k) {
      const double d = probs(k, i) - (labels[at(i)] == k ? 1.0 : 0.0);
      sum += d * d;
    }
  }
  return sum / static_cast<double>(probs.cols());
}

// Brier_bin = mean_i (q_i - [y_i == 1])^2, q_i = P(class 1)   (docs/methods.md 9.2)
double binary_brier_score(ProbsRef probs, LabelSpan labels) {
  assert(probs.rows() == 2 && labels_fit(probs, labels));
  double sum = 0;
  for (Eigen::Index i = 0; i < probs.cols(); ++i) {
    const double d = probs(1, i) - (labels[at(i)] == 1 ? 1.0 : 0.0);
    sum += d * d;
  }
  return sum / static_cast<double>(probs.cols());
}

double binary_brier_score(std::span<const double> q, LabelSpan labels) {
  assert(!q.empty() && q.size() == labels.size());
  double sum = 0;
  for (std::size_t i = 0; i < q.size(); ++i) {
    assert(labels[i] == 0 || labels[i] == 1);
    const double d = q[i] - static_cast<double>(labels[i]);
    sum += d * d;
  }
  return sum / static_cast<double>(q.size());
}

}  // namespace credence
