// run_verdict: is a run done? A few plain checks, each with its numbers, that train,
// compare and diagnose print at the end of a run (docs/methods.md 10; thresholds below).
//
// A run passes or fails each check, or the check does not apply (an optimizer has no
// mixing to judge; a run file without labels cannot say whether predictions are
// constant). The checks:
//   drift        samplers: the potential U~ still moving after burn-in. Per chain, the
//                trace after burn-in is cut into halves and the difference of their
//                means is divided by its standard error, each half's variance over its
//                own ESS (the spectral comparison of "Evaluating the accuracy of
//                sampling-based approaches to the calculation of posterior moments",
//                Bayesian Statistics 4, 1992, with halves instead of 10% / 50%). Drifting
//                when |z| > kDriftZ and the shift exceeds kDriftShiftSd of the trace's
//                standard deviation (so long stationary traces are not flagged for a
//                negligible shift).
//   constant     every run: the ensemble-mean probability of each probe row's own label,
//                grouped by label; within each class with 2 or more probe rows, the
//                standard deviation of its log-odds across rows. Nearly constant when the
//                largest is below kConstantLogOddsSd and the class means sum to at most
//                1 + kConstantSumSlack (a network that predicts the same distribution pi
//                for every row gives each class exactly pi_k, summing to <= 1; one that
//                tells the classes apart gives more).
// Layers are numbered from 1 (the input layer's weights), as diagnose's precision table.
//   pinned       optimizers: the kept weights against the prior's scale. A layer whose
//                ||W_l||^2 (weights only: biases have a scale of their own) is below
//                kPinnedNormRatio times its prior expectation out*in*sigma_w^2 has been
//                pulled to zero by the prior: its root-mean-square weight is under a
//                tenth of the prior's standard deviation. Not applied with a learned
//                scale (collapsed reads that case).
//   separation   not a check of its own: pinned and collapsed fail only while the probe
//                predictions hardly tell the classes apart. Separation is the class means
//                of the own-label probability (see constant) summed, less 1, over the
//                number of labels among the probe rows less 1: 0 for a constant
//                prediction, 1 when every probe row gets its own label with certainty.
//                At or above kSmallWeightsSeparation the weights' size is no alarm: a relu
//                network keeps its function when one layer's weights shrink and the next
//                layer's grow, so a small layer alone says nothing about the predictions.
//                When the probe rows hold one class only, the own-label log-odds sd across
//                them (at least kSmallWeightsLogOddsSd) stands in for the separation.
//                Without probe labels the alarms stand on the weights alone.
//   mixing       samplers: the smallest bulk-ESS of the function-space summaries against
//                the target (kEssPerChainThreshold per chain, 400 for four chains), and
//                at the current rate (bulk-ESS per step after burn-in) about how many
//                more steps per chain reach it.
//   predictions  samplers, 2+ chains: do the chains predict alike? Worst R-hat of the
//                probe log-likelihood and of every probe row's probability (> 1.01 fails).
//   scale        samplers, 2+ chains: do the chains agree on parameter-scale summaries?
//                Worst R-hat of the layer squared norms. Reported apart from predictions:
//                chains can predict alike at different weight scales, and the reverse.
//   collapsed    optimizers with a learned prior scale (evidence updates, docs/prior.md):
//                a layer whose learned weight precision is at its cap (the fixed prior's,
//                which the updates may never exceed; within kCollapsedCapRatio) AND whose
//                ||W_l||^2 is below kCollapsedNormRatio of that prior's expectation: the
//                evidence still asks for a tighter prior while the weights are already
//                small, the collapse of docs/methods.md section 15 that the cap only
//                stops. The cap alone is no alarm: on the demo table adam's and rsgd's
//                hidden layers sit at it with weights at 0.25-1.4 of the expectation and
//                test NLL as good as the samplers'.
// Thresholds marked "ours" are common-practice choices of this project, not published.
//
// Usage:
//   Result<RunEvidence> e = gather_run_evidence(*reader, probe_labels);
//   RunVerdict v = judge_run(*e);
//   for (const std::string& line : verdict_lines(v)) ...;
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <vector>

#include "credence/diagnostics.h"
#include "credence/ensemble.h"
#include "credence/status.h"

