// End-of-run verdicts in the CLI (judged by judge_run_file, run_verdict.h): as
// text under train's and compare's output, and as JSON.
#pragma once

#include <cstdint>
#include <optional>
#include <span>
#include <string>
#include <string_view>

#include "cli/json.h"
#include "credence/run_verdict.h"

namespace credence::cli {

// Small-data warnings of the CLI (ours, common practice with no single source): bootstrap
// intervals on fewer rows than this are rough (the usual "about 30" for resampling).
inline constexpr std::size_t kFewBootstrapRows = 30;
// A temperature fitted on fewer validation rows than this may not carry over.
inline constexpr std::size_t kFewTemperatureRows = 50;

/// "verdict[ label]: headline" and a line per failed check, each ending in a newline.
std::string verdict_text(const RunVerdict& verdict, std::string_view label = {});

/// The verdict as a JSON object: done, headline, more_steps_per_chain (null when none)
/// and checks [{name, outcome ("ok", "FAILED", "n/a"), value, threshold, message}].
void write_verdict(JsonWriter& j, const RunVerdict& verdict);

}  // namespace credence::cli
