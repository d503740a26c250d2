// A whole file's bytes as a string, for tests that compare outputs.
#pragma once

#include <fstream>
#include <sstream>
#include <string>

namespace credence::testing {

/// The file's bytes; empty when it cannot be read.
inline std::string read_text(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::stringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

}  // namespace credence::testing
