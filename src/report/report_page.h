// The HTML report of one run (`credence report`) or of several methods on one split
// (`credence compare`, `credence sweep`): loading what a page shows, and building it.
#pragma once

#include <optional>
#include <string>
#include <vector>

#include "credence/html_report.h"
#include "credence/method_run.h"

namespace credence {

/// The side-by-side score table (text, CSV and HTML come from it): accuracy, NLL, Brier,
/// ECE, MCE, AUROC, wall time, gradients, bulk-ESS per second, max R-hat, the kernel
/// Stein discrepancy (unless with_ksd is false: the HTML page shows it in its mixing
/// table) and the mixing verdict.
TextTable score_table(const std::vector<MethodRun>& runs, bool with_ksd = true);

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
