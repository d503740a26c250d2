// diagnostics: are the chains mixed? Split R-hat, rank-normalised (bulk) and folded R-hat,
// bulk-ESS and tail-ESS of one scalar summary (docs/methods.md 10.1-10.2).
//
// Source: "Rank-normalization, folding, and localization: an improved R-hat for assessing
// convergence of MCMC" (Bayesian Analysis, 2021), built on the potential scale reduction
// factor ("Inference from iterative simulation using multiple sequences", Statistical
// Science, 1992) and Geyer's initial monotone sequence estimator ("Practical Markov chain
// Monte Carlo", Statistical Science, 1992).
//
// Usage:
//   credence::Chains draws = {{...chain 0...}, {...chain 1...}};
//   credence::ScalarDiagnostics d = credence::diagnose_scalar(draws);
//   if (d.rhat && *d.rhat > credence::kRhatThreshold) ...;
//
// Conventions (credence choices, written down so a reimplementation agrees):
//   - Chains of different length are cut to the shortest common length (their first
//     draws are kept) and the result says so.
//   - Split: every chain is cut into two halves; an odd length drops the middle draw.
//   - Rank normalisation: average ranks for ties over all split draws pooled, then
//     z = Phi^{-1}((r - 3/8) / (S + 1/4)).
//   - Folding: |x - median| with the median of the pooled split draws (mean of the two
//     middle values for an even count).
//   - Tail quantiles q_0.05 and q_0.95: linear interpolation between order statistics
//     of the pooled split draws (numpy.quantile's default).
//   - Guards: NaN for draws that are all equal or not finite; +inf R-hat when every
//     split chain is constant but they differ; ESS capped at S log10(S).
// The module depends on nothing else in credence; it neither logs nor prints.
#pragma once

#include <optional>
#include <span>
#include <string>
#include <vector>

namespace credence {

/// C chains of draws of one scalar, one vector per chain, in draw order.
using Chains = std::vector<std::vector<double>>;

/// R-hat above this means the chains disagree: the 2021 paper's recommendation
/// (use the draws only when R-hat < 1.01).
inline constexpr double kRhatThreshold = 1.01;
/// Bulk- and tail-ESS below this many per chain are too few: the 2021 paper asks for
/// about 100 per chain (400 for four chains), docs/methods.md 10.2.
inline constexpr double kEssPerChainThreshold = 100;
/// Fewer draws per split chain than this make R-hat and ESS unstable (docs/methods.md 10,
/// failure modes): a warning, not an error.
inline constexpr long kMinDrawsPerSplitChain = 50;

/// Biased autocovariance of `x` by FFT (centre, zero-pad to the next power of two
/// >= 2n, FFT, squared modulus, inverse FFT, divide by n). Returns lags 0..n-1.
/// REQUIRES: x non-empty.
std::vector<double> autocovariance(std::span<const double> x);
/// autocovariance(x) / autocovariance(x)[0]; NaN everywhere for a constant x.
std::vector<double> autocorrelation(std::span<const double> x);

/// Chains cut to their shortest common length.
Chains common_length(const Chains& chains);
/// Each chain split into two halves (odd length: middle draw dropped).
/// REQUIRES: chains of equal length >= 2.
Chains split_chains(const Chains& chains);
/// Pooled average ranks mapped through Phi^{-1}((r - 3/8) / (S + 1/4)), same shape.
Chains rank_normalize(const Chains& chains);
/// |x - median| with the median of all draws pooled, same shape.
Chains fold(const Chains& chains);
/// 1 where x <= the pooled `p`-quantile, else 0 (the tail-ESS indicator).
Chains quantile_indicator(const Chains& chains, double p);

/// Potential scale reduction of the chains as given (no splitting, docs/methods.md 10.1).
/// Two or more chains of equal length >= 2, finite; NaN otherwise.
double rhat_of(const Chains& chains);
/// ESS of the chains as given (no splitting): FFT autocorrelations combined across
/// chains, Geyer's initial monotone sequence, capped at S log10(S) (docs/methods.md 10.2).
/// One chain is allowed (no between-chain term); fewer than 4 draws per chain give NaN.
double ess_of(const Chains& chains);

/// Split R-hat (classic, on the raw values), bulk and folded R-hat.
double split_rhat(const Chains& chains);
double bulk_rhat(const Chains& chains);
double folded_rhat(const Chains& chains);
/// ESS of the rank-normalised split chains.
double bulk_ess(const Chains& chains);
/// min(ESS of [x <= q_0.05], ESS of [x <= q_0.95]) on the split chains.
double tail_ess(const Chains& chains);

/// Everything diagnose reports for one scalar summary.
struct ScalarDiagnostics {
  int chains = 0;                     // C, chains given
  long draws_per_chain = 0;           // N used per chain (the shortest common length)
  bool lengths_differed = false;      // chains were cut to the shortest length
  long draws_per_split_chain = 0;     // floor(N / 2)
  /// R-hat values; empty with one chain (R-hat needs two or more chains).
  std::optional<double> rhat;         // max(bulk, folded): the one to judge by
  std::optional<double> rhat_bulk;
  std::optional<double> rhat_folded;
  std::optional<double> rhat_split;   // classic split R-hat on the raw values
  double ess_bulk = 0;                // NaN when undefined
  double ess_tail = 0;
  /// Plain-language remarks: cut lengths, too few draws, one chain, constant draws.
  std::vector<std::string> notes;
};

/// All of the above for C chains (C >= 1; one chain is split into two halves for ESS
/// and gets no R-hat). Fewer than 4 draws per chain give NaN with a note.
ScalarDiagnostics diagnose_scalar(const Chains& chains);

}  // namespace credence
