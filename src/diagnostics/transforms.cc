// Reshaping draws before R-hat and ESS: common length, splitting, rank normalisation,
// folding and tail indicators (docs/methods.md 10.1-10.2).
#include <algorithm>
#include <cmath>
#include <numbers>
#include <numeric>
#include <vector>

#include "credence/diagnostics.h"
#include "diagnostics/quantile.h"

namespace credence {
namespace {

std::vector<double> pooled(const Chains& chains) {
  std::vector<double> all;
  for (const std::vector<double>& chain : chains) all.insert(all.end(), chain.begin(), chain.end());
  return all;
}

// Same shape as `chains`, values taken in order from `flat`.
Chains reshaped(const Chains& chains, const std::vector<double>& flat) {
  Chains out = chains;
  std::size_t k = 0;
  for (std::vector<double>& chain : out) {
    for (double& value : chain) value = flat[k++];
  }
  return out;
}

// Lower-tail standard normal probability, accurate in both tails.
double normal_cdf(double x) { return 0.5 * std::erfc(-x / std::numbers::sqrt2); }

// Phi^{-1}(p) for 0 < p < 1: the rational start of "Handbook of Mathematical Functions"
// (1964) 26.2.23 (error < 4.5e-4), then Halley steps on Phi(x) - p to double precision.
double normal_quantile(double p) {
  const double tail = std::min(p, 1 - p);
  const double t = std::sqrt(-2 * std::log(tail));
  double x = t - (2.515517 + 0.802853 * t + 0.010328 * t * t) /
                     (1 + 1.432788 * t + 0.189269 * t * t + 0.001308 * t * t * t);
  if (p < 0.5) x = -x;
  for (int i = 0; i < 4; ++i) {
    const double error = normal_cdf(x) - p;
    const double u = error * std::sqrt(2 * std::numbers::pi) * std::exp(0.5 * x * x);
    x -= u / (1 + 0.5 * x * u);
  }
  return x;
}

// Average ranks (1-based), ties sharing the mean of their positions.
std::vector<double> average_ranks(const std::vector<double>& values) {
  std::vector<std::size_t> order(values.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return values[a] < values[b]; });
  std::vector<double> ranks(values.size());
  for (std::size_t i = 0; i < order.size();) {
    std::size_t j = i;
    while (j + 1 < order.size() && values[order[j + 1]] == values[order[i]]) ++j;
    const double rank = 0.5 * static_cast<double>(i + j) + 1;
    for (std::size_t k = i; k <= j; ++k) ranks[order[k]] = rank;
    i = j + 1;
  }
  return ranks;
}

}  // namespace

double linear_quantile(std::vector<double> values, double p) {
  std::sort(values.begin(), values.end());
  const double position = p * static_cast<double>(values.size() - 1);
  const auto below = static_cast<std::size_t>(std::floor(position));
  const std::size_t above = std::min(below + 1, values.size() - 1);
  const double fraction = position - static_cast<double>(below);
  return values[below] + fraction * (values[above] - values[below]);
}

Chains common_length(const Chains& chains) {
  std::size_t shortest = chains.empty() ? 0 : chains[0].size();
  for (const std::vector<double>& chain : chains) shortest = std::min(shortest, chain.size());
  Chains out;
  for (const std::vector<double>& chain : chains) {
    out.emplace_back(chain.begin(), chain.begin() + static_cast<std::ptrdiff_t>(shortest));
  }
  return out;
}

Chains split_chains(const Chains& chains) {
  Chains out;
  for (const std::vector<double>& chain : chains) {
    const std::size_t half = chain.size() / 2;
    const auto first = chain.begin();
    out.emplace_back(first, first + static_cast<std::ptrdiff_t>(half));
    // Odd length: the second half starts one past the middle draw.
    out.emplace_back(chain.end() - static_cast<std::ptrdiff_t>(half), chain.end());
  }
  return out;
}

Chains rank_normalize(const Chains& chains) {
  std::vector<double> ranks = average_ranks(pooled(chains));
  const double count = static_cast<double>(ranks.size());
  for (double& r : ranks) r = normal_quantile((r - 0.375) / (count + 0.25));
  return reshaped(chains, ranks);
}

Chains fold(const Chains& chains) {
  std::vector<double> all = pooled(chains);
  if (all.empty()) return chains;
  const double median = linear_quantile(all, 0.5);
  for (double& value : all) value = std::abs(value - median);
  return reshaped(chains, all);
}

Chains quantile_indicator(const Chains& chains, double p) {
  std::vector<double> all = pooled(chains);
  if (all.empty()) return chains;
  const double q = linear_quantile(all, p);
  for (double& value : all) value = value <= q ? 1.0 : 0.0;
  return reshaped(chains, all);
}

}  // namespace credence
