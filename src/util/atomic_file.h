// Whole-file writes that never leave half a file behind.
#pragma once

#include <string>
#include <string_view>

#include "credence/status.h"

namespace credence {

/// Writes `bytes` to a temporary file beside `path`, then renames it over `path`, so a
/// reader never sees half a file and a failure leaves nothing behind.
/// kIoError names the path and the operating system's reason.
Status write_file_atomically(const std::string& path, std::string_view bytes);

}  // namespace credence
