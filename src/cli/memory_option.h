// --max-memory for commands that load an ensemble or a whole table (header only); the
// check itself is the library's (predict/ensemble_memory.h).
#pragma once

#include <CLI/CLI.hpp>
#include <string>

#include "predict/ensemble_memory.h"

namespace credence::cli {

inline void add_max_memory_option(CLI::App& sub, std::string& value) {
  sub.add_option("--max-memory", value,
                 "Refuse jobs estimated to need more memory than this: 8G, 500M, or a share "
                 "of physical memory such as 80% (the default)");
}

}  // namespace credence::cli
