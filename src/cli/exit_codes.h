// The one place that turns a Status into a process exit code (DESIGN.md section 4).
#pragma once

#include "credence/status.h"

namespace credence::cli {

inline constexpr int kExitOk = 0;
inline constexpr int kExitFailed = 1;       // divergence, I/O
inline constexpr int kExitBadInput = 2;     // bad usage or bad input
inline constexpr int kExitInterrupted = 130;

/// 0 for ok; 2 for kInvalidInput and kCorrupt; 1 for kIoError, kDiverged and
/// kInternal; 130 for kInterrupted.
int exit_code_for(const Status& status);

}  // namespace credence::cli
