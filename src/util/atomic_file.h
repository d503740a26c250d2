// Whole-file writes that never leave half a file behind.
#pragma once

#include <string>
#include <string_view>

#include "credence/status.h"

namespace credence {

/// The temporary name this process builds `path` under: "<path>.<kind>-<pid>".
std::string temporary_path(const std::string& path, std::string_view kind);

/// Removes temporaries of `path` ("<path>.<kind>-<pid>") whose process no longer runs:
/// what a kill -9 left behind. A live process's temporary is never touched. Best effort:
/// errors are ignored. Returns how many were removed.
int remove_stale_temporaries(const std::string& path, std::string_view kind);

/// Writes `bytes` to a temporary file beside `path`, then renames it over `path`, so a
/// reader never sees half a file and a failure leaves nothing behind.
/// kIoError names the path and the operating system's reason.
Status write_file_atomically(const std::string& path, std::string_view bytes);

}  // namespace credence
