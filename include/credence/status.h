// Status and Result<T>: how every credence call reports an expected failure.
//
// Bad input, I/O errors, corrupt files, divergence and interruption are values,
// never exceptions: a call returns a Status (or a Result<T> holding either a value
// or a failed Status) and each level passes it up with an early return. Broken
// internal invariants are asserts. Both types are plain values and safe to move
// between threads; one object is not meant to be shared for writing.
//
//   Result<Table> table = read_csv(path, options);
//   if (!table.ok()) return table.status();
//   use(*table);
#pragma once

#include <cassert>
#include <string>
#include <string_view>
#include <utility>
#include <variant>

namespace credence {

/// What kind of failure a Status carries. The CLI maps each to an exit code
/// (src/cli/exit_codes.cc): kInvalidInput and kCorrupt give 2, kIoError and
/// kDiverged give 1, kInterrupted gives 130.
enum class StatusCode {
  kOk = 0,
  kInvalidInput,  // the user's data, options or net file are wrong
  kCorrupt,       // a file credence wrote is damaged or of another version
  kIoError,       // the operating system refused a read or a write
  kDiverged,      // a chain produced NaN/Inf or an exploding potential
  kInterrupted,   // stopped by a signal; what was written is still valid
  kInternal,      // a bug; please report it
};

/// Human-readable name of a code ("invalid input", "I/O error", ...).
std::string_view status_code_name(StatusCode code);

/// Success, or a failure code with one message that says what failed, where,
/// and what to do ("data.csv:12:3: 'abc' is not a number in column 'age'; ...").
class [[nodiscard]] Status {
 public:
  Status() = default;
  Status(StatusCode code, std::string message) : code_(code), message_(std::move(message)) {}

  static Status ok_status() { return {}; }
  static Status invalid_input(std::string message) {
    return {StatusCode::kInvalidInput, std::move(message)};
  }
  static Status corrupt(std::string message) { return {StatusCode::kCorrupt, std::move(message)}; }
  static Status io_error(std::string message) { return {StatusCode::kIoError, std::move(message)}; }
  static Status diverged(std::string message) {
    return {StatusCode::kDiverged, std::move(message)};
  }
  static Status interrupted(std::string message) {
    return {StatusCode::kInterrupted, std::move(message)};
  }
  static Status internal(std::string message) {
    return {StatusCode::kInternal, std::move(message)};
  }

  bool ok() const { return code_ == StatusCode::kOk; }
  StatusCode code() const { return code_; }
  const std::string& message() const { return message_; }

  /// "invalid input: <message>", or "ok".
  std::string to_string() const;

  /// A copy whose message starts with `context` ("reading run file x.h5: ...").
  Status with_context(std::string_view context) const;

 private:
  StatusCode code_ = StatusCode::kOk;
  std::string message_;
};

/// Either a T or a failed Status. Access the value only after checking ok().
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : data_(std::move(value)) {}  // NOLINT: implicit by design
  Result(Status status) : data_(std::move(status)) {  // NOLINT: implicit by design
    // REQUIRES: a Result built from a Status carries a failure.
    assert(!std::get<Status>(data_).ok());
  }

  bool ok() const { return std::holds_alternative<T>(data_); }
  /// The failure, or an ok Status when a value is held.
  Status status() const { return ok() ? Status() : std::get<Status>(data_); }

  T& value() & {
    assert(ok());
    return std::get<T>(data_);
  }
  const T& value() const& {
    assert(ok());
    return std::get<T>(data_);
  }
  T&& value() && {
    assert(ok());
    return std::get<T>(std::move(data_));
  }
  T& operator*() & { return value(); }
  const T& operator*() const& { return value(); }
  T&& operator*() && { return std::move(*this).value(); }
  T* operator->() { return &value(); }
  const T* operator->() const { return &value(); }

 private:
  std::variant<T, Status> data_;
};

}  // namespace credence

/// Returns early from the enclosing function when `expr` (a Status) failed.
#define CREDENCE_RETURN_IF_ERROR(expr)          \
  do {                                          \
    ::credence::Status credence_status_ = (expr); \
    if (!credence_status_.ok()) return credence_status_; \
  } while (0)
