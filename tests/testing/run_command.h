// Runs the credence executable from a test and captures what it printed.
#pragma once

#include <array>
#include <cstdio>
#include <string>
#include <sys/wait.h>

namespace credence::testing {

struct CommandOutput {
  int exit_code = -1;
  std::string output;  // stdout and stderr together
};

/// Runs `CREDENCE_BIN args` through the shell; `args` must be quoted by the caller.
inline CommandOutput run_credence(const std::string& args) {
  CommandOutput result;
  std::string command = std::string("'") + CREDENCE_BIN + "' " + args + " 2>&1";
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) return result;
  std::array<char, 4096> buffer;
  size_t n = 0;
  while ((n = fread(buffer.data(), 1, buffer.size(), pipe)) > 0) result.output.append(buffer.data(), n);
  int status = pclose(pipe);
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return result;
}

}  // namespace credence::testing
