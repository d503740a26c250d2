// Binning, ECE, MCE, classwise ECE and reliability tables (docs/methods.md 9.3).
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <numeric>

#include "credence/metrics.h"

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// Index of the first inner edge e_1..e_{M-1} that is >= p: std::lower_bound over the
// inner edges, which is NumPy's searchsorted(edges[1:-1], p, side='left').
int bin_of(double p, std::span<const double> edges) {
  const auto inner_begin = edges.begin() + 1;
  const auto inner_end = edges.end() - 1;
  return static_cast<int>(std::lower_bound(inner_begin, inner_end, p) - inner_begin);
}


// Fills count, means; NaN means for empty bins.
void finish_bins(ReliabilityTable& table, const std::vector<double>& conf_sum,
                 const std::vector<double>& hit_sum, std::size_t n) {
  table.ece = 0;
  table.mce = 0;
  for (std::size_t m = 0; m < table.rows.size(); ++m) {
    ReliabilityBin& bin = table.rows[m];
    if (bin.count == 0) {
      bin.mean_confidence = kNaN;
      bin.accuracy = kNaN;
      continue;
    }
    const double count = static_cast<double>(bin.count);
    bin.mean_confidence = conf_sum[m] / count;
    bin.accuracy = hit_sum[m] / count;
    const double gap = std::abs(bin.accuracy - bin.mean_confidence);
    table.ece += count / static_cast<double>(n) * gap;
    table.mce = std::max(table.mce, gap);
  }
}

}  // namespace

// NumPy 1.24's linear quantile of sorted data at fraction f: virtual index v = (n-1) f,
// gamma = v - floor(v), and its _lerp, which interpolates from the nearer end.
double sorted_quantile(std::span<const double> sorted, double f) {
  const double n_minus_1 = static_cast<double>(sorted.size() - 1);
  const double v = n_minus_1 * f;
  if (v >= n_minus_1) return sorted.back();
  if (v < 0) return sorted.front();
  const double lower = std::floor(v);
  const std::size_t i = static_cast<std::size_t>(lower);
  const double gamma = v - lower;
  const double a = sorted[i];
  const double b = sorted[i + 1];
  const double diff = b - a;
  return gamma >= 0.5 ? b - diff * (1 - gamma) : a + diff * gamma;
}

std::vector<double> equal_width_edges(int bins) {
  assert(bins >= 1);
  // NumPy's linspace(0, 1, M + 1): i * step, with the last edge set to exactly 1.
  const double step = 1.0 / bins;
  std::vector<double> edges(static_cast<std::size_t>(bins) + 1);
  for (int i = 0; i < bins; ++i) edges[static_cast<std::size_t>(i)] = i * step;
  edges.back() = 1.0;
  return edges;
}

int equal_width_bin(double p, int bins) {
  assert(bins >= 1 && p >= 0 && p <= 1);
  // Binary search over the inner edges i * step, i = 1..M-1, without building them.
  const double step = 1.0 / bins;
  int lo = 1;
  int hi = bins;  // first inner edge >= p lies in [lo, hi); hi = M means none
  while (lo < hi) {
    const int mid = lo + (hi - lo) / 2;
    if (mid * step < p) {
      lo = mid + 1;
    } else {
      hi = mid;
    }
  }
  return lo - 1;
}

double percentile_linear(std::span<const double> values, double q) {
  assert(!values.empty());
  std::vector<double> sorted(values.begin(), values.end());
  std::sort(sorted.begin(), sorted.end());
  return sorted_quantile(sorted, q / 100.0);
}

std::vector<double> quantile_edges(std::span<const double> values, int bins) {
  assert(bins >= 1 && !values.empty());
  std::vector<double> sorted(values.begin(), values.end());
  std::sort(sorted.begin(), sorted.end());
  // scikit-learn 1.2: percentile(q, linspace(0, 1, M + 1) * 100); NumPy divides by 100
  // again, and those two roundings are kept so the edges match to the last bit.
  std::vector<double> edges = equal_width_edges(bins);
  for (double& e : edges) e = sorted_quantile(sorted, (e * 100.0) / 100.0);
  return edges;
}

