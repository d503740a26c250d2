// AUROC by average ranks and accuracy-rejection curves (docs/methods.md 9.5).
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <numeric>

#include "credence/metrics.h"

namespace credence {

// AUROC = (1 / (n_pos n_neg)) sum_{i pos} sum_{j neg} ([s_i > s_j] + 0.5 [s_i == s_j]), the
// Mann-Whitney statistic ("The meaning and use of the area under a receiver operating
// characteristic (ROC) curve", Radiology, 1982). With average ranks r (ties share the
// mean of their positions, 1-based): AUROC = (sum_{i pos} r_i - n_pos (n_pos + 1) / 2) /
// (n_pos n_neg). Rank sums are half-integers, exact in double up to n of about 10^7.
std::optional<double> auroc(std::span<const double> scores,
                            std::span<const std::uint8_t> positive) {
  assert(scores.size() == positive.size());
  const std::size_t n = scores.size();
  std::size_t n_pos = 0;
  for (std::uint8_t p : positive) n_pos += p != 0 ? 1 : 0;
  const std::size_t n_neg = n - n_pos;
  if (n_pos == 0 || n_neg == 0) return std::nullopt;

  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    assert(!std::isnan(scores[a]) && !std::isnan(scores[b]));
    return scores[a] < scores[b];
  });
  double rank_sum = 0;  // sum of the positives' average ranks
  for (std::size_t first = 0; first < n;) {
    std::size_t last = first + 1;  // one past the tie group
    while (last < n && scores[order[last]] == scores[order[first]]) ++last;
    const double mean_rank = 0.5 * static_cast<double>(first + 1 + last);
    for (std::size_t j = first; j < last; ++j) {
      if (positive[order[j]] != 0) rank_sum += mean_rank;
    }
    first = last;
  }
  const double np = static_cast<double>(n_pos);
  return (rank_sum - np * (np + 1) / 2) / (np * static_cast<double>(n_neg));
}

OneVsRestAuroc auroc_one_vs_rest(ProbsRef probs, LabelSpan labels) {
  assert(static_cast<std::size_t>(probs.cols()) == labels.size());
  OneVsRestAuroc out;
  const std::size_t n = labels.size();
  std::vector<double> scores(n);
  std::vector<std::uint8_t> positive(n);
  double sum = 0;
  for (Eigen::Index k = 0; k < probs.rows(); ++k) {
    for (std::size_t i = 0; i < n; ++i) {
      scores[i] = probs(k, static_cast<Eigen::Index>(i));
      positive[i] = labels[i] == k ? 1 : 0;
    }
    const std::optional<double> a = auroc(scores, positive);
    out.per_class.push_back(a.value_or(std::numeric_limits<double>::quiet_NaN()));
    if (a) {
      sum += *a;
      ++out.classes_scored;
    }
  }
  if (out.classes_scored > 0) out.macro = sum / out.classes_scored;
  return out;
}

// Accuracy-rejection curve ("Accuracy-rejection curves (ARCs) for comparing classification
// methods with a reject option", MLSB 2009; "Selective classification for deep neural
// networks", NeurIPS 2017): keep the k most certain rows, k = 1..n;
// AURC = mean_k (1 - acc_k), the area under the risk-coverage curve.
RejectionCurve accuracy_rejection(std::span<const double> uncertainty,
                                  std::span<const std::uint8_t> correct) {
  assert(!uncertainty.empty() && uncertainty.size() == correct.size());
  const std::size_t n = uncertainty.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Stable: equal scores keep row order, the tie rule the tests rely on.
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    assert(!std::isnan(uncertainty[a]) && !std::isnan(uncertainty[b]));
    return uncertainty[a] < uncertainty[b];
  });
  RejectionCurve curve;
  curve.coverage.resize(n);
  curve.accuracy.resize(n);
  std::size_t hits = 0;
  double risk_sum = 0;
  for (std::size_t k = 1; k <= n; ++k) {
    hits += correct[order[k - 1]] != 0 ? 1 : 0;
    const double kd = static_cast<double>(k);
    curve.coverage[k - 1] = kd / static_cast<double>(n);
    curve.accuracy[k - 1] = static_cast<double>(hits) / kd;
    risk_sum += 1.0 - curve.accuracy[k - 1];
  }
  curve.aurc = risk_sum / static_cast<double>(n);
  // The first k with k >= x n, x n computed in double.
  const auto at_coverage = [&](double x) {
    const double k = std::ceil(x * static_cast<double>(n));
    const std::size_t ki = std::clamp(static_cast<std::size_t>(k), std::size_t{1}, n);
    return curve.accuracy[ki - 1];
  };
  curve.accuracy_at_50 = at_coverage(0.5);
  curve.accuracy_at_80 = at_coverage(0.8);
  curve.accuracy_at_90 = at_coverage(0.9);
  curve.accuracy_at_100 = curve.accuracy[n - 1];
  return curve;
}

}  // namespace credence
