// One run as the reports and comparisons show it: opened, assessed on its held-out rows
// and diagnosed (`credence report`, `compare`, `sweep`, and the Python module's compare).
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "credence/assess.h"
#include "credence/ensemble.h"
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

}  // namespace credence
