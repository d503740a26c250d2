// diagnose's kernel Stein discrepancy (run_stein.h) as text, JSON and an HTML table.
#pragma once

#include <string>

#include "credence/html_report.h"
#include "credence/run_stein.h"

namespace credence {

/// A few lines: the pooled KSD and each chain's, the draws used, the target, the cost;
/// or the note saying why it was skipped. Ends in a newline.
std::string stein_text(const RunStein& stein);

/// The "stein" object of diagnose's JSON (names: docs/diagnostics.md).
std::string stein_json(const RunStein& stein);

/// One row per chain and one for the pooled draws: chain, draws used, KSD, V and U.
TextTable stein_table(const RunStein& stein);

/// The report's part for one run: `label`'s table (stein_table) with the target and cost
/// in its caption, or a note saying why it was skipped.
void add_stein_html(HtmlReport& page, const std::string& label, const RunStein& stein);

/// How to read the discrepancy, quoted by the text output and the report.
inline constexpr std::string_view kSteinReading =
    "Kernel Stein discrepancy (IMQ kernel, c = 1, beta = -1/2) of the kept draws against the "
    "full-data posterior: smaller is closer. Compare it only between runs of the same net on "
    "the same training rows; it is measured on the weights, so chains in different but "
    "equivalent modes (permuted hidden units) each look fine, and the pooled value hardly "
    "sees how the draws are shared between such modes.";

}  // namespace credence
