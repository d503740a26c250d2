// Status formatting.
#include "credence/status.h"

#include <fmt/format.h>

namespace credence {

std::string_view status_code_name(StatusCode code) {
  switch (code) {
    case StatusCode::kOk: return "ok";
    case StatusCode::kInvalidInput: return "invalid input";
    case StatusCode::kCorrupt: return "corrupt file";
    case StatusCode::kIoError: return "I/O error";
    case StatusCode::kDiverged: return "diverged";
    case StatusCode::kInterrupted: return "interrupted";
    case StatusCode::kInternal: return "internal error";
  }
  return "unknown";
}

std::string Status::to_string() const {
  if (ok()) return "ok";
  return fmt::format("{}: {}", status_code_name(code_), message_);
}

Status Status::with_context(std::string_view context) const {
  if (ok()) return *this;
  return {code_, fmt::format("{}: {}", context, message_)};
}

}  // namespace credence
