// End-of-run verdicts in the CLI: judged from a finished run file (run_verdict.h), as
// text under train's and compare's output, and as JSON.
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>

#include "util/json.h"
#include "credence/run_verdict.h"

namespace credence {

// Small-data warning of training (ours, common practice with no single source).
// A network with this many times more parameters than training rows leans on its prior.
inline constexpr std::int64_t kParametersPerRowWarning = 10;

/// Opens `run_path` and judges it; `probe_labels` are the labels of its probe rows, or
/// empty when unknown. A run that cannot be judged logs a warning and gives nothing: the
/// verdict is information, never a failure of the command.
std::optional<RunVerdict> judge_run_file(const std::string& run_path,
                                         std::span<const std::int32_t> probe_labels);

/// "verdict[ label]: headline" and a line per failed check, each ending in a newline.
std::string verdict_text(const RunVerdict& verdict, std::string_view label = {});

/// The verdict as a JSON object: done, headline, more_steps_per_chain (null when none)
/// and checks [{name, outcome ("ok", "FAILED", "n/a"), value, threshold, message}].
void write_verdict(JsonWriter& j, const RunVerdict& verdict);

}  // namespace credence
