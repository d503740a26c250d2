// Model average and its entropy split into aleatoric and epistemic parts (docs/methods.md 9.1).
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>

#include "credence/metrics.h"

namespace credence {
namespace {

constexpr double kMinusInf = -std::numeric_limits<double>::infinity();

}  // namespace

// H[p] = -sum_k p_k log p_k with 0 log 0 = 0, computed from log p so that a tiny p
// keeps its exact logarithm.
namespace {
// Writes the entropies of log_probs' columns into h, reusing its buffer.
void entropy_into(ProbsRef log_probs, Eigen::VectorXd& h) {
  h.resize(log_probs.cols());  // (n)
  for (Eigen::Index i = 0; i < log_probs.cols(); ++i) {
    double sum = 0;
    for (Eigen::Index k = 0; k < log_probs.rows(); ++k) {
      const double l = log_probs(k, i);
      if (l != kMinusInf) sum -= std::exp(l) * l;
    }
    h[i] = sum;
  }
}
}  // namespace

Eigen::VectorXd entropy_from_log(ProbsRef log_probs) {
  Eigen::VectorXd h;
  entropy_into(log_probs, h);
  return h;
}

UncertaintyAccumulator::UncertaintyAccumulator(Eigen::Index classes, Eigen::Index rows) {
  reset(classes, rows);
}

void UncertaintyAccumulator::reset(Eigen::Index classes, Eigen::Index rows) {
  assert(classes >= 1 && rows >= 0);
  // resize() keeps the allocation when the size is unchanged.
  running_max_.resize(classes, rows);
  scaled_sum_.resize(classes, rows);
  entropy_sum_.resize(rows);
  running_max_.setConstant(kMinusInf);
  scaled_sum_.setZero();
  entropy_sum_.setZero();
  weight_sum_ = 0;
  members_ = 0;
}

// log sum_s w_s p_s is kept as a running logsumexp (the stable form of pbar in docs/methods.md
// 9.1): with v = log w + log p and d = v - m, a member below the running maximum m adds
// e^d to the scaled sum; one above it rescales the sum by e^-d and becomes the maximum.
// A term of -inf (probability exactly 0) adds nothing. One pass, two exponentials per
// entry, no temporaries; the entropy uses entropy_from_log's exact arithmetic so that a
// one-member ensemble has MI = 0 exactly.
void UncertaintyAccumulator::add_member(ProbsRef log_probs, double weight) {
  add(log_probs, weight);
}

void UncertaintyAccumulator::add_member(const Eigen::Ref<const Eigen::MatrixXf>& log_probs,
                                        double weight) {
  add(log_probs, weight);
}

template <typename Derived>
void UncertaintyAccumulator::add(const Eigen::MatrixBase<Derived>& log_probs, double weight) {
  assert(log_probs.rows() == running_max_.rows());
  assert(log_probs.cols() == running_max_.cols());
  assert(weight > 0 && std::isfinite(weight));
  const double log_w = std::log(weight);
  for (Eigen::Index i = 0; i < log_probs.cols(); ++i) {
    double plogp = 0;
    for (Eigen::Index k = 0; k < log_probs.rows(); ++k) {
      const double l = static_cast<double>(log_probs(k, i));
      if (l == kMinusInf) continue;
      plogp -= std::exp(l) * l;
      const double v = log_w + l;
      double& m = running_max_(k, i);
      double& sum = scaled_sum_(k, i);
      const double d = v - m;
      if (d <= 0) {
        sum += std::exp(d);
      } else {
        sum = sum * std::exp(-d) + 1.0;
        m = v;
      }
    }
    entropy_sum_[i] += weight * plogp;
  }
  weight_sum_ += weight;
  ++members_;
}

// H[pbar] = -sum_k pbar_k log pbar_k;  E H = sum_s w_s H[p_s];  MI = H[pbar] - E H >= 0
// (the BALD quantity, "Bayesian active learning for classification and preference
// learning", 2011; the split follows "Decomposition of uncertainty in Bayesian deep
// learning", ICML 2018). MI is non-negative by Jensen's inequality; a negative value is
// rounding, clamped to 0 and counted.
UncertaintySplit UncertaintyAccumulator::finish() const {
  UncertaintySplit out;
  finish(out);
  return out;
}

void UncertaintyAccumulator::finish(UncertaintySplit& out) const {
  assert(members_ >= 1);
  out.clamped_rows = 0;
  out.largest_clamp = 0;
  out.log_mean = (running_max_ + scaled_sum_.log() - std::log(weight_sum_)).matrix();
  entropy_into(out.log_mean, out.total);
  out.expected = entropy_sum_ / weight_sum_;
  out.mutual_info = out.total - out.expected;
  for (Eigen::Index i = 0; i < out.mutual_info.size(); ++i) {
    if (out.mutual_info[i] < 0) {
      out.largest_clamp = std::min(out.largest_clamp, out.mutual_info[i]);
      out.mutual_info[i] = 0;
      ++out.clamped_rows;
    }
  }
}

UncertaintySplit split_uncertainty(std::span<const Eigen::MatrixXd> member_log_probs) {
  assert(!member_log_probs.empty());
  UncertaintyAccumulator acc(member_log_probs[0].rows(), member_log_probs[0].cols());
  for (const Eigen::MatrixXd& m : member_log_probs) acc.add_member(m);
  return acc.finish();
}

}  // namespace credence
