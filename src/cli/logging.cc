// stderr logging for the command-line tool.
#include "cli/logging.h"

#include <spdlog/sinks/stdout_color_sinks.h>
#include <spdlog/spdlog.h>

#include "util/log.h"

namespace credence::cli {

Status setup_logging(const std::string& level, bool quiet) {
  auto parsed = spdlog::level::from_str(level);
  if (parsed == spdlog::level::off && level != "off") {
    return Status::invalid_input("--log-level '" + level +
                                 "' is not one of trace, debug, info, warn, error, off");
  }
  if (quiet && parsed < spdlog::level::warn) parsed = spdlog::level::warn;
  auto logger = spdlog::get(kLoggerName);
  if (!logger) logger = spdlog::stderr_color_mt(kLoggerName);
  logger->set_pattern("%^%l%$: %v");
  logger->set_level(parsed);
  return Status::ok_status();
}

}  // namespace credence::cli
