// warn_once: remembers every warning text it has logged.
#include "util/warn_once.h"

#include <mutex>
#include <set>

#include "util/log.h"

namespace credence {

void warn_once(const std::string& message) {
  static std::mutex mutex;
  static std::set<std::string> seen;
  {
    std::lock_guard<std::mutex> lock(mutex);
    if (!seen.insert(message).second) return;
  }
  log().warn("{}", message);
}

}  // namespace credence
