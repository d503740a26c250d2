// TempOutput: temporary file + rename, written incrementally.
#include "predict/temp_output.h"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <utility>

#include "util/atomic_file.h"

namespace credence::predict {

TempOutput::TempOutput(std::string path, std::string temp, std::FILE* file)
    : path_(std::move(path)), temp_(std::move(temp)), file_(file) {}

TempOutput::TempOutput(TempOutput&& other) noexcept
    : path_(std::move(other.path_)),
      temp_(std::move(other.temp_)),
      file_(std::exchange(other.file_, nullptr)),
      committed_(std::exchange(other.committed_, true)) {}

TempOutput::~TempOutput() { discard(); }

void TempOutput::discard() {
  if (committed_) return;
  if (file_ != nullptr) std::fclose(file_);
  file_ = nullptr;
  if (!temp_.empty()) std::remove(temp_.c_str());
  committed_ = true;
}

Result<TempOutput> TempOutput::create(const std::string& path) {
  if (path == kStandardOutput) {
    // Held in an unnamed temporary file until commit, so a refusal part way through the
    // rows leaves standard output empty, as it leaves no file.
    std::FILE* file = std::tmpfile();
    if (file == nullptr) {
      return Status::io_error(fmt::format(
          "standard output: cannot create a temporary file to hold the predictions: {}",
          std::strerror(errno)));
    }
    return TempOutput(path, std::string(), file);
  }
  remove_stale_temporaries(path, "tmp");  // left by a predict that was killed
  std::string temp = temporary_path(path, "tmp");
  std::FILE* file = std::fopen(temp.c_str(), "wb");
  if (file == nullptr) {
    return Status::io_error(
        fmt::format("{}: cannot create the file: {}; check that the folder "
                    "exists and is writable",
                    path, std::strerror(errno)));
  }
  return TempOutput(path, std::move(temp), file);
}

Status TempOutput::write(std::string_view bytes) {
  if (std::fwrite(bytes.data(), 1, bytes.size(), file_) != bytes.size()) {
    return Status::io_error(
        fmt::format("{}: writing the file failed: {}", path_, std::strerror(errno)));
  }
  return Status::ok_status();
}

Status TempOutput::commit() {
  if (temp_.empty()) return copy_to_standard_output();
  const bool closed = std::fclose(file_) == 0;
  file_ = nullptr;
  if (!closed || std::rename(temp_.c_str(), path_.c_str()) != 0) {
    const int error = errno;
    discard();
    return Status::io_error(
        fmt::format("{}: writing the file failed: {}", path_, std::strerror(error)));
  }
  committed_ = true;
  return Status::ok_status();
}

Status TempOutput::copy_to_standard_output() {
  std::rewind(file_);
  char buffer[1 << 16];
  bool ok = true;
  for (std::size_t n; ok && (n = std::fread(buffer, 1, sizeof buffer, file_)) > 0;) {
    ok = std::fwrite(buffer, 1, n, stdout) == n;
  }
  ok = ok && !std::ferror(file_) && std::fflush(stdout) == 0;
  const int error = errno;
  discard();
  if (!ok) {
    return Status::io_error(
        fmt::format("standard output: writing the predictions failed: {}", std::strerror(error)));
  }
  return Status::ok_status();
}

}  // namespace credence::predict
