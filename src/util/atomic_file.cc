// Temporary file + rename.
#include "util/atomic_file.h"

#include <fmt/format.h>
#include <unistd.h>

#include <signal.h>

#include <cerrno>
#include <charconv>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <system_error>

namespace credence {

std::string temporary_path(const std::string& path, std::string_view kind) {
  return fmt::format("{}.{}-{}", path, kind, ::getpid());
}

int remove_stale_temporaries(const std::string& path, std::string_view kind) {
  namespace fs = std::filesystem;
  const fs::path target(path);
  const std::string prefix = target.filename().string() + "." + std::string(kind) + "-";
  fs::path folder = target.parent_path();
  if (folder.empty()) folder = ".";
  std::error_code error;
  int removed = 0;
  for (fs::directory_iterator it(folder, error), end; !error && it != end; it.increment(error)) {
    const std::string name = it->path().filename().string();
    if (name.size() <= prefix.size() || name.compare(0, prefix.size(), prefix) != 0) continue;
    long pid = 0;
    const char* first = name.data() + prefix.size();
    const char* last = name.data() + name.size();
    // A temporary's own temporary ("<path>.partial-7.partial-7", as merge builds its output
    // through the run writer) belongs to the same process.
    if (auto [end_of_number, ec] = std::from_chars(first, last, pid);
        ec != std::errc() || (end_of_number != last && *end_of_number != '.') || pid <= 0) {
      continue;  // not one of ours
    }
    // ESRCH: no such process. EPERM means it exists under another user: leave it.
    if (::kill(static_cast<pid_t>(pid), 0) == 0 || errno != ESRCH) continue;
    std::error_code ignored;
    if (fs::remove(it->path(), ignored)) ++removed;
  }
  return removed;
}

Status write_file_atomically(const std::string& path, std::string_view bytes) {
  remove_stale_temporaries(path, "tmp");
  const std::string temp = temporary_path(path, "tmp");
  std::FILE* file = std::fopen(temp.c_str(), "wb");
  if (file == nullptr) {
    return Status::io_error(fmt::format("{}: cannot create the file: {}; check that the folder "
                                        "exists and is writable", path, std::strerror(errno)));
  }
  const bool written = std::fwrite(bytes.data(), 1, bytes.size(), file) == bytes.size();
  const bool closed = std::fclose(file) == 0;
  if (!written || !closed || std::rename(temp.c_str(), path.c_str()) != 0) {
    const int error = errno;
    std::remove(temp.c_str());
    return Status::io_error(
        fmt::format("{}: writing the file failed: {}", path, std::strerror(error)));
  }
  return Status::ok_status();
}

}  // namespace credence
