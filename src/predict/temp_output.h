// An output file written piece by piece under a temporary name and renamed at the end.
#pragma once

#include <cstdio>
#include <string>
#include <string_view>

#include "credence/status.h"

namespace credence::predict {

/// `path` that means standard output: the bytes wait in an unnamed temporary file and
/// reach standard output only in commit().
inline constexpr std::string_view kStandardOutput = "-";

/// Writes to `<path>.tmp-<pid>` and renames it over `path` in commit() (for "-": to an
/// unnamed temporary file, copied to standard output in commit()). Destroying an
/// uncommitted TempOutput removes the temporary file, so a failure leaves nothing.
class TempOutput {
 public:
  /// kIoError naming `path` when the temporary file cannot be created.
  static Result<TempOutput> create(const std::string& path);
  TempOutput(TempOutput&& other) noexcept;
  TempOutput& operator=(TempOutput&&) = delete;
  TempOutput(const TempOutput&) = delete;
  TempOutput& operator=(const TempOutput&) = delete;
  ~TempOutput();

  /// Appends bytes; kIoError naming the path on failure.
  Status write(std::string_view bytes);
  /// Flushes, closes and renames the file into place.
  Status commit();

 private:
  TempOutput(std::string path, std::string temp, std::FILE* file);
  void discard();
  Status copy_to_standard_output();

  std::string path_;
  std::string temp_;
  std::FILE* file_ = nullptr;
  bool committed_ = false;
};

}  // namespace credence::predict
