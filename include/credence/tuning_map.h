// tuning_map: the relativistic samplers' grid (rsghmc, rhmc) of rest mass x per-step move
// bound (or x learning rate), one training per cell on one split and budget, and what each
// cell measured: bulk-ESS of the probe log-likelihood per 1000 gradient evaluations and per
// 1000 passes over the training rows, mean |v|/c, test NLL, diverged chains and (rhmc)
// the Metropolis acceptance. The map answers "which mass and speed of light?" by
// measurement on the user's table instead of by trial and error.
//
// Units: an rsghmc gradient reads one minibatch, an rhmc gradient every training row (one
// pass), so ESS per 1000 gradients compares cells of one method only; ESS per 1000 passes
// compares rsghmc's cells with rhmc's.
//
// The grid is parsed and checked here (TuningGrid); `credence sweep` trains the cells and
// fills TuningCell from each run's diagnostics (run_diagnostics.h) and assessment; the
// chosen cell and the CSV and JSON of the map come from the pure functions below, which
// are safe from several threads at once.
//
//   Result<TuningGrid> grid = parse_tuning_grid("0.1,1,10", "0.003,0.01", "", {Method::kRhmc});
//   ... cells[i].measures = tuning_measures(diagnostics, test_nll, chain_status, 1);
//   std::optional<std::size_t> best = choose_tuning_cell(cells);
//
// Cautions (README, "Reading a tuning map"): a map is measured on one table, one split
// and one seed; the chosen cell is a starting point to re-check on your own data.
#pragma once

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "credence/ensemble.h"
#include "credence/run_diagnostics.h"
#include "credence/samplers.h"
#include "credence/status.h"

namespace credence {

/// What the second axis of the map varies (the first is always the rest mass m).
enum class TuningAxis {
  kMaxMove,   // --max-moves: the per-step move bound that sets c = max_move / eps
  kStepSize,  // --step-sizes: the learning rate (mean-loss units), c from the default max move
};
/// "max_move" or "learning_rate": the CSV and JSON column of the second axis.
std::string_view tuning_axis_name(TuningAxis axis);

/// The cells to train: every method x every mass x every value of the second axis.
struct TuningGrid {
  std::vector<Method> methods;  // rsghmc and/or rhmc, in the order given
  std::vector<double> masses;   // rest masses m, > 0, in the order given
  TuningAxis axis = TuningAxis::kMaxMove;
  std::vector<double> values;   // max moves or learning rates, > 0, in the order given
};

/// Parses "0.1,1,10" (or a log range "FROM:TO:COUNT", COUNT values spaced evenly in log,
/// 2 <= COUNT <= 50) into positive finite numbers. kInvalidInput names `flag` and says
/// what to give. sweep's --step-sizes, --masses and --max-moves all read this way.
Result<std::vector<double>> parse_positive_values(const std::string& text, std::string_view flag);

/// The grid of `masses_text` x (`max_moves_text`, or else `step_sizes_text`) for
/// `methods`. kInvalidInput, one message, when a method is neither rsghmc nor rhmc (rsgd
/// is an optimizer with nothing to sample; the others read no mass), when both second
/// axes are given, when --masses is missing,
/// when a list is malformed, or when two values of a list agree to 4 significant digits
/// (which name the cells and their run files).
Result<TuningGrid> parse_tuning_grid(const std::string& masses_text,
                                     const std::string& max_moves_text,
                                     const std::string& step_sizes_text,
                                     const std::vector<Method>& methods);

/// What one cell measured; NaN where it does not apply or was not recorded.
struct TuningMeasures {
  /// Bulk-ESS of the probe log-likelihood over all chains (docs/methods.md 10.2) per 1000
  /// gradient evaluations summed over chains, burn-in included (the whole cost of the
  /// cell). The same number `credence diagnose` reports for probe_log_lik.
  double ess_per_1000_grads = 0;
  double ess_bulk = 0;         // the bulk-ESS itself
  double gradient_evals = 0;   // summed over chains
  /// Mean |v|/c over chains of each chain's mean after burn-in, as the sampler recorded it
  /// in its trace (docs/methods.md 5.2, 5.6); NaN where no trace row recorded it.
  double speed_ratio = 0;
  /// The gradients' cost in passes over the training rows, summed over chains:
  /// gradient_evals / gradients_per_pass (ceil(N / batch) for rsghmc, 1 for rhmc, whose
  /// every gradient reads all N rows). NaN when the cost is not known.
  double passes = 0;
  /// 1000 * ess_bulk / passes: the rate that compares rsghmc's cells with rhmc's.
  double ess_per_1000_passes = 0;
  /// rhmc: the Metropolis acceptance probability after burn-in, mean over chains of each
  /// chain's mean; NaN for rsghmc, which has no Metropolis test.
  double acceptance = 0;
  /// rhmc: trajectories whose energy error passed 1000 T or turned non-finite, summed over
  /// chains, burn-in included (each was rejected, not fatal: docs/methods.md section 6);
  /// NaN for rsghmc.
  /// Read from the chains' last states by the map, not by tuning_measures.
  double divergent_trajectories = 0;
  double test_nll = 0;         // mean NLL of the ensemble on the test rows (nats)
  int diverged_chains = 0;     // chains that stopped on a non-finite potential
  int chains = 0;
};

/// The measures of a trained cell from its diagnostics (empty: no kept samples), its test
/// NLL, its chains' end states and how many of its gradient evaluations make one pass over
/// the training rows (gradients_per_pass above; 0: unknown, passes are NaN).
TuningMeasures tuning_measures(const std::optional<RunDiagnostics>& diagnostics, double test_nll,
                               const std::vector<ChainStatus>& chain_status,
                               double gradients_per_pass = 0);

/// One cell of the map.
struct TuningCell {
  Method method = Method::kRsghmc;
  double mass = 0;
  double value = 0;           // the second axis' value
  bool trained = false;       // false: the training failed or every chain diverged
  TuningMeasures measures;    // NaN measures when not trained (diverged_chains = chains)
  std::string run_file;       // the cell's run file name (in the output folder)
};

/// How much worse than the best cell's test NLL a cell may predict and still be chosen:
/// 0.01 nats, the tolerance the project's default checks use for "reaches the same NLL"
/// (a credence choice, common practice, no outside source).
inline constexpr double kTuningNllSlack = 0.01;

/// The chosen cell of `method`: among trained cells with no diverged chain, a finite ESS
/// rate and a test NLL within kTuningNllSlack of the lowest such NLL, the highest ESS per
/// 1000 gradients; ties go to the lower test NLL, then to the earlier cell. Empty when no
/// cell qualifies. (A fast-mixing cell that predicts clearly worse has not settled.)
std::optional<std::size_t> choose_tuning_cell(const std::vector<TuningCell>& cells, Method method);

/// The map as CSV (header line, one row per cell, numbers with 6 significant digits,
/// empty where NaN) and as JSON (an object with "axis", "choice_rule", "cautions" and
/// "cells", numbers in full precision, null where NaN). Columns, in order: method, mass,
/// <axis name>, trained, chosen, ess_bulk, gradient_evals, ess_per_1000_grads,
/// speed_ratio, test_nll, diverged_chains, chains, run_file, passes, ess_per_1000_passes,
/// acceptance, divergent_trajectories (the last four added after run_file, so older
/// readers keep their columns).
std::string tuning_map_csv(const std::vector<TuningCell>& cells, TuningAxis axis);
std::string tuning_map_json(const std::vector<TuningCell>& cells, TuningAxis axis);

/// The rule choose_tuning_cell applies, in words, for reports.
std::string_view tuning_choice_rule();

}  // namespace credence
