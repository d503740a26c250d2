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

}  // namespace credence
