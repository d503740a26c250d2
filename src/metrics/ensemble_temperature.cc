// Temperature scaling of an ensemble, member by member (docs/methods.md 9.4 applied per member).
#include <algorithm>
#include <array>
#include <cassert>
#include <cmath>
#include <limits>
#include <string>

#include "credence/metrics.h"

namespace credence {
namespace {

constexpr double kLogTauBound = 5.0;  // tau in [e^-5, e^5], as fit_temperature
constexpr int kGridPoints = 41;       // coarse scan of log tau before the golden section
constexpr double kLogTauTolerance = 1e-9;

// log softmax(l / tau) of one column into out. l's entries of -inf stay -inf.
void temper_column(const Eigen::Ref<const Eigen::VectorXd>& l, double inv_tau,
                   Eigen::Ref<Eigen::VectorXd> out) {
  out = l * inv_tau;
  const double top = out.maxCoeff();
  const double lse = top + std::log((out.array() - top).exp().sum());
  out.array() -= lse;
}

}  // namespace

double ensemble_temperature_nll(std::span<const Eigen::MatrixXd> member_log_probs,
                                LabelSpan labels, double temperature) {
  assert(!member_log_probs.empty() && temperature > 0);
  const Eigen::Index classes = member_log_probs[0].rows();
  const Eigen::Index n = member_log_probs[0].cols();
  const double inv_tau = 1.0 / temperature;
  const double log_members = std::log(static_cast<double>(member_log_probs.size()));
  Eigen::VectorXd tempered(classes);
  double total = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    const std::int32_t y = labels[static_cast<std::size_t>(i)];
    // log pbar_y = logsumexp_s log softmax(l_s / tau)_y - log S, max-shifted.
    double top = -std::numeric_limits<double>::infinity();
    double sum = 0;
    for (const Eigen::MatrixXd& member : member_log_probs) {
      temper_column(member.col(i), inv_tau, tempered);
      const double v = tempered[y];
      if (v <= top) {
        sum += std::exp(v - top);
      } else {
        sum = sum * std::exp(top - v) + 1.0;
        top = v;
      }
    }
    total -= top + std::log(sum) - log_members;
  }
  return total / static_cast<double>(n);
}

// "On calibration of modern neural networks" (ICML 2017) divides a network's logits by
// tau. For an ensemble credence divides every member's logits (log p_s differs from the
// logits by a constant per row, so log p_s / tau renormalised is softmax(z_s / tau)) and
// averages afterwards: the tempered ensemble is again an average of distributions, so its
// entropy still splits exactly into expected entropy and mutual information. With members
// the objective is no longer convex in 1/tau, so a 41-point scan of log tau on [-5, 5]
// brackets the best point and a golden-section search refines it.
Result<TemperatureFit> fit_ensemble_temperature(std::span<const Eigen::MatrixXd> member_log_probs,
                                                LabelSpan labels) {
  assert(!member_log_probs.empty());
  if (member_log_probs.size() == 1) return fit_temperature(member_log_probs[0], labels);
  for (std::size_t s = 0; s < member_log_probs.size(); ++s) {
    const Eigen::MatrixXd& m = member_log_probs[s];
    assert(m.rows() == member_log_probs[0].rows() && m.cols() == member_log_probs[0].cols());
    if (m.array().isNaN().any() || (m.array() == std::numeric_limits<double>::infinity()).any()) {
      return Status::invalid_input("fitting a temperature: member " + std::to_string(s) +
                                   " has a NaN or +inf log-probability; check the predictions");
    }
  }
  auto nll = [&](double log_tau) {
    return ensemble_temperature_nll(member_log_probs, labels, std::exp(log_tau));
  };
  TemperatureFit fit;
  fit.nll_before = nll(0.0);
  if (!std::isfinite(fit.nll_before)) {
    return Status::invalid_input(
        "fitting a temperature: some row's label has probability 0 under every member, so "
        "every temperature has infinite NLL; check the labels or the predictions");
  }
  std::array<double, kGridPoints> grid{};
  int best = 0;
  for (int g = 0; g < kGridPoints; ++g) {
    grid[static_cast<std::size_t>(g)] =
        nll(-kLogTauBound + 2 * kLogTauBound * g / (kGridPoints - 1));
    if (grid[static_cast<std::size_t>(g)] < grid[static_cast<std::size_t>(best)]) best = g;
  }
  const double spacing = 2 * kLogTauBound / (kGridPoints - 1);
  double lo = -kLogTauBound + spacing * std::max(0, best - 1);
  double hi = -kLogTauBound + spacing * std::min(kGridPoints - 1, best + 1);
  const double golden = (std::sqrt(5.0) - 1) / 2;
  double a = hi - golden * (hi - lo);
  double b = lo + golden * (hi - lo);
  double fa = nll(a);
  double fb = nll(b);
  while (hi - lo > kLogTauTolerance) {
    ++fit.iterations;
    if (fa <= fb) {
      hi = b;
      b = a;
      fb = fa;
      a = hi - golden * (hi - lo);
      fa = nll(a);
    } else {
      lo = a;
      a = b;
      fa = fb;
      b = lo + golden * (hi - lo);
      fb = nll(b);
    }
  }
  const double log_tau = 0.5 * (lo + hi);
  fit.temperature = std::exp(log_tau);
  fit.nll_after = nll(log_tau);
  fit.at_bound = best == 0 || best == kGridPoints - 1;  // the optimum may lie beyond
  if (fit.nll_after > fit.nll_before) {  // never worse than leaving the ensemble alone
    fit.temperature = 1;
    fit.nll_after = fit.nll_before;
  }
  return fit;
}

}  // namespace credence
