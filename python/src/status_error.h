// Turning a credence Status into the Python exception of its kind (credence.errors).
#pragma once

#include <stdexcept>
#include <string>

#include "credence/status.h"

namespace credence::python {

/// A failed Status in flight through pybind11; the translator registered by
/// register_status_errors() raises the matching class of credence.errors with the
/// Status's message unchanged.
class StatusError : public std::runtime_error {
 public:
  explicit StatusError(const Status& status)
      : std::runtime_error(status.message()), code_(status.code()) {}
  StatusCode code() const { return code_; }

 private:
  StatusCode code_;
};

/// Throws StatusError unless `status` is ok.
inline void raise_if_error(const Status& status) {
  if (!status.ok()) throw StatusError(status);
}

/// The value of `result`, or throws its Status.
template <typename T>
T take(Result<T> result) {
  if (!result.ok()) throw StatusError(result.status());
  return std::move(*result);
}

}  // namespace credence::python