namespace credence {

/// drift: |z| of the halves' means above this (about a two-sided 0.3% level per chain).
inline constexpr double kDriftZ = 3.0;
/// drift: ... and a shift of the mean of at least this many trace standard deviations (ours).
inline constexpr double kDriftShiftSd = 0.25;
/// drift: fewer trace rows than this per half leave the check unapplied (ours).
inline constexpr long kDriftMinRowsPerHalf = 8;
/// constant: log-odds standard deviation across rows of one class below this (ours).
inline constexpr double kConstantLogOddsSd = 0.1;
/// constant: ... and class means of the own-label probability summing to <= 1 + this (ours).
inline constexpr double kConstantSumSlack = 0.05;
/// pinned: ||W_l||^2 below this fraction of its prior expectation (ours).
inline constexpr double kPinnedNormRatio = 0.01;
/// pinned, collapsed: no alarm while the probe rows' separation is at least this (ours: the
/// constant check's slack. Measured at defaults on the runs the weights alone flagged,
/// none of them near-constant on its test rows: fair 0.15-0.16, anes96 0.77, breast
/// cancer 0.91 and its 100-row subsample 0.87; a constant prediction gives 0).
inline constexpr double kSmallWeightsSeparation = kConstantSumSlack;
/// pinned, collapsed, when every probe row holds one class (a rare class can miss a small
/// validation split): no alarm while their own-label log-odds sd is at least this (ours:
/// measured 1.3-3.7 for the optimizers on a 100-row table with 3% positives whose 10 probe
/// rows were all negative; a constant prediction gives 0).
inline constexpr double kSmallWeightsLogOddsSd = 0.5;
/// collapsed: a learned weight precision at least this fraction of its cap (ours: each
/// update moves log lambda half way to its clipped target, so a block whose target stays
/// above the cap passes 0.99 of it within seven updates and never reaches it exactly).
inline constexpr double kCollapsedCapRatio = 0.99;
/// collapsed: ... and ||W_l||^2 below this fraction of its prior expectation (ours: rms
/// weight under 0.32 of the prior's sd; measured 0.009-0.036 for adam on 100 rows whose
/// labels are coin flips, 0.25-1.4 on the demo table's capped layers).
inline constexpr double kCollapsedNormRatio = 0.1;

/// Everything the checks read, per run. Chains are in kept order (see diagnostics.h).
struct RunEvidence {
  std::string method;              // "sgld", "adam", ...
  bool sampler = true;             // false for the optimizers (sgd, momentum, rsgd, adam)
  int chains = 0;
  std::int64_t thin = 1;           // steps per kept sample after burn-in
  /// Per chain, the potential U~ of every traced step after burn-in, in step order.
  Chains potential;
  std::int64_t trace_every = 1;    // steps between trace rows
  Chains probe_log_lik;            // per chain, kept order
  std::vector<Chains> probe_prob;  // (R) per probe row: p(y_r | x_r, theta) per chain
  /// (R) each probe row's label; empty when unknown (the constant check then does not apply).
  std::vector<std::int32_t> probe_labels;
  std::vector<Chains> layer_sq_norm;  // (L) per layer: ||W_l||^2 + ||b_l||^2
  /// (L) mean over the kept samples of ||W_l||^2, weights only; empty when not read
  /// (gather_run_evidence reads it for optimizers only).
  std::vector<double> layer_weight_sq_norm;
  /// (L) E||W_l||^2 under the prior, out*in*sigma_w^2; empty when unknown (pinned then
  /// does not apply).
  std::vector<double> layer_prior_weight_sq_norm;
  /// (L) optimizers with a learned prior scale: per layer, the largest weight precision
  /// over the kept iterates (samples/prior_precision) and its cap, the fixed prior's
  /// precision; both empty otherwise (collapsed then does not apply).
  std::vector<double> layer_weight_precision;
  std::vector<double> layer_weight_precision_cap;
};

enum class CheckOutcome { kPassed, kFailed, kNotApplied };
/// "ok", "FAILED", "n/a".
std::string_view check_outcome_name(CheckOutcome outcome);

/// One check of a run: its outcome, its key number and the threshold it was held to.
struct VerdictCheck {
  std::string name;      // "drift", "constant", "pinned", "mixing", "predictions", "scale",
                         // "collapsed"
  CheckOutcome outcome = CheckOutcome::kNotApplied;
  double value = 0;      // the statistic (NaN when not applied)
  double threshold = 0;  // what it was compared with
  std::string message;   // one line in plain words, with the numbers
};

/// The short verdict of one run.
struct RunVerdict {
  std::vector<VerdictCheck> checks;  // always the seven above, in that order
  /// mixing: about this many more steps per chain reach the ESS target at the current
  /// rate; empty when the target is met or no rate is known.
  std::optional<std::int64_t> more_steps_per_chain;
  /// "passed every check" when no check failed, otherwise "NOT done: " and the failed checks' names.
  std::string headline;
  bool done() const;
  const VerdictCheck* find(std::string_view name) const;
};

/// Runs every check on `evidence`.
RunVerdict judge_run(const RunEvidence& evidence);

/// The verdict as text: the headline, then one line per failed check (all checks when
/// `all`), each "  name: message".
std::vector<std::string> verdict_lines(const RunVerdict& verdict, bool all = false);

/// Reads a run file's traces (after burn-in), kept-sample summaries and prior for
/// judge_run; `probe_labels` are the labels of header().probe_rows, or empty to take those
/// the run file keeps (none in files of earlier builds). Weight norms are read for optimizers only; the prior's
/// expectation is left empty when the run's net text does not resolve to fixed scales.
/// kInvalidInput when the run has no samples.
Result<RunEvidence> gather_run_evidence(const RunReader& run,
                                        std::span<const std::int32_t> probe_labels = {});

/// Opens `run_path` and judges it; `probe_labels` are the labels of its probe rows, or
/// empty when unknown. A run that cannot be judged logs a warning and gives nothing: the
/// verdict is information, never a failure.
std::optional<RunVerdict> judge_run_file(const std::string& run_path,
                                         std::span<const std::int32_t> probe_labels);

}  // namespace credence
