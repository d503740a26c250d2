// Lazily created default for the library's named logger.
#include "util/log.h"

#include <spdlog/sinks/stdout_color_sinks.h>

namespace credence {

spdlog::logger& log() {
  static std::shared_ptr<spdlog::logger> fallback;
  if (auto registered = spdlog::get(kLoggerName)) return *registered;
  static std::once_flag once;
  std::call_once(once, [] {
    fallback = spdlog::get(kLoggerName);
    if (!fallback) fallback = spdlog::stderr_color_mt(kLoggerName);
  });
  return *fallback;
}

}  // namespace credence
