// The HTML report of one run (`credence report`) or of several methods on one split
// (`credence compare`, `credence sweep`): loading what a page shows, and building it.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "credence/assess.h"
#include "credence/ensemble.h"
#include "credence/html_report.h"
#include "credence/run_diagnostics.h"
#include "credence/run_stein.h"
#include "credence/run_verdict.h"

namespace credence {

/// Everything a report shows of one run.
struct MethodRun {
  std::string label;                             // method name or the run's file name
  std::string run_path;
  RunHeader header;
  RunSummary summary;
  AssessJobResult assessment;                    // on the test rows (or all rows)
  std::optional<RunDiagnostics> diagnostics;     // samplers with kept samples
  std::vector<std::vector<TraceRecord>> traces;  // per chain
  double seconds = 0;                            // wall seconds of sampling, all chains
  std::int64_t gradient_evals = 0;               // all chains
  std::string budget_note;  // compare: why this method got less than asked (empty: nothing cut)
  std::optional<RunVerdict> verdict;             // end-of-run checks, when compare trained it
  std::optional<RunStein> stein;                 // kernel Stein discrepancy, when the caller
                                                 // computed it (run_stein_discrepancy)
};

/// Opens `run_path`, assesses it on `data_path` and diagnoses it. Errors as
/// run_assess_job; a run that cannot be diagnosed gets a note instead of failing.
Result<MethodRun> load_method_run(const std::string& run_path, const std::string& data_path,
                                  const std::string& label, const AssessJobOptions& options);

/// The side-by-side score table (text, CSV and HTML come from it): accuracy, NLL, Brier,
/// ECE, MCE, AUROC, wall time, gradients, bulk-ESS per second, max R-hat and the
/// mixing verdict.
TextTable score_table(const std::vector<MethodRun>& runs);

/// NLL, Brier and ECE with their bootstrap intervals, one row per run that has them.
TextTable interval_table(const std::vector<MethodRun>& runs);

/// The same numbers as JSON: one object per method (names as assess's JSON).
std::string score_json(const std::vector<MethodRun>& runs);

/// The whole page: data and split, scores, reliability, abstaining, doubt histograms,
/// training traces, mixing diagnostics, settings and provenance, cautions.
/// `extra` blocks (sweep plots) go after the scores when given.
std::string report_page(const std::string& title, const std::vector<MethodRun>& runs,
                        const std::string& data_path);

/// Best-effort "bulk-ESS per second" of a run: the smallest bulk-ESS over its
/// function-space summaries divided by its sampling seconds; NaN when unknown.
double bulk_ess_per_second(const MethodRun& run);

}  // namespace credence
