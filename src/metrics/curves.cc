// Precision-recall and ROC curves of the positive class over every distinct threshold.
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <numeric>

#include "credence/metrics.h"
#include "metrics/cumulative.h"

namespace credence {
Cumulative cumulate(std::span<const double> q, std::span<const std::uint8_t> positive) {
  assert(q.size() == positive.size());
  std::vector<std::size_t> order(q.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    assert(!std::isnan(q[a]) && !std::isnan(q[b]));
    return q[a] > q[b];
  });
  Cumulative c;
  double tp = 0;
  double fp = 0;
  for (std::size_t j = 0; j < order.size(); ++j) {
    (positive[order[j]] != 0 ? tp : fp) += 1;
    // A threshold closes a group of tied values: record it at the group's last row.
    if (j + 1 == order.size() || q[order[j + 1]] != q[order[j]]) {
      c.thresholds.push_back(q[order[j]]);
      c.tp.push_back(tp);
      c.fp.push_back(fp);
    }
  }
  return c;
}

// Precision TP / (TP + FP) and recall TP / P at each distinct threshold; average precision
// AP = sum_j (R_j - R_{j-1}) P_j, the step-wise area under the precision-recall curve as
// scikit-learn's average_precision_score defines it ("The relationship between
// precision-recall and ROC curves", ICML 2006, explains why it is not interpolated
// linearly).
std::optional<PrecisionRecallCurve> precision_recall_curve(
    std::span<const double> q, std::span<const std::uint8_t> positive) {
  const Cumulative c = cumulate(q, positive);
  if (c.tp.empty() || c.tp.back() == 0) return std::nullopt;
  const double total_positive = c.tp.back();
  PrecisionRecallCurve curve;
  curve.thresholds.push_back(std::numeric_limits<double>::infinity());
  curve.precision.push_back(1.0);
  curve.recall.push_back(0.0);
  for (std::size_t j = 0; j < c.thresholds.size(); ++j) {
    curve.thresholds.push_back(c.thresholds[j]);
    curve.precision.push_back(c.tp[j] / (c.tp[j] + c.fp[j]));
    curve.recall.push_back(c.tp[j] / total_positive);
    const std::size_t k = curve.recall.size() - 1;
    curve.average_precision += (curve.recall[k] - curve.recall[k - 1]) * curve.precision[k];
  }
  return curve;
}

// False positive rate FP / N against true positive rate TP / P; the area by the trapezoid
// rule equals the Mann-Whitney AUROC with ties counting one half ("The meaning and use of
// the area under a receiver operating characteristic (ROC) curve", Radiology, 1982).
std::optional<RocCurve> roc_curve(std::span<const double> q,
                                  std::span<const std::uint8_t> positive, bool drop_collinear) {
  const Cumulative c = cumulate(q, positive);
  if (c.tp.empty() || c.tp.back() == 0 || c.fp.back() == 0) return std::nullopt;
  // A point is kept when the counts bend there (a nonzero second difference of TP or FP),
  // and the two ends always; then the origin goes in front, as scikit-learn does it.
  RocCurve curve;
  curve.thresholds.push_back(std::numeric_limits<double>::infinity());
  curve.true_positive_rate.push_back(0.0);
  curve.false_positive_rate.push_back(0.0);
  const std::size_t m = c.tp.size();
  for (std::size_t j = 0; j < m; ++j) {
    const bool end = j == 0 || j + 1 == m;
    const bool bends = !end && (c.tp[j + 1] - 2 * c.tp[j] + c.tp[j - 1] != 0 ||
                                c.fp[j + 1] - 2 * c.fp[j] + c.fp[j - 1] != 0);
    if (drop_collinear && !end && !bends) continue;
    curve.thresholds.push_back(c.thresholds[j]);
    curve.true_positive_rate.push_back(c.tp[j] / c.tp.back());
    curve.false_positive_rate.push_back(c.fp[j] / c.fp.back());
  }
  for (std::size_t j = 1; j < curve.thresholds.size(); ++j) {
    curve.area += 0.5 * (curve.false_positive_rate[j] - curve.false_positive_rate[j - 1]) *
                  (curve.true_positive_rate[j] + curve.true_positive_rate[j - 1]);
  }
  return curve;
}

}  // namespace credence
