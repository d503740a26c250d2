// The library's one logger, named "credence". Library code logs through it and
// never prints; the CLI (or an embedding program) decides where it goes.
#pragma once

#include <spdlog/spdlog.h>

namespace credence {

inline constexpr const char* kLoggerName = "credence";

/// The "credence" logger: the one registered by the caller if there is one,
/// otherwise a stderr logger created on first use. Safe from several threads.
spdlog::logger& log();

}  // namespace credence
