// Where log lines go: stderr, at the level the user asked for.
#pragma once

#include <string>

#include "credence/status.h"

namespace credence::cli {

/// Registers the "credence" logger on stderr. `level` is one of trace, debug,
/// info, warn, error, off; `quiet` lowers it to warnings and errors only.
Status setup_logging(const std::string& level, bool quiet);

}  // namespace credence::cli
