// Runs tests/tools/numpy_rhat.py and reads its "key value value ..." lines.
#pragma once

#include <array>
#include <cstdio>
#include <cstdlib>
#include <map>
#include <sstream>
#include <string>
#include <vector>

namespace credence::testing {

/// Lines of "key v1 v2 ..." by key; `ok` false when the script failed (output kept).
struct PythonLines {
  bool ok = false;
  std::string output;
  std::map<std::string, std::vector<double>> values;
};

/// Runs a shell command (a Python script) and reads its "key value ..." lines.
inline PythonLines run_python_lines(const std::string& shell_command) {
  PythonLines result;
  const std::string command = shell_command + " 2>&1";
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) return result;
  std::array<char, 4096> buffer;
  std::size_t n = 0;
  while ((n = fread(buffer.data(), 1, buffer.size(), pipe)) > 0) result.output.append(buffer.data(), n);
  const int status = pclose(pipe);
  result.ok = status == 0;
  std::istringstream lines(result.output);
  std::string line;
  while (std::getline(lines, line)) {
    std::istringstream words(line);
    std::string key, word;
    words >> key;
    std::vector<double> row;
    while (words >> word) row.push_back(std::strtod(word.c_str(), nullptr));  // reads nan, inf
    result.values[key] = row;
  }
  return result;
}

/// `CREDENCE_PYTHON tests/tools/numpy_rhat.py <mode> <path>`.
inline PythonLines run_numpy_rhat(const std::string& mode, const std::string& path) {
  return run_python_lines(std::string("'") + CREDENCE_PYTHON + "' '" + CREDENCE_SOURCE_DIR +
                          "/tests/tools/numpy_rhat.py' " + mode + " '" + path + "'");
}

}  // namespace credence::testing
