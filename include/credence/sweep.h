// sweep as a library call: every method of a comparison at every learning rate, on one
// split and one gradient budget; how robust is each method to its step size?
// (`credence sweep`; compare.h holds the request it shares with compare.)
#pragma once

#include <string>
#include <vector>

#include "credence/compare.h"
#include "credence/html_report.h"
#include "credence/plot.h"

namespace credence {

/// Learning rates from "0.001,0.01,0.1" or a log range "FROM:TO:COUNT" (COUNT values,
/// 2 to 50, spaced evenly in log). Messages name --step-sizes.
Result<std::vector<double>> parse_step_sizes(const std::string& text);

struct SweepRequest {
  /// The comparison every learning rate shares; its entries are filled by run_sweep_job.
  CompareRequest compare;
  std::vector<Method> methods;      // rsghmc is refused: its step cancels (method_flags)
  std::vector<double> learning_rates;
};

/// A whole sweep and what it leaves in compare.out_dir.
struct SweepSummary {
  std::vector<CompareOutcome> outcomes;
  TextTable table;   // one row per (method, learning rate)
  std::string text;  // sweep.txt
};

/// Trains every method at every learning rate (run_compare), then writes sweep.txt,
/// sweep.csv, sweep.json, nll.svg, ece.svg and report.html into compare.out_dir.
Result<SweepSummary> run_sweep_job(SweepRequest request);

/// The tuning map of rsghmc and rhmc: every cell of masses x (max moves or learning rates)
/// trained through the comparison's split and budget (tuning_map.h holds the grid and
/// measures). rsghmc's cells spend compare's minibatch steps; rhmc's cells spend the same
/// passes over the training rows (--epochs) as trajectories of L leapfrog steps, one
/// full-data gradient each, or rhmc's default budget in train when no --epochs is given.
struct TuningMapRequest {
  /// The comparison every cell shares; its entries are filled by run_tuning_map_job.
  CompareRequest compare;
  std::vector<Method> methods;  // rsghmc and/or rhmc; others are refused
  /// --batch was given: refused when only rhmc is mapped (its gradients read every row).
  bool batch_given = false;
  std::string masses;           // --masses: a list or FROM:TO:COUNT
  std::string max_moves;        // --max-moves; empty when step_sizes is the second axis
  std::string step_sizes;       // --step-sizes, only when given
};

/// Checks the grid (nothing is trained or written when it is refused), trains every cell
/// and writes tuning_map.csv, tuning_map.json, one heat map per measure and method
/// (<method>_<measure>.svg; rhmc adds its acceptance), sweep.txt and report.html into
/// compare.out_dir. With rhmc it also refuses (kInvalidInput): batch_given when rhmc is
/// the only method, compare.extend_seconds > 0, and --epochs under two trajectories.
Result<SweepSummary> run_tuning_map_job(TuningMapRequest request);

}  // namespace credence
