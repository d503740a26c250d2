// The `unseen=` keyword: "error" or "ignore", as the CLI's --unseen.
#pragma once

#include <string>

#include "credence/data.h"
#include "status_error.h"

namespace credence::python {

inline UnseenPolicy parse_unseen(const std::string& text) {
  if (text == "error") return UnseenPolicy::kError;
  if (text == "ignore") return UnseenPolicy::kIgnore;
  throw StatusError(Status::invalid_input("unseen='" + text + "' is not one of: error, ignore"));
}

}  // namespace credence::python
