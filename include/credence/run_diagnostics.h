// run_diagnostics: R-hat and ESS of every tracked summary of a run file (docs/methods.md 10.3).
//
// Why function space: a network's parameters are not identifiable (hidden units can be
// permuted and, for odd activations, sign-flipped), so chains in equivalent modes disagree
// on every weight while predicting alike. Cross-chain R-hat is therefore computed on
// symmetry-invariant summaries stored per kept sample: the probe-set log-likelihood, the
// predictive probability of each probe row's label, each layer's squared norm. Random
// projections u_j^T theta are not invariant: their ESS is reported (within-chain
// mixing), their R-hat is shown but never enters the verdict. The potential trace U~
// (minibatch estimate for stochastic-gradient methods) after burn-in is diagnosed too,
// for information.
//
// Usage:
//   auto reader = credence::RunReader::open("run.h5");
//   credence::Result<credence::RunDiagnostics> d = credence::diagnose_run(**reader);
//   if (d.ok() && d->verdict == credence::MixingVerdict::kMixed) ...;
//
// RunDiagnostics is a plain struct for the CLI table, its JSON and the HTML report; every
// number is NaN (or an empty optional) where it does not apply.
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "credence/diagnostics.h"
#include "credence/ensemble.h"
#include "credence/status.h"

namespace credence {

/// Which tracked quantity a summary row belongs to.
enum class SummaryGroup {
  kProbeLogLik,   // sum over probe rows of log p(y | x, theta)       (METHODS 10.3, item 1)
  kProbeProb,     // p(y_r | x_r, theta) of probe row r               (item 2)
  kLayerSqNorm,   // ||theta_l||^2 of layer l                         (item 3)
  kProjection,    // u_j^T theta, within-chain only                   (item 4)
  kPotential,     // U~ from the per-chain trace, after burn-in
};
/// "probe_log_lik", "probe_prob", "layer_sq_norm", "projection", "potential".
std::string_view summary_group_name(SummaryGroup group);

/// Diagnostics of one scalar summary.
struct SummaryDiagnostics {
  SummaryGroup group = SummaryGroup::kProbeLogLik;
  int index = -1;               // probe row / layer / projection number; -1 for scalars
  std::string name;             // "probe_prob[3]", "layer_sq_norm[0]", "potential", ...
  /// Function-space summary (groups 1-3): its R-hat and ESS enter the verdict.
  bool in_verdict = false;
  ScalarDiagnostics stats;      // R-hat (bulk, folded, max), bulk- and tail-ESS, notes
  /// ess_bulk per second of sampling summed over chains, and per 1000 gradient
  /// evaluations summed over chains; NaN when the run file lacks the counts.
  double ess_per_second = 0;
  double ess_per_1000_grads = 0;
  bool flag_rhat = false;       // R-hat > kRhatThreshold (the 2021 paper's 1.01); never
                                // set for projections (not comparable across chains)
  bool flag_ess = false;        // bulk-ESS < RunDiagnostics::ess_threshold
  bool flag_ess_tail = false;   // tail-ESS < RunDiagnostics::ess_threshold
};

enum class MixingVerdict {
  kMixed,            // every function-space summary: R-hat <= 1.01, bulk- and tail-ESS
                     // >= 100 per chain
  kNotMixed,         // some function-space summary is flagged
  kSingleChain,      // one chain: ESS only, R-hat needs two or more chains
  kNotEnoughDraws,   // too few kept samples to compute anything
};
/// "mixed", "not_mixed", "single_chain", "not_enough_draws".
std::string_view mixing_verdict_name(MixingVerdict verdict);

/// Everything `credence diagnose` reports for a run.
struct RunDiagnostics {
  std::string method;                          // the run's sampler ("sgld", ...)
  int chains = 0;                              // C
  std::vector<std::int64_t> kept_per_chain;    // (C) committed samples per chain
  long draws_per_chain = 0;                    // N used: the shortest chain's count
  std::optional<std::int64_t> thin;            // keep-every-N setting, when stored
  std::optional<std::int64_t> burn_in;         // burn-in steps, when stored
  /// Flag thresholds: kRhatThreshold, and kEssPerChainThreshold x C for bulk/tail ESS.
  double rhat_threshold = kRhatThreshold;
  double ess_threshold = kEssPerChainThreshold;
  std::vector<SummaryDiagnostics> summaries;   // every summary, group by group
  /// Over function-space summaries (groups 1-3): worst R-hat (NaN when none or one
  /// chain), smallest bulk- and tail-ESS.
  double max_rhat = 0;
  double min_ess_bulk = 0;
  double min_ess_tail = 0;
  int flagged = 0;                             // function-space summaries flagged
  MixingVerdict verdict = MixingVerdict::kNotEnoughDraws;
  /// Relativistic methods (rsghmc, rhmc, rsgd): mean |v|/c per chain over the trace
  /// after burn-in (empty otherwise), and a one-line reading of it (docs/methods.md 5.2, 5.6).
  std::vector<double> speed_ratio_per_chain;
  std::string speed_note;
  /// hmc and rhmc: mean Metropolis acceptance probability per chain over the trace after
  /// burn-in (empty for methods without a Metropolis test; NaN for a chain with no row).
  std::vector<double> acceptance_per_chain;
  /// Caveats for the whole run: cut lengths, missing timings, thinning, few draws.
  std::vector<std::string> notes;
};

/// Diagnoses every tracked summary of a run file. Samples are grouped by chain and
/// ordered by their kept number; chains of different length are cut to the shortest.
/// kCorrupt when the run's datasets are unreadable; kInvalidInput when it has no
/// committed samples.
Result<RunDiagnostics> diagnose_run(const RunReader& run);

}  // namespace credence
