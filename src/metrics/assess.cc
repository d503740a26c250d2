// assess_predictions: every score of docs/methods.md section 9 on one set of labelled rows.
#include <cmath>
#include <string>

#include "credence/metrics.h"

namespace credence {

Result<Assessment> assess_predictions(ProbsRef log_probs, LabelSpan labels,
                                      const AssessSettings& settings,
                                      const UncertaintySplit* split) {
  CREDENCE_RETURN_IF_ERROR(check_log_probabilities(log_probs, labels));
  if (settings.bins < 1 || settings.classwise_bins < 1 || settings.curve_bins < 1) {
    return Status::invalid_input("assessing predictions: bin counts must be at least 1");
  }
  if (settings.bootstrap.resamples < 0 || settings.bootstrap.ece_bins < 1 ||
      !(settings.bootstrap.level > 0 && settings.bootstrap.level < 1)) {
    return Status::invalid_input(
        "assessing predictions: bootstrap needs resamples >= 0, ece_bins >= 1 and 0 < level < 1");
  }
  if (log_probs.rows() == 2 && settings.positive_class != 0 && settings.positive_class != 1) {
    return Status::invalid_input("assessing predictions: the positive class must be 0 or 1");
  }
  if (split != nullptr && split->mutual_info.size() != log_probs.cols()) {
    return Status::invalid_input("assessing predictions: the uncertainty split has " +
                                 std::to_string(split->mutual_info.size()) + " rows, not " +
                                 std::to_string(log_probs.cols()));
  }
  // Probabilities exp(log p), clipped to [0, 1] against rounding of log p near 0.
  const Eigen::MatrixXd probs = log_probs.array().exp().min(1.0).matrix();  // (K, n)
  const std::size_t n = labels.size();

  Assessment a;
  a.rows = static_cast<std::int64_t>(n);
  a.classes = static_cast<int>(probs.rows());
  a.accuracy = accuracy_score(probs, labels);
  a.nll = negative_log_likelihood(log_probs, labels);
  a.brier = brier_score(probs, labels);
  a.width_bins = top_label_reliability(probs, labels, settings.bins, Binning::kEqualWidth);
  a.mass_bins = top_label_reliability(probs, labels, settings.bins, Binning::kEqualMass);
  a.classwise_ece = classwise_ece(probs, labels, settings.classwise_bins);
  a.class_auroc = auroc_one_vs_rest(probs, labels);

  if (a.classes == 2) {
    a.brier_binary = binary_brier_score(probs, labels);
    const PositiveScores scores = positive_scores(probs, labels, settings.positive_class);
    std::vector<std::int32_t> is_positive(scores.positive.begin(), scores.positive.end());
    a.curve_width =
        positive_class_curve(scores.q, is_positive, settings.curve_bins, CurveEdges::kWidth);
    a.curve_mass =
        positive_class_curve(scores.q, is_positive, settings.curve_bins, CurveEdges::kMass);
  }

  const std::vector<std::uint8_t> correct = correct_predictions(probs, labels);
  const Eigen::VectorXd conf = top_confidence(probs);
  const Eigen::VectorXd neg_conf = -conf;
  a.misclassification_auroc = auroc(std::span<const double>(conf.data(), n), correct);
  a.rejection_by_confidence =
      accuracy_rejection(std::span<const double>(neg_conf.data(), n), correct);
  const Eigen::VectorXd entropy = entropy_from_log(log_probs);
  a.rejection_by_entropy = accuracy_rejection(std::span<const double>(entropy.data(), n), correct);
  if (split != nullptr) {
    a.rejection_by_mutual_info =
        accuracy_rejection(std::span<const double>(split->mutual_info.data(), n), correct);
  }
  if (settings.bootstrap.resamples > 0) {
    a.intervals = bootstrap_intervals(log_probs, labels, settings.bootstrap);
  }
  return a;
}

}  // namespace credence