// Top-label reliability ("On calibration of modern neural networks", ICML 2017;
// "Obtaining well calibrated probabilities using Bayesian binning", AAAI 2015):
//   ECE = sum_m (n_m / n) |acc_m - conf_m|,  MCE = max_m |acc_m - conf_m| over non-empty m.
ReliabilityTable reliability_from_confidence(std::span<const double> confidence,
                                             std::span<const std::uint8_t> correct, int bins,
                                             Binning binning) {
  assert(!confidence.empty() && confidence.size() == correct.size() && bins >= 1);
  const std::size_t n = confidence.size();
  const std::size_t m_bins = static_cast<std::size_t>(bins);
  ReliabilityTable table;
  table.binning = binning;
  table.bins = bins;
  table.rows.resize(m_bins);
  std::vector<double> conf_sum(m_bins, 0.0);
  std::vector<double> hit_sum(m_bins, 0.0);

  if (binning == Binning::kEqualWidth) {
    const std::vector<double> edges = equal_width_edges(bins);
    for (std::size_t m = 0; m < m_bins; ++m) {
      table.rows[m].lo = edges[m];
      table.rows[m].hi = edges[m + 1];
    }
    for (std::size_t i = 0; i < n; ++i) {
      assert(confidence[i] >= 0 && confidence[i] <= 1);
      const std::size_t m = static_cast<std::size_t>(bin_of(confidence[i], edges));
      ++table.rows[m].count;
      conf_sum[m] += confidence[i];
      hit_sum[m] += correct[i];
    }
  } else {
    // Equal mass ("adaptive"): stable sort, bin b holds positions floor(b n / M) to
    // floor((b + 1) n / M) - 1 of the sorted order.
    std::vector<std::size_t> order(n);
    std::iota(order.begin(), order.end(), std::size_t{0});
    std::stable_sort(order.begin(), order.end(),
                     [&](std::size_t a, std::size_t b) { return confidence[a] < confidence[b]; });
    for (std::size_t b = 0; b < m_bins; ++b) {
      const std::size_t first = b * n / m_bins;
      const std::size_t last = (b + 1) * n / m_bins;  // one past
      ReliabilityBin& bin = table.rows[b];
      bin.count = static_cast<std::int64_t>(last - first);
      bin.lo = first < last ? confidence[order[first]] : kNaN;
      bin.hi = first < last ? confidence[order[last - 1]] : kNaN;
      for (std::size_t j = first; j < last; ++j) {
        conf_sum[b] += confidence[order[j]];
        hit_sum[b] += correct[order[j]];
      }
    }
  }
  finish_bins(table, conf_sum, hit_sum, n);
  return table;
}

ReliabilityTable top_label_reliability(ProbsRef probs, LabelSpan labels, int bins,
                                       Binning binning) {
  const Eigen::VectorXd conf = top_confidence(probs);
  const std::vector<std::uint8_t> correct = correct_predictions(probs, labels);
  return reliability_from_confidence(std::span<const double>(conf.data(), correct.size()), correct,
                                     bins, binning);
}

// Classwise ECE ("Beyond temperature scaling: obtaining well-calibrated multi-class
// probabilities with Dirichlet calibration", NeurIPS 2019):
//   cwECE = (1/K) sum_k sum_m (n_mk / n) |mean_{m,k} [y == k] - mean_{m,k} p_k|
double classwise_ece(ProbsRef probs, LabelSpan labels, int bins) {
  assert(probs.cols() >= 1 && static_cast<std::size_t>(probs.cols()) == labels.size());
  const std::vector<double> edges = equal_width_edges(bins);
  const std::size_t m_bins = static_cast<std::size_t>(bins);
  const double n = static_cast<double>(probs.cols());
  double total = 0;
  std::vector<double> count(m_bins), p_sum(m_bins), hit_sum(m_bins);
  for (Eigen::Index k = 0; k < probs.rows(); ++k) {
    std::fill(count.begin(), count.end(), 0.0);
    std::fill(p_sum.begin(), p_sum.end(), 0.0);
    std::fill(hit_sum.begin(), hit_sum.end(), 0.0);
    for (Eigen::Index i = 0; i < probs.cols(); ++i) {
      const double p = probs(k, i);
      assert(p >= 0 && p <= 1);
      const std::size_t m = static_cast<std::size_t>(bin_of(p, edges));
      count[m] += 1;
      p_sum[m] += p;
      hit_sum[m] += labels[static_cast<std::size_t>(i)] == k ? 1.0 : 0.0;
    }
    for (std::size_t m = 0; m < m_bins; ++m) {
      if (count[m] > 0)
        total += count[m] / n * std::abs(hit_sum[m] / count[m] - p_sum[m] / count[m]);
    }
  }
  return total / static_cast<double>(probs.rows());
}

// Reliability curve of the positive class as scikit-learn 1.2's calibration_curve builds
// it ("Predicting good probabilities with supervised learning", ICML 2005): right-closed
// bins by searchsorted over the inner edges, sums in row order, empty bins dropped.
PositiveClassCurve positive_class_curve(std::span<const double> q, LabelSpan labels, int bins,
                                        CurveEdges edges) {
  assert(!q.empty() && q.size() == labels.size() && bins >= 1);
  PositiveClassCurve curve;
  curve.edges = edges == CurveEdges::kWidth ? equal_width_edges(bins) : quantile_edges(q, bins);
  const std::size_t m_bins = static_cast<std::size_t>(bins);
  std::vector<double> q_sum(m_bins, 0.0), true_sum(m_bins, 0.0);
  std::vector<std::int64_t> count(m_bins, 0);
  for (std::size_t i = 0; i < q.size(); ++i) {
    assert(q[i] >= 0 && q[i] <= 1 && (labels[i] == 0 || labels[i] == 1));
    const std::size_t m = static_cast<std::size_t>(bin_of(q[i], curve.edges));
    q_sum[m] += q[i];
    true_sum[m] += labels[i];
    ++count[m];
  }
  for (std::size_t m = 0; m < m_bins; ++m) {
    if (count[m] == 0) continue;
    const double c = static_cast<double>(count[m]);
    curve.observed.push_back(true_sum[m] / c);
    curve.mean_probability.push_back(q_sum[m] / c);
    curve.counts.push_back(count[m]);
  }
  return curve;
}

}  // namespace credence
