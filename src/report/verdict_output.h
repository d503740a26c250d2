// End-of-run verdicts (judged by judge_run_file, run_verdict.h) as text under train's and
// compare's output, and as JSON in compare's summary and diagnose's document.
#pragma once

#include <string>
#include <string_view>

#include "util/json.h"
#include "credence/run_verdict.h"

namespace credence {


/// "verdict[ label]: headline" and a line per failed check, each ending in a newline.
std::string verdict_text(const RunVerdict& verdict, std::string_view label = {});

/// The verdict as a JSON object: done, headline, more_steps_per_chain (null when none)
/// and checks [{name, outcome ("ok", "FAILED", "n/a"), value, threshold, message}].
void write_verdict(JsonWriter& j, const RunVerdict& verdict);

}  // namespace credence
