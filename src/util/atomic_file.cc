// Temporary file + rename.
#include "util/atomic_file.h"

#include <fmt/format.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>

namespace credence {

Status write_file_atomically(const std::string& path, std::string_view bytes) {
  const std::string temp = fmt::format("{}.tmp-{}", path, ::getpid());
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
