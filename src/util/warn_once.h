// warn_once: a warning logged once per process, however often its cause is met (compare
// and sweep load one table for every method they train).
#pragma once

#include <string>

namespace credence {

/// Logs `message` as a warning through credence::log() the first time this process sees
/// exactly this text; later calls with the same text do nothing. Thread-safe.
void warn_once(const std::string& message);

}  // namespace credence
