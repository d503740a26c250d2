// The memory an ensemble's evaluation will need, checked against --max-memory before
// any work starts (assess, predict).
#pragma once

#include <cstdint>
#include <string>

#include "credence/ensemble.h"
#include "credence/status.h"

namespace credence {

/// Refuses (kInvalidInput, exit 2) evaluating `run`'s ensemble (`samples` kept samples,
/// 0 for all) plus a table of `table_path` read whole (empty: streamed) when the estimate
/// exceeds --max-memory `max_memory` (empty: the default share of physical memory).
Status check_ensemble_memory(const RunReader& run, const std::string& run_path,
                             std::int64_t samples, const std::string& table_path,
                             const std::string& max_memory);

}  // namespace credence
