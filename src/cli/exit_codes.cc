// Status -> exit code.
#include "cli/exit_codes.h"

namespace credence::cli {

int exit_code_for(const Status& status) {
  switch (status.code()) {
    case StatusCode::kOk: return kExitOk;
    case StatusCode::kInvalidInput:
    case StatusCode::kCorrupt: return kExitBadInput;
    case StatusCode::kInterrupted: return kExitInterrupted;
    case StatusCode::kIoError:
    case StatusCode::kDiverged:
    case StatusCode::kInternal: return kExitFailed;
  }
  return kExitFailed;
}

}  // namespace credence::cli
