// Input checks for probabilities and log-probabilities handed to the metrics.
#include <cmath>
#include <string>

#include "credence/metrics.h"

namespace credence {
namespace {

constexpr double kSumTolerance = 1e-6;

Status check_shape(ProbsRef m, LabelSpan labels, const char* what) {
  if (m.rows() < 2) {
    return Status::invalid_input(std::string("scoring ") + what +
                                 ": need at least 2 classes, got " + std::to_string(m.rows()));
  }
  if (m.cols() < 1) {
    return Status::invalid_input(std::string("scoring ") + what + ": no rows to score");
  }
  if (static_cast<std::size_t>(m.cols()) != labels.size()) {
    return Status::invalid_input(std::string("scoring ") + what + ": " + std::to_string(m.cols()) +
                                 " rows of probabilities but " + std::to_string(labels.size()) +
                                 " labels; pass one label per row");
  }
  for (std::size_t i = 0; i < labels.size(); ++i) {
    if (labels[i] < 0 || labels[i] >= m.rows()) {
      return Status::invalid_input(std::string("scoring ") + what + ": row " + std::to_string(i) +
                                   " has label " + std::to_string(labels[i]) +
                                   ", outside the classes 0.." + std::to_string(m.rows() - 1));
    }
  }
  return Status::ok_status();
}

}  // namespace

Status check_probabilities(ProbsRef probs, LabelSpan labels) {
  CREDENCE_RETURN_IF_ERROR(check_shape(probs, labels, "probabilities"));
  for (Eigen::Index i = 0; i < probs.cols(); ++i) {
    double sum = 0;
    for (Eigen::Index k = 0; k < probs.rows(); ++k) {
      const double p = probs(k, i);
      if (!(p >= 0.0 && p <= 1.0)) {
        return Status::invalid_input("scoring probabilities: row " + std::to_string(i) + " class " +
                                     std::to_string(k) + " has probability " + std::to_string(p) +
                                     ", outside [0, 1]; pass probabilities, not scores");
      }
      sum += p;
    }
    if (std::abs(sum - 1.0) > kSumTolerance) {
      return Status::invalid_input("scoring probabilities: row " + std::to_string(i) + " sums to " +
                                   std::to_string(sum) +
                                   ", not 1; normalise each row's class probabilities");
    }
  }
  return Status::ok_status();
}

Status check_log_probabilities(ProbsRef log_probs, LabelSpan labels) {
  CREDENCE_RETURN_IF_ERROR(check_shape(log_probs, labels, "log-probabilities"));
  for (Eigen::Index i = 0; i < log_probs.cols(); ++i) {
    double sum = 0;
    for (Eigen::Index k = 0; k < log_probs.rows(); ++k) {
      const double l = log_probs(k, i);
      if (std::isnan(l) || l > 1e-12) {
        return Status::invalid_input("scoring log-probabilities: row " + std::to_string(i) +
                                     " class " + std::to_string(k) + " has log-probability " +
                                     std::to_string(l) +
                                     ", above 0 or NaN; pass log p, not logits");
      }
      sum += std::exp(l);
    }
    if (std::abs(sum - 1.0) > kSumTolerance) {
      return Status::invalid_input("scoring log-probabilities: row " + std::to_string(i) +
                                   " has probabilities summing to " + std::to_string(sum) +
                                   ", not 1; normalise with log-softmax first");
    }
  }
  return Status::ok_status();
}

}  // namespace credence
