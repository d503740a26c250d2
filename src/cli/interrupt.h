// Ctrl-C and SIGTERM as a request to stop: the step in progress finishes, the run
// file is flushed and marked interrupted, and the command exits 130.
#pragma once

#include <atomic>

namespace credence::cli {

/// Installs handlers for SIGINT and SIGTERM that set the returned flag. The handlers
/// reset themselves, so a second signal ends the process at once (the run file stays
/// openable: the writer's committed rows are already durable).
const std::atomic<bool>& install_interrupt_handlers();

}  // namespace credence::cli
