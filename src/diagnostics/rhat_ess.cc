// Potential scale reduction (docs/methods.md 10.1) and effective sample size with Geyer's
// initial monotone sequence (docs/methods.md 10.2).
#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>
#include <vector>

#include "credence/diagnostics.h"

namespace credence {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

bool all_finite(const Chains& chains) {
  for (const std::vector<double>& chain : chains) {
    for (double value : chain) {
      if (!std::isfinite(value)) return false;
    }
  }
  return true;
}

double mean_of(const std::vector<double>& values) {
  return std::accumulate(values.begin(), values.end(), 0.0) / static_cast<double>(values.size());
}

// Within-chain variance W, and var+ = (n - 1)/n W + B/n, for M chains of n draws.
struct Variances {
  double within = 0;  // W
  double plus = 0;    // var+
};

Variances variances(const Chains& chains) {
  const auto m = static_cast<double>(chains.size());
  const auto n = static_cast<double>(chains[0].size());
  std::vector<double> means;
  double within = 0;
  for (const std::vector<double>& chain : chains) {
    const double mean = mean_of(chain);
    double squares = 0;
    for (double value : chain) squares += (value - mean) * (value - mean);
    within += squares / (n - 1);
    means.push_back(mean);
  }
  within /= m;
  double between_over_n = 0;  // B / n = sample variance of the chain means
  if (chains.size() > 1) {
    const double grand = mean_of(means);
    for (double mean : means) between_over_n += (mean - grand) * (mean - grand);
    between_over_n /= m - 1;
  }
  return {within, (n - 1) / n * within + between_over_n};
}

bool usable(const Chains& chains, std::size_t min_chains, std::size_t min_length) {
  if (chains.size() < min_chains || chains[0].size() < min_length) return false;
  for (const std::vector<double>& chain : chains) {
    if (chain.size() != chains[0].size()) return false;
  }
  return all_finite(chains);
}

}  // namespace

double rhat_of(const Chains& chains) {
  if (!usable(chains, 2, 2)) return kNaN;
  const Variances v = variances(chains);
  if (v.plus == 0) return kNaN;                                    // every draw equal
  if (v.within == 0) return std::numeric_limits<double>::infinity();  // constant, disagreeing chains
  return std::sqrt(v.plus / v.within);
}

double ess_of(const Chains& chains) {
  if (!usable(chains, 1, 4)) return kNaN;
  const std::size_t n = chains[0].size();
  const auto nd = static_cast<double>(n);
  const double total = static_cast<double>(chains.size()) * nd;  // S
  const Variances v = variances(chains);
  if (v.within == 0) return kNaN;

  // mean_m s_m^2 rho_m(t), written as mean_m acov_m(t) n/(n - 1) so that a chain that
  // is constant on its own contributes 0 instead of 0/0.
  std::vector<double> mean_acov(n, 0.0);
  for (const std::vector<double>& chain : chains) {
    const std::vector<double> acov = autocovariance(chain);
    for (std::size_t t = 0; t < n; ++t) mean_acov[t] += acov[t];
  }
  auto rho = [&](std::size_t t) {
    if (t == 0) return 1.0;
    const double weighted = mean_acov[t] / static_cast<double>(chains.size()) * nd / (nd - 1);
    return 1 - (v.within - weighted) / v.plus;
  };

  // Geyer's initial monotone sequence: pairs P_k until the first negative one, each
  // replaced by the running minimum.
  double sum = 0;
  double previous = std::numeric_limits<double>::infinity();
  for (std::size_t k = 0; 2 * k + 1 < n; ++k) {
    double pair = rho(2 * k) + rho(2 * k + 1);
    if (pair < 0) break;
    pair = std::min(pair, previous);
    sum += pair;
    previous = pair;
  }
  const double tau = -1 + 2 * sum;
  // Antithetic chains can drive tau towards 0: cap ESS at S log10(S) (the 2021 paper's
  // suggestion, docs/methods.md 10.2).
  return total / std::max(tau, 1 / std::log10(total));
}

double split_rhat(const Chains& chains) { return rhat_of(split_chains(chains)); }

double bulk_rhat(const Chains& chains) {
  const Chains split = split_chains(chains);
  return all_finite(split) ? rhat_of(rank_normalize(split)) : kNaN;
}

double folded_rhat(const Chains& chains) {
  const Chains split = split_chains(chains);
  return all_finite(split) ? rhat_of(rank_normalize(fold(split))) : kNaN;
}

double bulk_ess(const Chains& chains) {
  const Chains split = split_chains(chains);
  return all_finite(split) ? ess_of(rank_normalize(split)) : kNaN;
}

double tail_ess(const Chains& chains) {
  const Chains split = split_chains(chains);
  if (!all_finite(split)) return kNaN;
  const double lower = ess_of(quantile_indicator(split, 0.05));
  const double upper = ess_of(quantile_indicator(split, 0.95));
  if (std::isnan(lower) || std::isnan(upper)) return kNaN;
  return std::min(lower, upper);
}

}  // namespace credence
