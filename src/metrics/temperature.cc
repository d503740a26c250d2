// Temperature scaling of logits or of log pbar (docs/methods.md 9.4).
#include <algorithm>
#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "credence/metrics.h"

namespace credence {
namespace {

constexpr double kMinusInf = -std::numeric_limits<double>::infinity();
constexpr double kLogTauBound = 5.0;  // tau in [e^-5, e^5] (docs/methods.md 9.4)
constexpr int kMaxIterations = 200;

// Value, first and second derivative of NLL(s) = mean_i [logsumexp(s z_i) - s z_i,y_i]:
//   NLL'(s)  = mean_i (E_q[z_i] - z_i,y_i),  NLL''(s) = mean_i Var_q[z_i],  q = softmax(s z_i).
// Entries of -inf (probability 0) have q = 0 and drop out of both moments.
struct NllAt {
  double value = 0;
  double slope = 0;
  double curvature = 0;
};

NllAt nll_at(ProbsRef z, LabelSpan labels, double s) {
  NllAt out;
  for (Eigen::Index i = 0; i < z.cols(); ++i) {
    const double top = s * z.col(i).maxCoeff();
    double sum = 0;
    for (Eigen::Index k = 0; k < z.rows(); ++k) sum += std::exp(s * z(k, i) - top);
    const double lse = top + std::log(sum);
    double mean = 0;
    double second = 0;
    for (Eigen::Index k = 0; k < z.rows(); ++k) {
      if (z(k, i) == kMinusInf) continue;
      const double q = std::exp(s * z(k, i) - lse);
      mean += q * z(k, i);
      second += q * z(k, i) * z(k, i);
    }
    const double z_y = z(labels[static_cast<std::size_t>(i)], i);
    out.value += lse - s * z_y;
    out.slope += mean - z_y;
    out.curvature += std::max(0.0, second - mean * mean);
  }
  const double n = static_cast<double>(z.cols());
  out.value /= n;
  out.slope /= n;
  out.curvature /= n;
  return out;
}

}  // namespace

Eigen::MatrixXd apply_temperature(ProbsRef z, double temperature) {
  assert(temperature > 0);
  Eigen::MatrixXd out = z / temperature;  // (K, n)
  for (Eigen::Index i = 0; i < out.cols(); ++i) {
    const double top = out.col(i).maxCoeff();
    const double lse = top + std::log((out.col(i).array() - top).exp().sum());
    out.col(i).array() -= lse;
  }
  return out;
}

double temperature_nll(ProbsRef z, LabelSpan labels, double temperature) {
  assert(temperature > 0);
  return negative_log_likelihood(apply_temperature(z, temperature), labels);
}

// Temperature scaling ("On calibration of modern neural networks", ICML 2017): minimise
// NLL(tau) = -(1/n) sum_i log softmax(z_i / tau)_{y_i}. In s = 1/tau the objective is
// convex (its second derivative is a mean of variances, docs/methods.md 9.4), so a Newton
// iteration kept inside a shrinking bracket [lo, hi] on the sign of NLL'(s), with a
// bisection step whenever Newton would leave it, finds the global minimum.
Result<TemperatureFit> fit_temperature(ProbsRef z, LabelSpan labels) {
  assert(z.cols() >= 1 && static_cast<std::size_t>(z.cols()) == labels.size());
  for (Eigen::Index i = 0; i < z.cols(); ++i) {
    const std::int32_t y = labels[static_cast<std::size_t>(i)];
    assert(y >= 0 && y < z.rows());
    for (Eigen::Index k = 0; k < z.rows(); ++k) {
      if (std::isnan(z(k, i)) || z(k, i) == std::numeric_limits<double>::infinity()) {
        return Status::invalid_input("fitting a temperature: row " + std::to_string(i) +
                                     " has a NaN or +inf logit; check the predictions");
      }
    }
    if (z(y, i) == kMinusInf || z.col(i).maxCoeff() == kMinusInf) {
      return Status::invalid_input("fitting a temperature: row " + std::to_string(i) +
                                   " gives its label probability 0, so every temperature has "
                                   "infinite NLL; check the labels or the predictions");
    }
  }

  TemperatureFit fit;
  fit.nll_before = nll_at(z, labels, 1.0).value;
  double lo = std::exp(-kLogTauBound);  // bracket in s = 1/tau
  double hi = std::exp(kLogTauBound);
  double s = 1.0;
  if (nll_at(z, labels, lo).slope >= 0) {
    s = lo;  // NLL increases from the smallest s: tau* = e^5 or beyond
    fit.at_bound = true;
  } else if (nll_at(z, labels, hi).slope <= 0) {
    s = hi;  // NLL still decreasing at the largest s: tau* = e^-5 or below
    fit.at_bound = true;
  } else {
    for (fit.iterations = 1; fit.iterations <= kMaxIterations; ++fit.iterations) {
      const NllAt at = nll_at(z, labels, s);
      if (at.slope > 0) {
        hi = s;
      } else if (at.slope < 0) {
        lo = s;
      } else {
        break;
      }
      double next = at.curvature > 0 ? s - at.slope / at.curvature : 0.5 * (lo + hi);
      if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
      const bool done = std::abs(next - s) <= 1e-13 * s || hi - lo <= 1e-15 * hi;
      s = next;
      if (done) break;
    }
  }
  fit.temperature = 1.0 / s;
  fit.nll_after = nll_at(z, labels, s).value;
  return fit;
}

}  // namespace credence
