// Signal handlers that only set an atomic flag (async-signal-safe).
#include "cli/interrupt.h"

#include <csignal>

namespace credence::cli {
namespace {

std::atomic<bool> g_stop_requested{false};
static_assert(std::atomic<bool>::is_always_lock_free, "the flag is set from a signal handler");

extern "C" void on_stop_signal(int) { g_stop_requested.store(true, std::memory_order_relaxed); }

}  // namespace

const std::atomic<bool>& install_interrupt_handlers() {
  struct sigaction action {};
  action.sa_handler = on_stop_signal;
  sigemptyset(&action.sa_mask);
  action.sa_flags = static_cast<int>(SA_RESETHAND);  // glibc spells it as an unsigned
  sigaction(SIGINT, &action, nullptr);
  sigaction(SIGTERM, &action, nullptr);
  return g_stop_requested;
}

}  // namespace credence::cli
