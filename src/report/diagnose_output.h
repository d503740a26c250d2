// The JSON document of `credence diagnose` (names: docs/diagnostics.md), shared by the
// command and the Python module's diagnose().
#pragma once

#include <optional>
#include <string>
#include <string_view>

#include <vector>

#include "credence/prior_summary.h"
#include "credence/run_diagnostics.h"
#include "credence/run_stein.h"
#include "credence/run_verdict.h"

namespace credence {

/// Why the summaries are in function space; the text report and the JSON quote it.
inline constexpr std::string_view kFunctionSpaceExplanation =
    "Weights are not compared across chains: hidden units can be permuted and sign-flipped "
    "without changing the network, so parameter-space R-hat means nothing; the summaries below "
    "are in function space.";

/// Every number of `diagnostics` as one JSON object ending in a newline, with the learned
/// prior's precisions under "prior_precision" (null when the prior was fixed) and the
/// end-of-run verdict under "run_verdict" when given, and the kernel Stein discrepancy
/// under "stein" (null when not given). `run_path` is quoted as given.
std::string diagnose_json(const std::string& run_path, const RunDiagnostics& diagnostics,
                          const std::vector<BlockPrecision>& prior,
                          const std::optional<RunVerdict>& verdict,
                          const std::optional<RunStein>& stein = std::nullopt);

}  // namespace credence
